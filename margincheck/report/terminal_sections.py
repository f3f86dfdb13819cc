"""The terminal report's tables: switching figures, SOA points, the source-connection what-if and the Monte
Carlo statistics (margincheck.report.terminal lays out the rest)."""

from __future__ import annotations

from typing import Collection

from rich.text import Text

from margincheck.checking import Report
from margincheck.findings import Finding
from margincheck.montecarlo import MonteCarloResult
from margincheck.report.common import DETAIL_LABELS, STATUS_WORDS, percentiles_text, probability_text, soa_rows
from margincheck.report.text_layout import INDENT, section_rule, wrapped
from margincheck.rules.figures import SwitchingFigures
from margincheck.safe_text import printable
from margincheck.units import format_value

__all__ = ["figures_table", "monte_carlo_lines", "soa_table", "what_if_lines"]

_LABEL_COLUMN = 24
_VALUE_COLUMN = 13


def _table(title: str, columns: tuple[str, str], rows: list[tuple[str, str, str]],
           label_column: int = _LABEL_COLUMN, value_column: int = _VALUE_COLUMN) -> list[Text]:
    """A small three-column table: label, then two values right-aligned, always two spaces apart."""
    def row(label: str, first: str, second: str) -> str:
        return f"    {label:<{label_column}}  {first:>{value_column}}  {second:>{value_column}}".rstrip()
    return [Text(row(title, *columns), style="bold"), *(Text(row(*cells)) for cells in rows)]


def figures_table(figures: SwitchingFigures, width: int, exact: Collection[str] = ()) -> list[Text]:
    """The switching figures of one switch at its worst corner and at nominal; the corner without the ``exact``
    inputs (listed once for the design)."""
    rows = [(DETAIL_LABELS.get(name, name), format_value(item.value, item.kind),
             format_value(figures.nominal[name].value, item.kind) if name in figures.nominal else "n/a")
            for name, item in figures.worst.items()]
    lines = _table("switching figures", ("worst corner", "nominal"), rows)
    if figures.corner:
        corner = ", ".join(f"{name} {format_value(item.value, item.kind)}" for name, item in figures.corner.items()
                           if name not in exact)
        lines += wrapped("worst corner: ", corner, width, INDENT, hang=6)
    for note in figures.notes:
        lines += wrapped("note: ", note, width, INDENT, hang=6)
    return lines


def soa_table(view, width: int) -> list[Text]:
    """The SOA points of one switch, each with its status and governing boundary."""
    lines = [Text(f"    SOA points at T_c {format_value(view.case_temperature, 'temperature')}", style="bold")]
    for name, voltage, current, pulse, status, governing in soa_rows(view):
        lines += wrapped("", f"{name}: {voltage}, {current}, {pulse}: {status.lower()}"
                         + (f" (governed by {governing})" if governing != "-" else ""), width, INDENT + 2, hang=4)
    return lines


def _margin_cell(finding: Finding | None) -> str:
    """A margin with its status word (``fail -38.4 %``), or the status alone when there is no margin."""
    if finding is None:
        return "n/a"
    word = STATUS_WORDS[finding.status].lower()
    return word if finding.margin is None else f"{word} {finding.margin * 100:+.1f} %"


def what_if_lines(report: Report, width: int) -> list[Text]:
    """Each switch's figures and every margin as designed and with the other source connection."""
    what_if = report.what_if
    lines = [Text(), section_rule(f"what-if: other source connection, L_s "
                                  f"{format_value(what_if.common_source_inductance, 'inductance')}", width)]
    designed = {figures.subject: figures for figures in report.figures}
    built = {switch.ref: switch.source_connection or "not given" for switch in report.design.switches}
    for figures in what_if.figures:
        before = designed.get(figures.subject)
        rows = [(DETAIL_LABELS.get(name, name),
                 format_value(before.worst[name].value, item.kind) if before and name in before.worst else "n/a",
                 format_value(item.value, item.kind)) for name, item in figures.worst.items()]
        change = f"{built.get(figures.subject)} -> {what_if.connections.get(figures.subject)}"
        lines += _table(f"{printable(figures.subject)}: {change}", ("as designed", "what-if"), rows)
    margins = {(finding.rule, finding.subject): finding for finding in report.findings}
    rows = [(f"{printable(finding.subject)} {finding.rule}", _margin_cell(margins.get((finding.rule, finding.subject))),
             _margin_cell(finding)) for finding in what_if.findings]
    return lines + _table("margins", ("as designed", "what-if"), rows, label_column=26, value_column=17)


def monte_carlo_lines(result: MonteCarloResult, width: int) -> list[Text]:
    """Each rule's probability of violation and margin percentiles over the production samples."""
    lines = [Text(), section_rule(f"Monte Carlo: {result.samples:,} samples, seed {result.seed}", width)]
    lines += wrapped("", f"probability of violation with its {result.confidence:.0%} Wilson interval, and the "
                         "margin at the 1st, 50th and 99th percentile; rules that read the cell simulation use "
                         f"the first {result.simulated_samples:,} samples", width, 1)
    for item in result.statistics:
        lines.append(Text(f"  {printable(item.subject)} {item.rule}: ", style="bold")
                     + Text(probability_text(item)))
        if item.samples:
            lines += wrapped("margin ", percentiles_text(item), width, INDENT)
    for note in result.notes:
        lines += wrapped("note: ", note, width, 1, hang=3)
    return lines
