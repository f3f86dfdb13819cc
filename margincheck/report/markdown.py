"""A compact Markdown summary for a pull-request comment: verdict, what needs attention, inputs, cautions.

Text from the design file is escaped so that it can form no link, image, HTML tag or table break: the comment
shows it literally.
"""

from __future__ import annotations

import re
from typing import Sequence, TextIO

from margincheck import __version__
from margincheck.checking import Report
from margincheck.design import Design
from margincheck.findings import Status
from margincheck.report.common import (
    STATUS_WORDS,
    Unchecked,
    counts_text,
    report_cautions,
    result_text,
    run_time,
)
from margincheck.safe_text import printable

__all__ = ["escape", "override_notes", "render", "render_batch"]

_SPECIAL = re.compile(r"([\\`*_\[\]<>|~&@])")
_AUTOLINK = re.compile(r"(?i)\b(https?|ftp|www)([:.])")  # GitHub links bare URLs; an escaped ':' or '.' stops it
_ATTENTION = (Status.FAIL, Status.NOT_EVALUATED, Status.WAIVED, Status.MARGINAL)


def escape(text: object) -> str:
    """Text shown literally in Markdown, on one line: no emphasis, code, link, autolink, tag or table cell
    can start in it (backslash escapes, which CommonMark allows before any ASCII punctuation).

    Examples
    --------
    >>> print(escape("[x](http://a) <b>|"))
    \\[x\\](http\\://a) \\<b\\>\\|
    """
    escaped = _SPECIAL.sub(r"\\\1", " ".join(printable(text).split()))
    return _AUTOLINK.sub(r"\1\\\2", escaped)


def _design_section(report: Report) -> list[str]:
    design = report.design
    lines = [f"### {escape(design.title)}", "", *override_notes(design),
             f"**Verdict: {report.verdict.value.upper()}** (exit code {report.exit_code}): "
             f"{counts_text(report.findings)}", ""]
    attention = [finding for finding in report.findings if finding.status in _ATTENTION]
    if attention:
        lines += ["| status | subject | rule | result |", "|---|---|---|---|"]
        order = {status: rank for rank, status in enumerate(_ATTENTION)}
        for finding in sorted(attention, key=lambda item: order[item.status]):
            waiver = f" (waiver: {finding.waiver})" if finding.waiver else ""
            lines.append(f"| {STATUS_WORDS[finding.status]} | {escape(finding.subject)} | {finding.rule} | "
                         f"{escape(result_text(finding) + waiver)} |")
        lines.append("")
    for outcome in report.waivers:
        if outcome.state.value != "applied":
            lines.append(f"- waiver {outcome.state.value}: {escape(outcome.message)}")
    lines += ["", "Inputs (SHA-256):", ""]
    lines += [f"- {item.role}: `{printable(item.name).replace('`', '')}` {item.sha256}" for item in design.inputs]
    lines.append(f"- policy: {escape(design.policy.name)}: {escape(design.policy.basis)}")
    return lines + [""]


def override_notes(design: Design) -> list[str]:
    """A paragraph naming every ``--set`` override of the run (none without overrides)."""
    if not design.overrides:
        return []
    listed = "; ".join(escape(f"--set {item.text}") for item in design.overrides)
    return [f"**Checked with overrides, not as the file is written:** {listed}", ""]


def _unchecked_section(unchecked: Sequence[Unchecked]) -> list[str]:
    if not unchecked:
        return []
    return ["#### Files not checked", ""] + [
        f"- {'**ERROR**, not checked' if item.error else 'skipped'}: `{printable(item.file).replace('`', '')}`: "
        f"{escape(item.reason)}" for item in unchecked] + [""]


def render_batch(reports: Sequence[Report], stream: TextIO, unchecked: Sequence[Unchecked] = ()) -> None:
    """Write one Markdown summary of every report, and of the files not checked."""
    version = reports[0].tool_version if reports else __version__
    errors = sum(item.error for item in unchecked)
    lines = [f"## margincheck {version}: worst-case derating check", "",
             f"Checked {run_time(reports[0]) if reports else ''}, {len(reports)} design(s)"
             + (f"; {errors} could not be checked" if errors else "") + ".", ""]
    for report in reports:
        lines += _design_section(report)
    lines += _unchecked_section(unchecked)
    lines += ["#### Cautions", ""]
    lines += [f"{number}. {escape(caution)}" for number, caution in enumerate(report_cautions(reports), start=1)]
    stream.write("\n".join(lines) + "\n")


def render(report: Report, stream: TextIO) -> None:
    """Write the Markdown summary of one report."""
    render_batch([report], stream)
