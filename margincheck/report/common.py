"""Pieces every reporter shares: ordering of findings, display names, and neutralising untrusted text."""

from __future__ import annotations

import datetime
import math
from dataclasses import dataclass
from typing import TYPE_CHECKING, Sequence

from margincheck.cautions import batch_cautions
from margincheck.findings import Bound, Finding, Status
from margincheck.safe_text import printable
from margincheck.units import format_value

if TYPE_CHECKING:
    from margincheck.checking import Report

__all__ = ["DETAIL_LABELS", "STATUS_ORDER", "STATUS_WORDS", "Unchecked", "batch_report_cautions", "counts_text",
           "finding_summary", "grouped_by_subject", "headroom", "relation", "report_cautions", "result_text",
           "run_time", "short_headroom", "soa_rows", "status_counts", "subject_title"]

#: Worst first: the order findings and subjects are listed in.
STATUS_ORDER = {Status.FAIL: 0, Status.NOT_EVALUATED: 1, Status.WAIVED: 2, Status.MARGINAL: 3, Status.PASS: 4}

#: The words a reader sees for each status (never colour alone).
STATUS_WORDS = {Status.FAIL: "FAIL", Status.NOT_EVALUATED: "NOT EVALUATED", Status.WAIVED: "WAIVED",
                Status.MARGINAL: "MARGINAL", Status.PASS: "PASS"}

#: How intermediate results and switching figures are labelled for a reader.
DETAIL_LABELS = {
    "turn_off_di_dt": "|di/dt| off",
    "turn_on_di_dt": "di/dt on",
    "turn_off_dv_dt": "dv/dt off",
    "turn_on_dv_dt": "|dv/dt| on",
    "inductive_overshoot": "L*|di/dt|",
    "gate_loop_time_constant": "tau",
    "current_rise_time": "t_ri",
    "current_fall_time": "t_fi",
    "voltage_rise_time": "t_rv",
    "voltage_fall_time": "t_fv",
    "turn_on_energy": "E_on",
    "turn_off_energy": "E_off",
    "ring_frequency": "ring frequency",
    "first_order_peak": "V_pk first-order (cross-check)",
    "turn_off_peak": "V_pk (simulated)",
    "turn_off_di_dt_10_90": "|di/dt| off 10-90 %",
    "turn_on_di_dt_10_90": "di/dt on 10-90 %",
    "di_dt_max": "largest |di/dt|",
    "di_dt_10_90": "|di/dt| 10-90 %",
    "dv_dt_max": "largest |dv/dt|",
    "ring_quality": "ring quality factor",
    "late_growth": "ring growth at the end",
    "peak_reverse_current": "peak reverse current",
    "growth_time": "growth time 1/alpha",
    "mode_frequency": "mode frequency",
    "active_time": "time in the active region",
    "stored_energy": "stored energy",
    "commutation_di_dt": "di/dt of the commutation",
    "peak_recovery_current": "I_rrm",
    "on_resistance_at_t_j": "R_ds(on) at T_j",
    "conduction_loss": "P_cond",
    "switching_loss": "P_sw",
    "dissipated_power": "P total",
    "boundary_current": "SOA boundary I_D",
}


@dataclass(frozen=True)
class Unchecked:
    """A file of a batch that has no report: a design that could not be read or validated (``error``), or a
    file skipped as no design. Combined reports list each with its reason, so a CI view never shows fewer
    designs than were given without saying why."""

    file: str
    reason: str
    error: bool


def grouped_by_subject(findings: tuple[Finding, ...]) -> list[tuple[str, list[Finding]]]:
    """Findings grouped per subject; subjects with the worst status first, findings worst first in each.

    Ties keep the order of the design file and of the rule catalogue.
    """
    groups: dict[str, list[Finding]] = {}
    for finding in findings:
        groups.setdefault(finding.subject, []).append(finding)
    for items in groups.values():
        items.sort(key=lambda finding: STATUS_ORDER[finding.status])
    return sorted(groups.items(), key=lambda item: STATUS_ORDER[item[1][0].status])


