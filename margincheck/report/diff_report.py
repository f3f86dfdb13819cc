"""The comparison of two designs (``margincheck diff``) as text for a terminal or CI log, JSON (format
``margincheck-diff/1``) or Markdown for a pull-request comment.

Each lists the findings that changed, regressions first and then by the largest loss of margin, the input
fields that differ, and the cautions of both designs. Text from the design files goes through ``printable``
and is printed as ``rich.text.Text`` (never markup), escaped for Markdown, and ASCII-escaped in JSON.
"""

from __future__ import annotations

import json
from typing import Any, Callable, TextIO

from rich.console import Console
from rich.text import Text

from margincheck.checking import Report
from margincheck.diffing import Comparison, FindingChange
from margincheck.findings import Finding
from margincheck.report.common import STATUS_WORDS, counts_text, run_time
from margincheck.report.json_report import magnitude, overrides_object
from margincheck.report.markdown import escape, override_notes
from margincheck.report.text_layout import LABEL_WIDTH, override_lines, section_rule, wrapped
from margincheck.safe_text import printable
from margincheck.units import format_value

__all__ = ["DIFF_FORMAT", "RENDERERS", "render_json", "render_markdown", "render_text"]

DIFF_FORMAT = "margincheck-diff/1"
#: At most this many changed input fields are listed in text and Markdown (JSON lists all of them).
MAX_FIELDS_LISTED = 40
_LABELS = {"regression": "NEW ", "worse": "WORSE", "better": "BETTER", "changed": "CHANGED", "added": "ADDED",
           "removed": "REMOVED", "unchanged": "UNCHANGED"}
_STYLES = {"regression": "bold red", "worse": "yellow", "better": "green", "changed": "cyan", "added": "cyan",
           "removed": "cyan", "unchanged": "dim"}
_INDENT = 4


def _label(change: FindingChange) -> str:
    """``NEW FAIL`` / ``NEW NOT EVALUATED`` for a regression, else the direction in capitals."""
    if change.regression:
        return _LABELS["regression"] + STATUS_WORDS[change.after.status]
    return _LABELS[change.direction]


def _status(finding: Finding | None) -> str:
    return "absent" if finding is None else STATUS_WORDS[finding.status]


def _value(finding: Finding | None) -> str:
    return "n/a" if finding is None or finding.value is None else format_value(finding.value, finding.kind)


def _margin(finding: Finding | None) -> str:
    return "n/a" if finding is None or finding.margin is None else f"{finding.margin:+.1%}"


def _pair(first: str, second: str | None = None) -> str:
    """``first -> second``, or one of them when they are the same (or there is one)."""
    return first if second is None or first == second else f"{first} -> {second}"


def _change_text(change: FindingChange) -> str:
    """``status PASS -> FAIL; value 15.75 V -> 20.3 V; margin +12.5% -> -1.5% (-14.0 points)``, and what B
    misses when it cannot evaluate."""
    before, after = change.before, change.after
    parts = [f"status {_pair(_status(before), _status(after))}", f"value {_pair(_value(before), _value(after))}"]
    limit = _pair(*(_limit(item) for item in (before, after) if item is not None))
    if limit != "n/a":
        parts.append(f"limit {limit}")
    parts.append(f"margin {_margin_change(change)}")
    if after is not None and after.missing:
        parts.append("B needs " + ", ".join(after.missing))
    return "; ".join(parts)


def _limit(finding: Finding) -> str:
    return "n/a" if finding.limit is None else format_value(finding.limit, finding.kind)


def _margin_change(change: FindingChange) -> str:
    """``+12.5% -> -1.5% (-14.0 points)``: both margins and B's minus A's, in points of the limit."""
    text = _pair(_margin(change.before), _margin(change.after))
    return text if change.margin_change is None else f"{text} ({change.margin_change * 100:+.1f} points)"


def _shown_field(value: str | None) -> str:
    return "(not written)" if value is None else value


