"""The content of the one-page sign-off sheet, apart from its format (``signoff_markdown``, ``signoff_html``).

The sheet holds what a reviewer needs to approve or reject a design in two minutes: what was checked (the
design file and every file it read, each with its SHA-256, the tool version and the derating policy), the
verdict, every finding that needs attention on one line, the worst-case operating point the rules used, every
caution, and blank fields for the reviewer's decision. Its text is plain and unescaped here: each format escapes
it for its own syntax.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import TYPE_CHECKING

from margincheck.findings import Finding, Status, Verdict, attention_rank
from margincheck.report.common import STATUS_WORDS, relation, run_time
from margincheck.units import format_value
from margincheck.waivers import WaiverState

if TYPE_CHECKING:
    from margincheck.checking import Report
    from margincheck.intervals import Interval

__all__ = ["DECISIONS", "REVIEWER_FIELDS", "Line", "Sheet", "sheet_of"]

#: The decisions a reviewer chooses from, and the fields they fill in by hand.
DECISIONS = ("approve", "approve with conditions", "reject")
REVIEWER_FIELDS = ("Reviewer", "Role", "Date", "Signature")

#: What the verdict means for sign-off. An incomplete check is never shown as a pass.
_VERDICT_MEANING = {
    Verdict.PASS: "every finding passes with margin",
    Verdict.MARGINAL: "passes, but with little margin or on a waiver: read every line below",
    Verdict.FAIL: "at least one finding fails: not ready for sign-off",
    Verdict.INCOMPLETE: "not every finding could be evaluated: sign-off is blocked until each one is",
}

#: The operating conditions shown at their worst ends: the corner key of the rules, a label and its kind.
_OPERATING_POINT = (
    ("bus_voltage", "bus voltage", "voltage"),
    ("turn_off_current", "turn-off current", "current"),
    ("loop_inductance", "commutation-loop inductance", "inductance"),
    ("switching_frequency", "switching frequency", "frequency"),
    ("case_temperature", "case temperature", "temperature"),
    ("heatsink_temperature", "heatsink temperature", "temperature"),
    ("altitude", "altitude", "altitude"),
)

_LISTED = (Status.FAIL, Status.NOT_EVALUATED, Status.WAIVED, Status.MARGINAL)


@dataclass(frozen=True)
class Line:
    """One finding on the sheet: its status, rule, subject, value, limit, margin and a note (the inputs it
    lacks, who waived it until when, an expired waiver)."""

    status: str
    rule: str
    subject: str
    value: str
    limit: str
    margin: str
    note: str


@dataclass(frozen=True)
class Sheet:
    """Everything on the sign-off sheet, as plain text (design text unescaped)."""

    title: str
    revision: str
    design_file: str
    checked_at: str
    tool_version: str
    inputs: tuple[tuple[str, str, str], ...]  # role, file, SHA-256
    policy: str
    policy_basis: str
    standard: str
    overrides: tuple[str, ...]
    verdict: str
    verdict_meaning: str
    exit_code: int
    findings: tuple[Line, ...]
    passes: int
    not_evaluated: int
    operating_point: tuple[tuple[str, str], ...]  # label, value(s) used
    cautions: tuple[str, ...]


def sheet_of(report: Report) -> Sheet:
    """The sign-off sheet of ``report``."""
    design = report.design
    listed = sorted((item for item in report.findings if item.status in _LISTED), key=attention_rank)
    statuses = [finding.status for finding in report.findings]
    return Sheet(
        title=design.title, revision=design.revision, design_file=str(design.file),
        checked_at=run_time(report), tool_version=report.tool_version,
        inputs=tuple((item.role, item.name, item.sha256) for item in design.inputs),
        policy=design.policy.name, policy_basis=design.policy.basis,
        standard=design.standard or "none named in the design (design.standard)",
        overrides=tuple(f"--set {item.text}" for item in design.overrides),
        verdict=report.verdict.value.upper(), verdict_meaning=_VERDICT_MEANING[report.verdict],
        exit_code=report.exit_code, findings=tuple(_line(finding, report) for finding in listed),
        passes=statuses.count(Status.PASS), not_evaluated=statuses.count(Status.NOT_EVALUATED),
        operating_point=_operating_point(report), cautions=tuple(report.cautions))


def _line(finding: Finding, report: Report) -> Line:
    if finding.margin is None:
        value = limit = margin = "n/a"
    else:
        value, margin = format_value(finding.value, finding.kind), f"{finding.margin:+.1%}"
        limit = f"{relation(finding)} {format_value(finding.limit, finding.kind)}"
    return Line(STATUS_WORDS[finding.status], finding.rule, finding.subject, value, limit, margin,
                _note(finding, report))


def _note(finding: Finding, report: Report) -> str:
    """Who waived a waived finding and until when; what a finding not evaluated lacks; an expired waiver."""
    if finding.status is Status.WAIVED:
        waiver = next(item.waiver for item in report.waivers if item.state is WaiverState.APPLIED
                      and (item.waiver.rule, item.waiver.subject) == (finding.rule, finding.subject))
        was = STATUS_WORDS[finding.waived_status].lower() if finding.waived_status else "waived"
        return f"waived ({was}) by {waiver.accepted_by} until {waiver.expires.isoformat()}: {waiver.reason}"
    parts = []
    if finding.missing:
        parts.append("needs " + ", ".join(finding.missing))
    elif finding.status is Status.NOT_EVALUATED:
        parts.append(finding.note or "could not be computed")
    if finding.waiver:  # an expired waiver: the finding counts again
        parts.append(finding.waiver)
    return "; ".join(parts)


def _operating_point(report: Report) -> tuple[tuple[str, str], ...]:
    """Each operating condition at the values the rules' worst corners used (several when rules needed
    different ends), or why it has none."""
    used: dict[str, set[float]] = {}
    for finding in report.findings:
        for name, quantity in finding.corner.items():
            used.setdefault(name, set()).add(quantity.value)
    rows = []
    for name, label, kind in _OPERATING_POINT:
        values = sorted(used.get(name, ()))
        if values:
            text = " and ".join(format_value(value, kind) for value in values)
        elif _stated(report, name) is None:
            text = "not given in the design"
        else:
            text = "given, but used by no evaluated rule"
        rows.append((label, text))
    return tuple(rows)


def _stated(report: Report, name: str) -> Interval | None:
    design = report.design
    return design.loop_inductance if name == "loop_inductance" else getattr(design.conditions, name)
