"""The terminal report: grouped per subject, worst first, status words in capitals, readable in 80 columns.

Colour only repeats what the words say; ``NO_COLOR`` (honoured by rich) or a non-terminal output turns it
off. Every piece of text from the design file goes through ``printable`` and is printed as ``rich.text.Text``,
so it is never read as markup.
"""

from __future__ import annotations

import textwrap
from typing import TextIO

from rich.console import Console
from rich.text import Text

from margincheck.checking import Report
from margincheck.design import Design
from margincheck.findings import Finding, Status
from margincheck.montecarlo import MonteCarloResult
from margincheck.report.common import (
    DETAIL_LABELS,
    STATUS_WORDS,
    counts_text,
    grouped_by_subject,
    percentiles_text,
    probability_text,
    relation,
    run_time,
    sensitivity_text,
    soa_rows,
    subject_title,
)
from margincheck.rules.figures import SwitchingFigures
from margincheck.safe_text import printable
from margincheck.units import format_value

__all__ = ["LABEL_WIDTH", "override_lines", "render", "section_rule", "wrapped"]

_STATUS_STYLES = {Status.FAIL: "bold red", Status.NOT_EVALUATED: "bold magenta", Status.WAIVED: "bold cyan",
                  Status.MARGINAL: "bold yellow", Status.PASS: "green"}
_VERDICT_STYLES = {"fail": "bold white on red", "incomplete": "bold white on magenta",
                   "marginal": "bold black on yellow", "pass": "bold black on green"}
_INDENT = 4


LABEL_WIDTH = 13


def _header(report: Report, width: int) -> list[Text]:
    design = report.design
    revision = f" (revision {design.revision})" if design.revision else ""
    fields = [("design", f"{design.title}{revision}")]
    fields += [(f"{item.role} file", f"{item.name}  sha256 {item.sha256[:16]}") for item in design.inputs]
    fields.append(("policy", f"{design.policy.name}: {design.policy.basis}"))
    fields.append(("checked", run_time(report)))
    lines = [Text(f"margincheck {report.tool_version}: worst-case derating check", style="bold")]
    for label, value in fields:
        lines += wrapped(f"{label:<{LABEL_WIDTH}}", value, width, 0, hang=LABEL_WIDTH, label_style="bold")
    return lines + override_lines(design, width)


def override_lines(design: Design, width: int) -> list[Text]:
    """One header line per ``--set`` override, with what the file writes there: a report of a changed design
    must not pass for a report of the file as written."""
    lines = []
    for item in design.overrides:
        written = "not in the file" if item.file_text is None else f"the file: {item.file_text}"
        lines += wrapped(f"{'override':<{LABEL_WIDTH}}", f"--set {item.text} ({written})", width, 0,
                         hang=LABEL_WIDTH, label_style="bold yellow")
    return lines


def _verdict_line(report: Report) -> Text:
    line = Text(f"{'verdict':<{LABEL_WIDTH}}", style="bold")
    line.append(f" {report.verdict.value.upper()} ", style=_VERDICT_STYLES[report.verdict.value])
    line.append(f"  {counts_text(report.findings)}")
    return line


def _summary_line(finding: Finding) -> Text:
    line = Text(f"{STATUS_WORDS[finding.status]:<13}", style=_STATUS_STYLES[finding.status])
    line.append(f"  {finding.rule}")
    if finding.margin is None:
        return line
    line.append(" " * (19 - len(finding.rule)))
    value, limit = format_value(finding.value, finding.kind), format_value(finding.limit, finding.kind)
    line.append(f" {value:>10} {relation(finding)} {limit:<10} margin {finding.margin:+.1%}")
    return line


_KEEP_TOGETHER = "\u00a0"  # joins a name to its value so that a line never breaks between them


def _quantities(quantities: dict, labels: dict[str, str] | None = None) -> str:
    labels = labels or {}
    items = (f"{labels.get(name, name)} {format_value(item.value, item.kind)}" for name, item in quantities.items())
    return ", ".join(item.replace(" ", _KEEP_TOGETHER) for item in items)


def _detail_lines(finding: Finding) -> list[tuple[str, str]]:
    """(label, text) pairs shown under a finding's summary line; an empty label for the formula."""
    lines = [("", finding.basis)]
    if finding.missing:
        lines.append(("missing", ", ".join(finding.missing)))
    if finding.corner:
        lines.append(("corner", _quantities(finding.corner)))
    if finding.details:
        lines.append(("model", _quantities(finding.details, DETAIL_LABELS)))
    if finding.sensitivities:
        lines.append(("moved most by", sensitivity_text(finding.sensitivities[:3])))
    lines += [(label, text) for label, text in (("waiver", finding.waiver), ("note", finding.note),
                                                ("source", finding.source), ("caution", finding.caution)) if text]
    return lines


def wrapped(prefix: str, text: str, width: int, indent: int, hang: int = 0, label_style: str = "dim") -> list[Text]:
    """``prefix`` and ``text`` wrapped to ``width`` columns: indented by ``indent`` spaces, continuation lines
    by ``hang`` more. ``prefix`` (a label) is styled with ``label_style``."""
    pieces = textwrap.wrap(prefix + printable(text), width=max(width, 40), initial_indent=" " * indent,
                           subsequent_indent=" " * (indent + hang), break_on_hyphens=False)
    lines = [Text(piece.replace(_KEEP_TOGETHER, " ")) for piece in pieces]
    if lines and prefix:
        lines[0].stylize(label_style, indent, indent + len(prefix))
    return lines


def section_rule(title: str, width: int) -> Text:
    """A section heading: the title, then a rule to the right margin."""
    line = Text(printable(title), style="bold")
    line.append(" " + "─" * max(width - len(line) - 1, 3), style="dim")
    return line


