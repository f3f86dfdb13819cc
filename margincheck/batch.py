"""Batch runs: many design files (and folders of them) checked in parallel processes, one summary.

Folders are searched for ``*.yaml`` and ``*.yml`` files (hidden folders skipped); a file is checked when it
declares ``format: margincheck/1``, declares another ``margincheck/*`` version, or looks like a design (it has
``switches:`` or ``conditions:``) whatever its format line says: the last two end in exit code 2. Device and
policy files, and YAML files of other tools, are skipped by their ``format`` and listed as skipped with the
reason. A file that cannot even be read is checked anyway, so that its problems are reported rather than
hidden. The batch exits with the worst exit code of its designs.
"""

from __future__ import annotations

import os
from concurrent.futures import Future, ProcessPoolExecutor
from concurrent.futures.process import BrokenProcessPool
from dataclasses import dataclass, field
from pathlib import Path
from typing import Iterable, Sequence

from margincheck.checking import Report, check_file
from margincheck.errors import InputError
from margincheck.loading import DEFAULT_LIMITS, Limits, load_document

__all__ = ["BatchItem", "Skipped", "collect_designs", "run_batch"]

DESIGN_FORMAT = "margincheck/1"
_OTHER_FORMATS = {"margincheck-device/1": "a device file", "margincheck-policy/1": "a policy file"}
_SUFFIXES = (".yaml", ".yml")
_DESIGN_KEYS = ("switches", "conditions")  # a file with either is checked as a design whatever its format


@dataclass(frozen=True)
class Skipped:
    """A YAML file the batch did not check, and why."""

    path: Path
    reason: str


@dataclass(frozen=True)
class BatchItem:
    """One design's outcome: its report, or the located problems that stopped it (exit code 2)."""

    path: Path
    exit_code: int
    report: Report | None = None
    problems: tuple[str, ...] = field(default_factory=tuple)


def _candidates(argument: Path) -> Iterable[Path]:
    if not argument.is_dir():
        yield argument
        return
    for folder, subfolders, files in os.walk(argument):
        subfolders[:] = sorted(name for name in subfolders if not name.startswith("."))
        yield from (Path(folder) / name for name in sorted(files) if name.endswith(_SUFFIXES))


def _looks_like_design(data: dict) -> bool:
    return any(key in data for key in _DESIGN_KEYS)


def _kind(path: Path, limits: Limits) -> str | None:
    """None for a file to check as a design, else why it is skipped.

    Checked (so that its problems are reported, exit code 2): a file too broken to tell, a file declaring
    ``margincheck/1``, a file that looks like a design (it has ``switches:`` or ``conditions:``) whatever its
    format line says, and a file declaring any other ``margincheck/*`` version. A pull request cannot take a
    design out of the gate by editing its format line.
    """
    try:
        data = load_document(path, str(path), limits).data
    except Exception:  # a file whose kind cannot be told is checked, so that its problem is reported for it alone
        return None
    if not isinstance(data, dict):
        return "not a margincheck design (not a mapping)"
    declared = data.get("format")
    if declared == DESIGN_FORMAT or _looks_like_design(data):
        return None
    if isinstance(declared, str) and declared.strip().casefold().startswith("margincheck/"):
        return None  # an unknown version of the design format: its check names the versions this one reads
    if declared in _OTHER_FORMATS:
        return _OTHER_FORMATS[declared]
    return f"not a margincheck design (no format: {DESIGN_FORMAT}, no switches or conditions)"


def collect_designs(arguments: Sequence[Path], limits: Limits = DEFAULT_LIMITS) -> tuple[list[Path], list[Skipped]]:
    """The design files among the arguments (files and folders), in order, and the files skipped."""
    designs: dict[Path, None] = {}
    skipped = []
    for argument in arguments:
        for path in _candidates(argument):
            reason = _kind(path, limits) if path.exists() else None
            if reason is None:
                designs.setdefault(path, None)
            else:
                skipped.append(Skipped(path, reason))
    return list(designs), skipped


def _check_one(path: Path, options: dict) -> BatchItem:
    try:
        report = check_file(path, **options)
    except InputError as error:
        return BatchItem(path, 2, problems=tuple(str(problem) for problem in error.problems))
    except OSError as error:
        return BatchItem(path, 2, problems=(f"{path}: {error.strerror or error}",))
    except Exception as error:  # one design's bug must not lose the others' results
        if os.environ.get("MARGINCHECK_DEBUG"):
            raise
        return BatchItem(path, 3, problems=(f"{path}: internal error ({type(error).__name__}: {error}); please "
                                            "report it with the design file",))
    return BatchItem(path, report.exit_code, report)


def run_batch(paths: Sequence[Path], options: dict, workers: int | None = None) -> list[BatchItem]:
    """Check every design in ``paths`` with ``check_file(path, **options)``, in parallel processes."""
    if len(paths) <= 1:
        return [_check_one(path, options) for path in paths]
    workers = min(len(paths), workers or os.cpu_count() or 1)
    with ProcessPoolExecutor(max_workers=workers) as pool:
        futures = [pool.submit(_check_one, path, options) for path in paths]
        return [_outcome(path, future) for path, future in zip(paths, futures)]


def _outcome(path: Path, future: Future) -> BatchItem:
    """A design's item; a worker process that died (killed, out of memory) costs only the designs it had."""
    try:
        return future.result()
    except BrokenProcessPool as error:
        return BatchItem(path, 3, problems=(f"{path}: internal error (the worker process stopped: {error}); please "
                                            "report it with the design file",))
