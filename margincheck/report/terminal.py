"""The terminal report: a summary first, then the details per subject, readable in an 80-column CI log.

The summary gives the verdict, the findings counted by status, and every failing, not-evaluated, waived and
marginal finding on a line of its own. The details follow per subject; subjects identical in every input and
result (the two switches of a leg built alike) share one set. By default a passing finding takes one line and
a finding that needs attention shows its toleranced corner; ``details=True`` (``--details``) adds every
formula, intermediate result, note, source and caution, the switching figures and the SOA points. The inputs
that hold one value in every corner are listed once, not under each finding.

Status words are in capitals; colour only repeats what the words say, and ``NO_COLOR`` (honoured by rich) or a
non-terminal output turns it off. Every piece of text from the design file goes through ``printable`` and is
printed as ``rich.text.Text``, so it is never read as markup.
"""

from __future__ import annotations

from typing import Collection, TextIO

from rich.console import Console
from rich.text import Text

from margincheck.checking import Report
from margincheck.findings import Finding, Status, attention_rank
from margincheck.report.common import (
    DETAIL_LABELS,
    STATUS_WORDS,
    counts_text,
    relation,
    result_text,
    run_time,
    sensitivity_text,
    short_headroom,
)
from margincheck.report.corners import SubjectGroup, corner_marks, exact_inputs, subject_groups
from margincheck.report.terminal_sections import figures_table, monte_carlo_lines, soa_table, what_if_lines
from margincheck.report.text_layout import INDENT, KEEP_TOGETHER, LABEL_WIDTH, override_lines, section_rule, wrapped
from margincheck.units import format_value

__all__ = ["render"]

_STATUS_STYLES = {Status.FAIL: "bold red", Status.NOT_EVALUATED: "bold magenta", Status.WAIVED: "bold cyan",
                  Status.MARGINAL: "bold yellow", Status.PASS: "green"}
_VERDICT_STYLES = {"fail": "bold white on red", "incomplete": "bold white on magenta",
                   "marginal": "bold black on yellow", "pass": "bold black on green"}
#: Width of the status column ("MARGINAL" and a space; "NOT EVALUATED" takes more)
_STATUS_WIDTH = 9
#: Width of the rule column of a one-line finding
_RULE_WIDTH = 21
#: How many failing, waived or marginal findings the summary lists before it refers to the details
_SUMMARY_LINES = 12
#: Where each end of a toleranced input is named, in the order a corner lists them
_PLACES = ("max", "min", "nominal", "interior", "with")


def _verdict_line(report: Report, ending: str = "") -> Text:
    line = Text(f"{'verdict':<{LABEL_WIDTH}}", style="bold")
    line.append(f" {report.verdict.value.upper()} ", style=_VERDICT_STYLES[report.verdict.value])
    line.append(f"  {counts_text(report.findings)}")
    return line.append(ending)


def _status_lines(status: Status, text: str, width: int, indent: int = 0) -> list[Text]:
    """``text`` after a status word in its column, wrapped under the text."""
    word = f"{STATUS_WORDS[status]:<{_STATUS_WIDTH - 1}} "
    return wrapped(word, _percent_kept(text), width, indent, hang=len(word), label_style=_STATUS_STYLES[status])


def _percent_kept(text: str) -> str:
    """``text`` with every percent sign kept on the line of its number."""
    return text.replace(" %", KEEP_TOGETHER + "%")


def _needs_attention(groups: list[SubjectGroup]) -> list[tuple[str, Finding]]:
    """(subjects, finding) of every failing, waived or marginal finding, most urgent first (a fail, then the
    smaller margin)."""
    listed = [(group.label, finding) for group in groups for finding in group.findings
              if finding.status not in (Status.PASS, Status.NOT_EVALUATED)]
    return sorted(listed, key=lambda item: attention_rank(item[1]))


