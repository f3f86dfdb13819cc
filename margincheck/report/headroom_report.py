"""The headroom report (``margincheck headroom``): a terminal text in 80 columns, or JSON
(format ``margincheck-headroom/1``, ASCII, SI magnitudes in each kind's display unit with the unit beside them).

Text from the design file goes through ``printable`` and is printed as ``rich.text.Text``, never as markup.
"""

from __future__ import annotations

import datetime
import json
import math
import textwrap
from typing import Any, TextIO

from rich.console import Console
from rich.text import Text

from margincheck.findings import Finding
from margincheck.headroom import (
    PARAMETERS,
    RESOLUTION,
    SEARCH_NOTE,
    STEP,
    UP,
    Headroom,
    Limit,
    Outcome,
    design_limits,
)
from margincheck.report.json_report import magnitude
from margincheck.safe_text import printable
from margincheck.units import format_value

__all__ = ["HEADROOM_FORMAT", "headroom_object", "render_json", "render_text"]

HEADROOM_FORMAT = "margincheck-headroom/1"

_OUTCOME_STYLES = {Outcome.LIMITED: "bold", Outcome.ALREADY_FAILING: "bold red",
                   Outcome.FAILS_THROUGHOUT: "bold red", Outcome.NOT_LIMITED: "green",
                   Outcome.NOT_SEARCHED: "bold magenta"}


def _direction(limit: Limit) -> str:
    if limit.row.direction != UP:
        return "smallest"
    return "largest" if limit.row.switch is not None else "highest"


def _title(limit: Limit) -> str:
    return f"{_direction(limit)} {PARAMETERS[limit.row.parameter].label}"


def _kind(limit: Limit) -> str:
    return PARAMETERS[limit.row.parameter].kind


def _interval_text(interval, kind: str) -> str:
    """``48 V`` for an exact value, ``48 V (40 V to 54 V)`` or ``max 35 A`` for toleranced ones."""
    ends = [value for value in (interval.low, interval.high) if math.isfinite(value)]
    if math.isfinite(interval.nominal) and ends == [interval.nominal] * len(ends):
        return format_value(interval.nominal, kind)
    if len(ends) == 2:
        span = f"{format_value(ends[0], kind)} to {format_value(ends[1], kind)}"
        return f"{format_value(interval.nominal, kind)} ({span})" if math.isfinite(interval.nominal) else span
    side = "min" if math.isfinite(interval.low) else "max"
    return f"{side} {format_value(ends[0], kind)}" if ends else format_value(interval.nominal, kind)


def _at_factor(limit: Limit, factor: float) -> str:
    return f"x{factor:.4g}: {_interval_text(limit.scaled(factor), _kind(limit))}"


def _finding_text(finding: Finding) -> str:
    margin = "no margin (fails at a corner)" if finding.margin is None else f"margin {finding.margin:+.2%}"
    return f"{finding.rule} for {printable(finding.subject)}, {finding.status.value}, {margin}"


def _limit_sentences(limit: Limit) -> list[str]:
    """What a reader needs of one row, as sentences."""
    design_text = f"design {_interval_text(limit.design_value, _kind(limit))}" if limit.design_value else ""
    lowest, highest = limit.row.reach
    reach = (f"searched x{lowest:.3g} to x{highest:.3g} of the design's value"
             if limit.outcome is not Outcome.NOT_SEARCHED else "")
    if limit.outcome is Outcome.NOT_SEARCHED:
        return [limit.reason]
    if limit.outcome is Outcome.FAILS_THROUGHOUT:
        return [f"nothing passes from the design's value to {_at_factor(limit, limit.beyond)}; {design_text}",
                f"failing there: {_finding_text(limit.binding)}", reach]
    failing = "; the design's own value fails" if limit.outcome is Outcome.ALREADY_FAILING else ""
    lines = [f"{_at_factor(limit, limit.factor)}; {design_text}{failing}"]
    if limit.outcome is Outcome.NOT_LIMITED:
        lines.append(f"closest at the end of the range: {_finding_text(limit.at_limit)}")
    else:
        lines += [f"binds: {_finding_text(limit.binding)} at x{limit.beyond:.4g}",
                  f"at the limit: {_finding_text(limit.at_limit)}"]
    return lines + [reach]


def _wrap(text: str, width: int, indent: int, hang: int = 4) -> list[Text]:
    return [Text(line) for line in textwrap.wrap(printable(text), width=max(width, 40), initial_indent=" " * indent,
                                                 subsequent_indent=" " * (indent + hang), break_on_hyphens=False)]


def _limit_lines(limit: Limit, width: int) -> list[Text]:
    head = Text(f"  {_title(limit):<26}")
    head.append(limit.outcome.value.upper(), style=_OUTCOME_STYLES[limit.outcome])
    lines = [head]
    for sentence in _limit_sentences(limit):
        if sentence:
            lines += _wrap(sentence, width, 6)
    return lines


def _section(title: str, width: int) -> Text:
    line = Text(printable(title), style="bold")
    line.append(" " + "─" * max(width - len(line) - 1, 3), style="dim")
    return line


def _not_counted(limits: list[Limit], subject: str) -> str:
    """The findings of ``subject`` (every capacitor's for "capacitors") that no row of it counts."""
    names = dict.fromkeys(f"{item.rule} for {item.subject}" for limit in limits for item in limit.row.not_counted
                          if item.subject == subject or subject == "capacitors")
    return ("not counted (not evaluated at the design's values; `margincheck check` says what each needs): "
            + ", ".join(names)) if names else ""