def _side_fields(side: str, report: Report) -> list[tuple[str, str]]:
    design = report.design
    revision = f" (revision {design.revision})" if design.revision else ""
    record = design.inputs[0]
    return [(side, f"{design.title}{revision}"), ("", f"{record.name}  sha256 {record.sha256[:16]}"),
            ("", f"policy {design.policy.name}; verdict {_design_verdict(report)}")]


def _design_verdict(report: Report) -> str:
    """``FAIL (8 fail, 12 not evaluated, 7 pass)``."""
    return f"{report.verdict.value.upper()} ({counts_text(report.findings)})"


def _result_text(comparison: Comparison) -> str:
    count = len(comparison.regressions)
    if not count:
        return "B adds no fail and no not-evaluated finding (exit code 0)"
    return f"B adds {count} fail or not-evaluated finding(s) that A did not have (exit code 1)"


def _header_lines(comparison: Comparison, width: int) -> list[Text]:
    lines = [Text(f"margincheck {comparison.b.tool_version}: comparison of two designs", style="bold")]
    for side, report in (("A", comparison.a), ("B", comparison.b)):
        for label, value in _side_fields(side, report):
            lines += wrapped(f"{label:<{LABEL_WIDTH}}", value, width, 0, hang=LABEL_WIDTH, label_style="bold")
        lines += override_lines(report.design, width)
    lines += wrapped(f"{'checked':<{LABEL_WIDTH}}", run_time(comparison.b), width, 0, label_style="bold")
    return lines + wrapped(f"{'result':<{LABEL_WIDTH}}", _result_text(comparison), width, 0, hang=LABEL_WIDTH,
                           label_style="bold")


def _finding_lines(comparison: Comparison, width: int) -> list[Text]:
    changed = [change for change in comparison.changes if change.direction != "unchanged"]
    lines = [Text(), section_rule(f"findings that changed ({len(changed)}), the largest loss of margin first", width)]
    for change in changed:
        line = Text(f"{_label(change):<18}", style=_STYLES[change.direction])
        line.append(printable(f"{change.subject}  {change.rule}"))
        lines.append(line)
        lines += wrapped("", _change_text(change), width, _INDENT, hang=2)
    return lines + [Text(f"{len(comparison.changes) - len(changed)} finding(s) unchanged", style="dim")]


def _field_lines(comparison: Comparison, width: int) -> list[Text]:
    lines = [Text(), section_rule(f"input fields that differ ({len(comparison.fields)})", width)]
    for field in comparison.fields[:MAX_FIELDS_LISTED]:
        lines += wrapped("", f"{field.path}: {_shown_field(field.before)} -> {_shown_field(field.after)}", width,
                         1, hang=4)
    if len(comparison.fields) > MAX_FIELDS_LISTED:
        lines.append(Text(f" ... and {len(comparison.fields) - MAX_FIELDS_LISTED} more (--format json lists all)"))
    return lines


def _text_lines(comparison: Comparison, width: int) -> list[Text]:
    lines = [*_header_lines(comparison, width), *_finding_lines(comparison, width), *_field_lines(comparison, width),
             Text(), section_rule("cautions", width)]
    for number, caution in enumerate(comparison.cautions, start=1):
        lines += wrapped(f"{number}. ", caution, width, 1, hang=3, label_style="bold")
    return lines + [Text(), Text(f"{'exit code':<{LABEL_WIDTH}}{comparison.exit_code}", style="bold")]


def render_text(comparison: Comparison, stream: TextIO) -> None:
    """Write the comparison for a terminal or CI log, readable in 80 columns."""
    console = Console(file=stream, highlight=False, emoji=False, markup=False, soft_wrap=True)
    console.print(Text("\n").join(_text_lines(comparison, console.width)))


def _side_object(report: Report) -> dict[str, Any]:
    design = report.design
    return {"file": str(design.file), "sha256": design.inputs[0].sha256, "title": design.title,
            "revision": design.revision, "policy": design.policy.name, "overrides": overrides_object(design),
            "verdict": report.verdict.value, "exit_code": report.exit_code}


def _ends(before: Any, after: Any) -> dict[str, Any]:
    return {"a": before, "b": after}