def _not_evaluated(groups: list[SubjectGroup]) -> list[str]:
    """The rules not evaluated, in one line per set of subjects: ``Q1, Q2: spurious-turn-on, driver-cmti``."""
    subjects_of: dict[str, list[str]] = {}
    for group in groups:
        for finding in group.findings:
            if finding.status is Status.NOT_EVALUATED:
                subjects_of.setdefault(finding.rule, []).extend(group.subjects)
    rules_of: dict[str, list[str]] = {}
    for rule, subjects in subjects_of.items():
        rules_of.setdefault(", ".join(subjects), []).append(rule)
    return [f"{subjects}: {', '.join(rules)} (what each needs: below)" for subjects, rules in rules_of.items()]


def _header(report: Report, width: int, details: bool) -> list[Text]:
    """What was checked, when, and under which policy (its basis is caution 5; in full with ``details``)."""
    design = report.design
    revision = f", rev. {design.revision}" if design.revision else ""
    fields = [("design", f"{design.title}{revision}")]
    fields += [(f"{item.role} file", f"{item.name}  sha256 {item.sha256[:16]}") for item in design.inputs]
    fields.append(("policy", f"{design.policy.name}: {design.policy.basis}" if details
                   else f"{design.policy.name} (its basis: see the cautions)"))
    lines = [Text(f"margincheck {report.tool_version}: worst-case derating check, {run_time(report)}", style="bold")]
    for label, value in fields:
        lines += wrapped(f"{label:<{LABEL_WIDTH}}", value, width, 0, hang=LABEL_WIDTH, label_style="bold")
    lines += override_lines(design, width)
    for warning in design.warnings:
        lines += wrapped("warning: ", str(warning), width, 0, hang=4, label_style="bold yellow")
    return lines


def _summary(report: Report, groups: list[SubjectGroup], width: int, details: bool) -> list[Text]:
    """The verdict, then every finding that needs attention in one line (wrapped in a narrow log)."""
    verdict = _verdict_line(report)
    hint = "" if details else "  (all of it: --details)"
    lines = [verdict.append(hint) if len(verdict) + len(hint) <= width else verdict]
    attention = _needs_attention(groups)
    for subjects, finding in attention[:_SUMMARY_LINES]:
        lines += _status_lines(finding.status, _summary_text(subjects, finding, width - _STATUS_WIDTH), width)
    if len(attention) > _SUMMARY_LINES:
        lines += wrapped("", f"... and {len(attention) - _SUMMARY_LINES} more below", width, _STATUS_WIDTH)
    for text in _not_evaluated(groups):
        lines += _status_lines(Status.NOT_EVALUATED, text, width)
    return lines


def _summary_text(subjects: str, finding: Finding, room: int) -> str:
    """A finding of the summary: its headroom in words where the line has room, else in the short form
    (``fails by 2.768 V (38.4 %)``), so that it keeps to one line of a narrow log where it can."""
    text = f"{subjects} {finding.rule}: {result_text(finding)}"
    if len(text) <= room or finding.margin is None:
        return text
    value, limit = format_value(finding.value, finding.kind), format_value(finding.limit, finding.kind)
    return f"{subjects} {finding.rule}: {value} {relation(finding)} {limit} {short_headroom(finding)}"


def _listing(items: dict[str, str]) -> str:
    """``name value, name value`` with each name kept on one line with its value."""
    return ", ".join(f"{name} {text}".replace(" ", KEEP_TOGETHER) for name, text in items.items())


def _corner_text(finding: Finding, exact: Collection[str], values: bool) -> str:
    """The toleranced inputs of the worst corner by where each sits: ``max bus_voltage 850 V; min ...``; an
    end's value only with ``values``, a point between the ends always with its value."""
    marks = corner_marks(finding, exact, values)
    return "; ".join(f"{place} " + ", ".join(item.replace(" ", KEEP_TOGETHER) for item in marks[place])
                     for place in _PLACES if place in marks)