def _header(headroom: Headroom, width: int) -> list[Text]:
    design = headroom.design
    revision = f" (revision {design.revision})" if design.revision else ""
    lines = [Text(f"margincheck {headroom.tool_version}: headroom of every switch", style="bold")]
    fields = [("design", f"{design.title}{revision}"),
              *((f"{item.role} file", f"{item.name}  sha256 {item.sha256[:16]}") for item in design.inputs),
              ("policy", f"{design.policy.name}: {design.policy.basis}"),
              ("searched", f"{_generated(headroom)}: {headroom.points} designs, {headroom.rule_evaluations} rule "
                           "evaluations")]
    for label, value in fields:
        lines += _wrap(f"{label:<13}{value}", width, 0, hang=13)
    return lines


def _lines(headroom: Headroom, width: int) -> list[Text]:
    lines = _header(headroom, width)
    by_subject: dict[str, list[Limit]] = {}
    for limit in headroom.limits:
        by_subject.setdefault(limit.row.subject, []).append(limit)
    for subject, limits in by_subject.items():
        lines += [Text(), _section(subject if subject == "capacitors" else f"{subject}: switch", width)]
        for limit in limits:
            lines += _limit_lines(limit, width)
        lines += _wrap(_not_counted(limits, subject), width, 2)
    lines += [Text(), _section("whole design (the lowest row of each input)", width)]
    for limit in design_limits(headroom):
        lines += _limit_lines(limit, width)
    lines += [Text(), _section("how the search works", width), *_wrap(SEARCH_NOTE, width, 1)]
    lines += [Text(), _section("cautions", width)]
    for number, caution in enumerate(headroom.cautions, start=1):
        lines += _wrap(f"{number}. {caution}", width, 1)
    lines += [Text(), Text(f"{'exit code':<13}{headroom.exit_code}", style="bold")]
    return lines


def render_text(headroom: Headroom, stream: TextIO) -> None:
    """Write the terminal report of ``headroom`` to ``stream``."""
    console = Console(file=stream, highlight=False, emoji=False, markup=False, soft_wrap=True, width=80)
    console.print(Text("\n").join(_lines(headroom, console.width)))


def _generated(headroom: Headroom) -> str:
    return headroom.generated_at.astimezone(datetime.timezone.utc).strftime("%Y-%m-%dT%H:%M:%SZ")


def _interval_object(interval, kind: str) -> dict[str, Any] | None:
    if interval is None:
        return None
    return {end: magnitude(getattr(interval, end), kind) for end in ("low", "nominal", "high")}


def _finding_object(finding: Finding | None) -> dict[str, Any] | None:
    if finding is None:
        return None
    return {"rule": finding.rule, "subject": finding.subject, "status": finding.status.value,
            "margin": None if finding.margin is None else float(f"{finding.margin:.12g}"),
            "value": None if finding.value is None else magnitude(finding.value, finding.kind),
            "limit": None if finding.limit is None else magnitude(finding.limit, finding.kind)}


def _factor(value: float | None) -> float | None:
    return None if value is None else float(f"{value:.12g}")


def _limit_object(limit: Limit) -> dict[str, Any]:
    kind, row = _kind(limit), limit.row
    return {
        "subject": row.subject, "parameter": row.parameter, "field": limit.field, "direction": _direction(limit),
        "outcome": limit.outcome.value, "reason": limit.reason,
        "design_value": _interval_object(limit.design_value, kind),
        "factor": _factor(limit.factor),
        "value": _interval_object(limit.value, kind),
        "beyond_factor": _factor(limit.beyond),
        "range": {"lowest_factor": _factor(row.reach[0]), "highest_factor": _factor(row.reach[1])},
        "binding": _finding_object(limit.binding), "at_limit": _finding_object(limit.at_limit),
        "counted": [{"rule": rule, "subject": subject} for rule, subject in row.counted],
        "not_counted": [{"rule": item.rule, "subject": item.subject, "missing": list(item.missing)}
                        for item in row.not_counted],
    }


def headroom_object(headroom: Headroom) -> dict[str, Any]:
    """The headroom report as plain JSON-ready data."""
    design = headroom.design
    return {
        "format": HEADROOM_FORMAT,
        "tool": {"name": "margincheck", "version": headroom.tool_version},
        "generated": _generated(headroom),
        "design": {"file": str(design.file), "sha256": design.inputs[0].sha256, "title": design.title,
                   "revision": design.revision},
        "inputs": [{"role": item.role, "file": item.name, "sha256": item.sha256} for item in design.inputs],
        "policy": {"name": design.policy.name, "basis": design.policy.basis},
        "search": {"step": STEP, "resolution": RESOLUTION, "note": SEARCH_NOTE},
        "evaluations": {"designs": headroom.points, "rule_evaluations": headroom.rule_evaluations},
        "limits": [_limit_object(limit) for limit in headroom.limits],
        "design_limits": [{"parameter": limit.row.parameter, "subject": limit.row.subject,
                           "outcome": limit.outcome.value, "factor": _factor(limit.factor)}
                          for limit in design_limits(headroom)],
        "exit_code": headroom.exit_code,
        "cautions": list(headroom.cautions),
    }


def render_json(headroom: Headroom, stream: TextIO) -> None:
    """Write ``headroom`` as one JSON object (ASCII) to ``stream``."""
    json.dump(headroom_object(headroom), stream, indent=2, ensure_ascii=True)
    stream.write("\n")
