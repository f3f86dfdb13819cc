"""``margincheck check`` over several designs: collect, check in parallel, write the reports, summarise."""

from __future__ import annotations

import argparse
import re
import sys
from pathlib import Path

from margincheck.batch import Skipped, collect_designs, run_batch
from margincheck.errors import InputError, Problem
from margincheck.output import write_atomically
from margincheck.report import COMBINED_FORMATS, batch_renderer, renderer
from margincheck.report.common import Unchecked
from margincheck.report.summary import render_summary, worst_exit_code

__all__ = ["check_batch"]

_PER_DESIGN = "{name}"
_UNSAFE_NAME = re.compile(r"[^A-Za-z0-9._-]+")


def _refuse_unnamed_targets(arguments: argparse.Namespace) -> None:
    """A per-design output without {name} in its path would be written over once per design: refuse it."""
    targets = [(f"--report {name}", name, path) for name, path in arguments.report if name not in COMBINED_FORMATS]
    targets += [("--plot", "chart", path) for path in arguments.plot]
    for option, what, path in targets:
        if _PER_DESIGN not in str(path):
            raise InputError([Problem(str(path), None, option, f"a batch writes one {what} file per design: put "
                                      f"{_PER_DESIGN} in the path, e.g. out/{_PER_DESIGN}{path.suffix}")])


def _names(paths: list[Path]) -> dict[Path, str]:
    """A file name per design for {name} in output paths: unique (also on a file system that ignores case)
    and confined (letters, digits, ``.``, ``_`` and ``-`` only, no leading dot), so that no two designs write
    one report and no design's name can climb out of the report folder (``...yaml``) or hide its report."""
    names: dict[Path, str] = {}
    used: set[str] = set()
    for path in paths:
        base = _UNSAFE_NAME.sub("_", path.stem).lstrip(".") or "design"
        name, count = base, 1
        while name.casefold() in used:
            count += 1
            name = f"{base}-{count}"
        used.add(name.casefold())
        names[path] = name
    return names


def _unchecked(items, skipped: list[Skipped]) -> list[Unchecked]:
    """The files without a report, for the combined reports: designs that could not be checked, then the
    files skipped, each with its reason."""
    failed = [Unchecked(str(item.path), "; ".join(item.problems) or f"exit code {item.exit_code}", True)
              for item in items if item.report is None]
    return failed + [Unchecked(str(entry.path), entry.reason, False) for entry in skipped]


def check_batch(arguments: argparse.Namespace, options: dict) -> int:
    """Check every design among ``arguments.files``, write the requested reports and print the summary."""
    _refuse_unnamed_targets(arguments)
    designs, skipped = collect_designs(arguments.files, options["limits"])
    if not designs and not skipped:  # checking nothing must never look like a pass
        raise InputError([Problem(str(path), None, "", "no margincheck design (format: margincheck/1) found here")
                          for path in arguments.files])
    # Only other files (a hook passing a changed CI file): nothing to check, which the summary says.
    items = run_batch(designs, options)
    for item in items:
        for problem in item.problems:
            print(problem, file=sys.stderr)
    reports = [item.report for item in items if item.report is not None]
    read = [Path(record.name) for report in reports for record in report.design.inputs] + list(designs)
    names = _names(designs)
    unchecked = _unchecked(items, skipped)
    for format_name, path in arguments.report:
        if format_name in COMBINED_FORMATS:
            write_atomically(path, lambda stream, name=format_name: batch_renderer(name)(reports, stream, unchecked),
                             read)
            continue
        for item in items:
            if item.report is not None:
                target = Path(str(path).replace(_PER_DESIGN, names[item.path]))
                write_atomically(target, lambda stream, name=format_name, report=item.report:
                                 renderer(name)(report, stream), read)
    for pattern in arguments.plot:
        _plot_each(pattern, items, names, read)
    def summary(stream) -> None:
        render_summary(items, skipped, stream, arguments.format == "json")

    if arguments.output is None:
        summary(sys.stdout)
    else:
        write_atomically(arguments.output, summary, read)
    return worst_exit_code(items)


def _plot_each(pattern: Path, items, names: dict[Path, str], read: list[Path]) -> None:
    from margincheck.plot import chart_format, render_soa_chart

    for item in items:
        if item.report is not None and item.report.soa:
            target = Path(str(pattern).replace(_PER_DESIGN, names[item.path]))
            image_format = chart_format(target)
            write_atomically(target, lambda stream, report=item.report, image=image_format: render_soa_chart(
                report.soa, stream, image), read, binary=True)