def status_counts(findings) -> dict[Status, int]:
    """How many findings have each status, worst status first."""
    counts = {status: 0 for status in STATUS_ORDER}
    for finding in findings:
        counts[finding.status] += 1
    return counts


def counts_text(findings) -> str:
    """The findings counted in words, worst first: ``4 fail, 12 not evaluated, 9 pass``."""
    return ", ".join(f"{count} {STATUS_WORDS[status].lower()}" for status, count in status_counts(findings).items()
                     if count)


def relation(finding: Finding) -> str:
    """``<=`` for an upper limit, ``>=`` for a lower one."""
    return "<=" if finding.bound is Bound.UPPER else ">="


def report_cautions(reports: Sequence[Report]) -> list[str]:
    """The cautions of one report, or of a batch of them."""
    return list(reports[0].cautions) if len(reports) == 1 else batch_report_cautions(reports)


def batch_report_cautions(reports: Sequence[Report]) -> list[str]:
    """A batch's cautions: each design's stored-energy caution, then the ones common to every design."""
    energy = [f"{printable(report.design.inputs[0].name)}: {report.cautions[0]}" for report in reports]
    return batch_cautions(energy or ["LETHAL VOLTAGE: treat every cell as live at its highest bus voltage until it "
                                     "is discharged and verified."])


def run_time(report: Report) -> str:
    """When the check ran, in UTC, as ISO 8601 to the second (``2026-12-01T23:42:13Z``)."""
    return report.generated_at.astimezone(datetime.timezone.utc).strftime("%Y-%m-%dT%H:%M:%SZ")


#: The kind a difference of two values of a kind is shown as (a difference of temperatures is in kelvin).
_DIFFERENCE_KINDS = {"temperature": "temperature_difference"}


def headroom(finding: Finding) -> str:
    """How far the value sits from the limit, in the quantity's own unit and as a share of the limit:
    ``84 V below the limit, 13 % of the limit``; for a floor the safe side is ``above``. A margin beyond
    ±100 % reads as a ratio (``12.6× the limit``), and a margin normalised by something other than the limit
    (the allowed temperature rise) as ``margin 39.6 %``. Empty when the finding has no margin.
    """
    if finding.margin is None or finding.value is None or finding.limit is None:
        return ""
    if finding.margin == 0:
        return "at the limit"
    difference = finding.limit - finding.value if finding.bound is Bound.UPPER else finding.value - finding.limit
    side = "below" if (difference > 0) == (finding.bound is Bound.UPPER) else "above"
    amount = format_value(abs(difference), _DIFFERENCE_KINDS.get(finding.kind, finding.kind))
    return f"{amount} {side} the limit, {_share_of_limit(finding, difference)}"


def short_headroom(finding: Finding) -> str:
    """The headroom of a finding in a few words, for a one-line listing: ``by 50 V (5.56 %)``, or ``fails by
    2.77 V (38.4 %)`` past the limit."""
    if finding.margin is None or finding.value is None or finding.limit is None:
        return ""
    if finding.margin == 0:
        return "at the limit"
    difference = finding.limit - finding.value if finding.bound is Bound.UPPER else finding.value - finding.limit
    amount = format_value(abs(difference), _DIFFERENCE_KINDS.get(finding.kind, finding.kind))
    share = _share_of_limit(finding, difference).removesuffix(" of the limit").replace("+", "")
    return f"{'fails by' if finding.margin < 0 else 'by'} {amount} ({share})"


def _share_of_limit(finding: Finding, difference: float) -> str:
    margin, limit, value = finding.margin, finding.limit, finding.value
    of_limit = limit != 0 and math.isclose(abs(difference) / abs(limit), abs(margin), rel_tol=1e-6, abs_tol=1e-12)
    if not of_limit:
        return f"margin {margin * 100:+.3g} %"
    if abs(margin) > 1 and value / limit > 0:
        return f"{value / limit:.3g}\u00d7 the limit"
    return f"{abs(margin) * 100:.3g} % of the limit"


