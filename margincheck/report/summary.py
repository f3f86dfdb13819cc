"""The summary of a batch run: one row per design (verdict, counts, exit code), the skipped files, the
cautions; as text for a terminal or CI log, or as JSON (format ``margincheck-batch/1``)."""

from __future__ import annotations

import json
from typing import Sequence, TextIO

from margincheck import __version__
from margincheck.batch import BatchItem, Skipped
from margincheck.findings import Status
from margincheck.report.common import batch_report_cautions, status_counts
from margincheck.safe_text import printable

__all__ = ["BATCH_FORMAT", "render_summary"]

BATCH_FORMAT = "margincheck-batch/1"
_COLUMNS = (Status.FAIL, Status.NOT_EVALUATED, Status.WAIVED, Status.MARGINAL, Status.PASS)
_HEADINGS = ("fail", "not ev.", "waived", "marginal", "pass")


def worst_exit_code(items: Sequence[BatchItem]) -> int:
    """The exit code of the batch: the worst of its designs (3 internal error > 2 input > 1 fail > 0)."""
    return max((item.exit_code for item in items), default=0)


def _cautions(items: Sequence[BatchItem]) -> list[str]:
    reports = [item.report for item in items if item.report is not None]
    return batch_report_cautions(reports)


def _verdict(item: BatchItem) -> str:
    return item.report.verdict.value if item.report is not None else ("error" if item.exit_code == 2 else "internal")


def _text(items: Sequence[BatchItem], skipped: Sequence[Skipped], stream: TextIO) -> None:
    width = max([len(printable(item.path)) for item in items] + [4])
    lines = [f"margincheck {__version__}: batch of {len(items)} design(s), {len(skipped)} file(s) skipped", "",
             f"{'file':<{width}}  {'verdict':<11}" + "".join(f"{heading:>9}" for heading in _HEADINGS) + "   exit"]
    for item in items:
        counts = status_counts(item.report.findings) if item.report is not None else {}
        cells = "".join(f"{counts[status] if counts else '-':>9}" for status in _COLUMNS)
        lines.append(f"{printable(item.path):<{width}}  {_verdict(item).upper():<11}{cells}   {item.exit_code:>4}")
    lines += [f"skipped: {printable(entry.path)} ({entry.reason})" for entry in skipped]
    lines += ["", "cautions:"] + [f" {number}. {caution}" for number, caution in
                                  enumerate(_cautions(items), start=1)]
    lines += ["", f"worst exit code {worst_exit_code(items)}"]
    stream.write("\n".join(lines) + "\n")


def _json(items: Sequence[BatchItem], skipped: Sequence[Skipped], stream: TextIO) -> None:
    designs = []
    for item in items:
        counts = status_counts(item.report.findings) if item.report is not None else {}
        designs.append({"file": str(item.path), "verdict": _verdict(item), "exit_code": item.exit_code,
                        "counts": {status.value: count for status, count in counts.items()},
                        "sha256": item.report.design.inputs[0].sha256 if item.report is not None else None,
                        "problems": list(item.problems)})
    json.dump({"format": BATCH_FORMAT, "tool": {"name": "margincheck", "version": __version__},
               "exit_code": worst_exit_code(items), "designs": designs,
               "skipped": [{"file": str(entry.path), "reason": entry.reason} for entry in skipped],
               "cautions": _cautions(items)}, stream, indent=2, ensure_ascii=True)
    stream.write("\n")


def render_summary(items: Sequence[BatchItem], skipped: Sequence[Skipped], stream: TextIO, as_json: bool) -> None:
    """Write the batch summary as text or JSON."""
    (_json if as_json else _text)(items, skipped, stream)