def _one_line(finding: Finding) -> str:
    """A finding's rule and result in one line: ``bus-voltage  850 V <= 900 V by 50 V (5.56 %)``."""
    if finding.margin is None:
        return f"{finding.rule:<{_RULE_WIDTH}} {result_text(finding)}"
    value, limit = format_value(finding.value, finding.kind), format_value(finding.limit, finding.kind)
    return f"{finding.rule:<{_RULE_WIDTH}} {value} {relation(finding)} {limit} {short_headroom(finding)}"


def _detail_pairs(finding: Finding, exact: Collection[str], details: bool) -> list[tuple[str, str]]:
    """(label, text) pairs shown under a finding's line; an empty label for the formula."""
    pairs = [("", finding.basis)] if details else []
    corner = _corner_text(finding, exact, details)
    if corner:
        pairs.append(("corner", corner))
    if finding.details and details:
        pairs.append(("model", _listing({DETAIL_LABELS.get(name, name): format_value(item.value, item.kind)
                                         for name, item in finding.details.items()})))
    if finding.sensitivities:
        pairs.append(("moved most by", sensitivity_text(finding.sensitivities[:3])))
    shown = (("waiver", finding.waiver), ("note", finding.note), ("source", finding.source),
             ("caution", finding.caution)) if details else (("waiver", finding.waiver),)
    return pairs + [(label, text) for label, text in shown if text]


def _group_lines(report: Report, group: SubjectGroup, exact: dict[str, dict[str, str]], width: int,
                 details: bool) -> list[Text]:
    """A subject's section (or that of subjects identical in every input and result)."""
    same = ": same inputs;" if len(group.subjects) > 1 else ":"
    lines = [section_rule(f"{group.label}{same} {group.title}", width)]
    own = exact.get(group.subjects[0], {})
    if own and details:
        lines += wrapped("exact inputs: ", _listing(own), width, 0, hang=INDENT)
    exact_names = {*exact.get("", {}), *own}
    for finding in group.findings:
        lines += _status_lines(finding.status, _one_line(finding), width)
        if details or finding.status is not Status.PASS:
            for label, text in _detail_pairs(finding, exact_names, details):
                lines += wrapped(f"{label}: " if label else "", text, width, INDENT, hang=INDENT)
    if details:
        figures = {item.subject: item for item in report.figures}
        views = {view.subject: view for view in report.soa}
        subject = group.subjects[0]
        if subject in figures:
            lines += figures_table(figures[subject], width, exact_names)
        if subject in views:
            lines += soa_table(views[subject], width)
    return lines


def _lines(report: Report, width: int, details: bool) -> list[Text]:
    groups = subject_groups(report)
    exact = exact_inputs(report.findings)
    lines = [*_header(report, width, details), *_summary(report, groups, width, details)]
    if details:
        lines.append(Text())
    if exact.get("") and details:
        lines += wrapped("exact inputs (one value in every corner): ", _listing(exact[""]), width, 0,
                         hang=INDENT, label_style="bold")
    for group in groups:  # the section rules set the subjects apart, without blank lines
        lines += _group_lines(report, group, exact, width, details)
    if report.what_if is not None:
        lines += what_if_lines(report, width)
    if report.monte_carlo is not None:
        lines += monte_carlo_lines(report.monte_carlo, width)
    if report.waivers:
        lines += [Text(), section_rule("waivers", width)]
        for outcome in report.waivers:
            lines += wrapped(f"{outcome.state.value}: ", outcome.message, width, 1, hang=3, label_style="bold")
    lines.append(section_rule("cautions", width))  # the rules set the sections apart, without blank lines
    for number, caution in enumerate(report.cautions, start=1):
        lines += wrapped(f"{number}. ", caution, width, 1, hang=3, label_style="bold")
    return lines + [_verdict_line(report, f"; exit code {report.exit_code}")]


def render(report: Report, stream: TextIO, details: bool = False) -> None:
    """Write the terminal report of ``report`` to ``stream``: the summary and the collapsed details, or with
    ``details`` every finding in full with the switching figures and SOA points."""
    console = Console(file=stream, highlight=False, emoji=False, markup=False, soft_wrap=True)
    console.print(Text("\n").join(_lines(report, console.width, details)))