def result_text(finding: Finding) -> str:
    """A finding's result in plain text: value, limit and headroom, or what is missing."""
    if finding.margin is not None:
        return (f"{format_value(finding.value, finding.kind)} {relation(finding)} "
                f"{format_value(finding.limit, finding.kind)}: {headroom(finding)}")
    if finding.value is None and finding.limit is not None and finding.status is Status.FAIL:
        return f"fails at a corner against {format_value(finding.limit, finding.kind)}"
    if finding.missing:
        return "needs " + ", ".join(finding.missing)
    return "not evaluated"


def finding_summary(finding: Finding) -> str:
    """One plain-text sentence of a finding: value, limit and headroom, or what is missing, and any waiver."""
    notes = [part for part in (finding.note, finding.waiver and f"waiver: {finding.waiver}") if part]
    result = result_text(finding)
    if finding.missing and finding.margin is None:
        result = f"not evaluated: {result}"
    return f"{finding.rule} for {finding.subject}: {result}" + "".join(f" ({note})" for note in notes)


def subject_title(report: Report, subject: str) -> str:
    """A subject's heading: ``Q1: switch, demo-sic1200 (sic-mosfet, kelvin source)`` or a capacitor's."""
    for switch in report.design.switches:
        if switch.ref == subject:
            connection = f", {switch.source_connection} source" if switch.source_connection else ""
            return f"{subject}: switch, {switch.device.name} ({switch.device.technology}{connection})"
    return f"{subject}: bus capacitor"


def soa_rows(view) -> list[tuple[str, str, str, str, str, str]]:
    """Per checked SOA point of a switch: name, V_DS, I_D, pulse, status and the governing boundary."""
    rows = []
    for point in view.points:
        pulse = "dc" if math.isinf(point.pulse) else format_value(point.pulse, "time")  # n/a when not known
        if math.isfinite(point.period):
            pulse += f" every {format_value(point.period, 'time')}"
        rows.append((point.name, format_value(point.voltage, "voltage"), format_value(point.current, "current"),
                     pulse, STATUS_WORDS[point.status], point.governing or "-"))
    return rows


def sensitivity_text(sensitivities) -> str:
    """Inputs with the margin at each end of their tolerance: ``bus_voltage 380 V..420 V: margin +22.1 %..+13.9 %``."""
    def one(item) -> str:
        ends = f"{format_value(item.low, item.kind)}..{format_value(item.high, item.kind)}"
        return f"{item.name} {ends}: margin {_percent(item.margin_at_low)}..{_percent(item.margin_at_high)}"
    return "; ".join(one(item) for item in sensitivities)


def _percent(margin: float) -> str:
    return f"{margin:+.1%}" if math.isfinite(margin) else "not computed or failing outright"


def probability_text(statistics) -> str:
    """``P 3.1 % (1.9-4.8 %), 1,000 samples``: a rule's probability of violation with its interval."""
    if not statistics.samples:
        return "not evaluated at the samples (the rule lacks an input)"
    low, high = statistics.interval
    bad = statistics.violations + statistics.not_computed
    return (f"P {_share(statistics.probability)} ({_share(low)} to {_share(high)}), {bad:,} of "
            f"{statistics.samples:,} samples" + (f" ({statistics.not_computed:,} not computed)"
                                                 if statistics.not_computed else ""))


def _share(probability: float) -> str:
    return f"{probability * 100:.3g} %"


def percentiles_text(statistics) -> str:
    """``1 %: -47.8 %, 50 %: -37.5 %, 99 %: -27.7 %`` (the margin at each percentile of the samples)."""
    return ", ".join(f"p{level:g} {_percent(value)}" for level, value in statistics.percentiles.items())
