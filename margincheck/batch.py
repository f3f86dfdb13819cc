"""Batch runs: many design files (and folders of them) checked in parallel processes, one summary.

Folders are searched for ``*.yaml`` and ``*.yml`` files (hidden folders skipped); a file is checked when it
declares ``format: margincheck/1``. Device and policy files, and YAML files of other tools, are skipped by
their ``format`` and listed as skipped. A file that cannot even be read is checked anyway, so that its
problems are reported rather than hidden. The batch exits with the worst exit code of its designs.
"""

from __future__ import annotations

import os
from concurrent.futures import ProcessPoolExecutor
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


def _kind(path: Path, limits: Limits) -> str | None:
    """None for a design (or a file too broken to tell), else why it is skipped."""
    try:
        data = load_document(path, str(path), limits).data
    except (InputError, OSError):
        return None
    declared = data.get("format") if isinstance(data, dict) else None
    if declared == DESIGN_FORMAT:
        return None
    return _OTHER_FORMATS.get(declared, "not a margincheck design (no format: margincheck/1)")


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
        return list(pool.map(_check_one, paths, [options] * len(paths)))
