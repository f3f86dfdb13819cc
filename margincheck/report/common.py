"""Pieces every reporter shares: ordering of findings, display names, and neutralising untrusted text."""

from __future__ import annotations

from margincheck.findings import Finding, Status

__all__ = ["DETAIL_LABELS", "STATUS_ORDER", "STATUS_WORDS", "grouped_by_subject"]

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
    "first_order_peak": "V_pk first-order",
    "resonant_peak": "V_pk resonant",
    "stored_energy": "stored energy",
    "commutation_di_dt": "di/dt of the commutation",
    "peak_recovery_current": "I_rrm",
}


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