def _change_object(change: FindingChange) -> dict[str, Any]:
    before, after = change.before, change.after

    def each(read: Callable[[Finding], Any]) -> dict[str, Any]:
        return _ends(None if before is None else read(before), None if after is None else read(after))

    return {"rule": change.rule, "subject": change.subject, "change": change.direction,
            "regression": change.regression, "status": each(lambda item: item.status.value),
            "value": each(lambda item: magnitude(item.value, item.kind)),
            "limit": each(lambda item: magnitude(item.limit, item.kind)),
            "margin": each(lambda item: None if item.margin is None else float(f"{item.margin:.12g}")),
            "margin_change": None if change.margin_change is None else float(f"{change.margin_change:.12g}"),
            "missing": each(lambda item: list(item.missing))}


def render_json(comparison: Comparison, stream: TextIO) -> None:
    """Write the comparison as one JSON object (ASCII), format ``margincheck-diff/1``."""
    document = {
        "format": DIFF_FORMAT,
        "tool": {"name": "margincheck", "version": comparison.b.tool_version},
        "generated": run_time(comparison.b),
        "a": _side_object(comparison.a),
        "b": _side_object(comparison.b),
        "exit_code": comparison.exit_code,
        "regressions": len(comparison.regressions),
        "findings": [_change_object(change) for change in comparison.changes],
        "changed_inputs": [{"path": field.path, "a": field.before, "b": field.after} for field in comparison.fields],
        "cautions": list(comparison.cautions),
    }
    json.dump(document, stream, indent=2, ensure_ascii=True)
    stream.write("\n")


def _markdown_side(side: str, report: Report) -> list[str]:
    design = report.design
    revision = f" (revision {escape(design.revision)})" if design.revision else ""
    return [f"- **{side}**: {escape(design.title)}{revision}, `{printable(design.inputs[0].name).replace('`', '')}` "
            f"sha256 {design.inputs[0].sha256}, policy {escape(design.policy.name)}: "
            f"**{_design_verdict(report)}**"] + [f"  {note}" for note in override_notes(design) if note]


def render_markdown(comparison: Comparison, stream: TextIO) -> None:
    """Write the comparison as Markdown for a pull-request comment; design text escaped."""
    lines = [f"## margincheck {comparison.b.tool_version}: comparison of two designs", "",
             *_markdown_side("A", comparison.a), *_markdown_side("B", comparison.b), "",
             f"**{_result_text(comparison)}**, checked {run_time(comparison.b)}.", ""]
    changed = [change for change in comparison.changes if change.direction != "unchanged"]
    if changed:
        lines += ["| change | subject | rule | status | value | margin |", "|---|---|---|---|---|---|"]
        lines += [f"| {_label(change)} | {escape(change.subject)} | {change.rule} | "
                  f"{escape(_pair(_status(change.before), _status(change.after)))} | "
                  f"{escape(_pair(_value(change.before), _value(change.after)))} | "
                  f"{escape(_margin_change(change))} |" for change in changed]
        lines.append("")
    lines += [f"{len(comparison.changes) - len(changed)} finding(s) unchanged.", "",
              f"#### Input fields that differ ({len(comparison.fields)})", ""]
    lines += [f"- {escape(field.path)}: {escape(_shown_field(field.before))} -> {escape(_shown_field(field.after))}"
              for field in comparison.fields[:MAX_FIELDS_LISTED]]
    if len(comparison.fields) > MAX_FIELDS_LISTED:
        lines.append(f"- ... and {len(comparison.fields) - MAX_FIELDS_LISTED} more (`--format json` lists all)")
    lines += ["", "#### Cautions", ""]
    lines += [f"{number}. {escape(caution)}" for number, caution in enumerate(comparison.cautions, start=1)]
    stream.write("\n".join(lines) + "\n")


#: The renderer of each ``margincheck diff --format``.
RENDERERS: dict[str, Callable[[Comparison, TextIO], None]] = {
    "text": render_text, "json": render_json, "markdown": render_markdown}