def _figure_rows(title: str, columns: tuple[str, str], rows: list[tuple[str, str, str]]) -> list[Text]:
    """A small three-column table: label, then two values right-aligned."""
    lines = [Text(f"    {title:<24}{columns[0]:>14}{columns[1]:>14}", style="bold")]
    lines += [Text(f"    {label:<24}{first:>14}{second:>14}") for label, first, second in rows]
    return lines


def _figures_table(figures: SwitchingFigures, width: int) -> list[Text]:
    rows = [(DETAIL_LABELS.get(name, name), format_value(item.value, item.kind),
             format_value(figures.nominal[name].value, item.kind) if name in figures.nominal else "n/a")
            for name, item in figures.worst.items()]
    lines = _figure_rows("switching figures", ("worst corner", "nominal"), rows)
    if figures.corner:
        corner = ", ".join(f"{name} {format_value(item.value, item.kind)}" for name, item in figures.corner.items())
        lines += wrapped("worst corner: ", corner, width, _INDENT, hang=6)
    for note in figures.notes:
        lines += wrapped("note: ", note, width, _INDENT, hang=6)
    return lines


def _soa_table(view, width: int) -> list[Text]:
    lines = [Text(f"    SOA points at T_c {format_value(view.case_temperature, 'temperature')}", style="bold")]
    for name, voltage, current, pulse, status, governing in soa_rows(view):
        lines += wrapped("", f"{name}: {voltage}, {current}, {pulse}: {status.lower()}"
                          + (f" (governed by {governing})" if governing != "-" else ""), width, _INDENT + 2, hang=4)
    return lines


def _what_if_lines(report: Report, width: int) -> list[Text]:
    what_if = report.what_if
    lines = [Text(), section_rule(f"what-if: other source connection, L_s "
                                   f"{format_value(what_if.common_source_inductance, 'inductance')}", width)]
    designed = {figures.subject: figures for figures in report.figures}
    for figures in what_if.figures:
        before = designed.get(figures.subject)
        rows = [(DETAIL_LABELS.get(name, name),
                 format_value(before.worst[name].value, item.kind) if before and name in before.worst else "n/a",
                 format_value(item.value, item.kind)) for name, item in figures.worst.items()]
        connection = what_if.connections.get(figures.subject)
        lines += _figure_rows(f"{printable(figures.subject)} ({connection})", ("as designed", "what-if"), rows)
    margins = {(finding.rule, finding.subject): finding for finding in report.findings}
    rows = []
    for finding in what_if.findings:
        original = margins.get((finding.rule, finding.subject))
        rows.append((f"{printable(finding.subject)} {finding.rule}", _margin_text(original), _margin_text(finding)))
    return lines + _figure_rows("margins", ("as designed", "what-if"), rows)


def _monte_carlo_lines(result: MonteCarloResult, width: int) -> list[Text]:
    lines = [Text(), section_rule(f"Monte Carlo: {result.samples:,} samples, seed {result.seed}", width)]
    lines += wrapped("", f"probability of violation with its {result.confidence:.0%} Wilson interval, and the "
                          "margin at the 1st, 50th and 99th percentile; rules that read the cell simulation use "
                          f"the first {result.simulated_samples:,} samples", width, 1)
    for item in result.statistics:
        lines.append(Text(f"  {printable(item.subject)} {item.rule}: ", style="bold")
                     + Text(probability_text(item)))
        if item.samples:
            lines += wrapped("margin ", percentiles_text(item), width, _INDENT)
    for note in result.notes:
        lines += wrapped("note: ", note, width, 1, hang=3)
    return lines


def _margin_text(finding: Finding | None) -> str:
    if finding is None or finding.margin is None:
        return "n/a" if finding is None else STATUS_WORDS[finding.status].lower()
    return f"{finding.margin:+.1%}"


def _lines(report: Report, width: int) -> list[Text]:
    lines = [*_header(report, width), _verdict_line(report)]
    figures = {item.subject: item for item in report.figures}
    views = {view.subject: view for view in report.soa}
    for warning in report.design.warnings:
        lines += wrapped("warning: ", str(warning), width, 0, hang=4, label_style="bold yellow")
    for subject, findings in grouped_by_subject(report.findings):
        lines += [Text(), section_rule(subject_title(report, subject), width)]
        for finding in findings:
            lines.append(_summary_line(finding))
            for label, text in _detail_lines(finding):
                lines += wrapped(f"{label}: " if label else "", text, width, _INDENT)
        if subject in figures:
            lines += _figures_table(figures[subject], width)
        if subject in views:
            lines += _soa_table(views[subject], width)
    if report.what_if is not None:
        lines += _what_if_lines(report, width)
    if report.monte_carlo is not None:
        lines += _monte_carlo_lines(report.monte_carlo, width)
    if report.waivers:
        lines += [Text(), section_rule("waivers", width)]
        for outcome in report.waivers:
            lines += wrapped(f"{outcome.state.value}: ", outcome.message, width, 1, hang=3, label_style="bold")
    lines += [Text(), section_rule("cautions", width)]
    for number, caution in enumerate(report.cautions, start=1):
        lines += wrapped(f"{number}. ", caution, width, 1, hang=3, label_style="bold")
    lines += [Text(), _verdict_line(report), Text(f"{'exit code':<{LABEL_WIDTH}}{report.exit_code}", style="bold")]
    return lines


def render(report: Report, stream: TextIO) -> None:
    """Write the terminal report of ``report`` to ``stream``."""
    console = Console(file=stream, highlight=False, emoji=False, markup=False, soft_wrap=True)
    console.print(Text("\n").join(_lines(report, console.width)))
