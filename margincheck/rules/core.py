"""The core rules (design.md section 5): bus voltage, turn-off overshoot, gate levels, turn-off current and
capacitor voltage. Each reads the design at the corners of the toleranced inputs it uses and reports the
worst corner. Rule ids are contract.
"""

from __future__ import annotations

import dataclasses
from typing import Callable

import numpy as np

from margincheck.design import Capacitor, Design, Switch
from margincheck.errors import format_path
from margincheck.findings import AT_LIMIT_SLACK, Finding, Status
from margincheck.intervals import Side
from margincheck.physics.energy import capacitor_energy
from margincheck.physics.overshoot import turn_off_peak_voltage
from margincheck.rules.cell_model import STILL_GROWING, cell_check, cell_run, measured, run_notes, worse
from margincheck.rules.limits import (
    DERATING_SOURCE,
    DeratedLimit,
    derated,
    gate_off_limit,
    gate_on_limit,
    rating_field,
    ring_peak_limit,
)
from margincheck.rules.registry import Scope, rule
from margincheck.rules.switching_model import EdgeModel, design_inputs, inputs_for
from margincheck.rules.worst_case import Check, Input, worst_case_finding

__all__: list[str] = []

_OVERSHOOT_CAUTION = (
    "A lumped-circuit simulation (one loop inductance, the devices' capacitances, a transconductance channel; "
    "no skin effect unless a quality factor is given). Measure the turn-off peak in a double-pulse test at the "
    "highest bus voltage and current, with a probe rated for it and a short ground connection, before relying "
    "on this margin."
)


def _level_check(rule_id: str, subject: str, level: dict[str, Input], limit: float | None, limit_field: str,
                 **options) -> Check:
    """A check of one toleranced level (the single entry of ``level``) against a derated rating: the model
    is the level itself unless ``model`` says otherwise."""
    (name, item), = level.items()
    inputs = {name: item, **options.pop("extra_inputs", {})}
    model = options.pop("model", lambda grid: grid[name])
    return Check(rule=rule_id, subject=subject, kind=item.kind, source=options.pop("source", DERATING_SOURCE),
                 inputs=inputs, model=model, limit=limit, limit_needs=(limit_field,), **options)


_CELL_SOURCE = ("one simulation of the commutation cell per corner (margincheck.physics.switching_cell: Kirchhoff's "
                "laws of the cell, TR-BDF2), checked against scipy Radau on the same circuit written apart")


def _cell_gate_level(switch: Switch, design: Design, level: dict[str, Input], turn_on: bool, rule_id: str,
                     limit_of: Callable[..., DeratedLimit], basis: str) -> Finding:
    """A gate-level finding: the driver level alone (a steady level: against the continuous rating), or with
    the gate waveform of the cell simulation (the switch's own edge and, as the idle device, its partner's
    edges: transients, against the transient rating where the device has one), whichever is worse; then the
    recommended operating range (a steady level outside it: at least marginal)."""
    (name, item), = level.items()
    policy = design.policy_for(switch)
    steady = limit_of(switch, policy)
    plain = worst_case_finding(_level_check(rule_id, switch.ref, level, steady.value, steady.needs, basis=basis,
                                            bound=steady.bound, scale=steady.scale, caution=_gate_caution(switch)),
                               policy.marginal_band)
    run = cell_run(switch, design)
    if run.missing:
        finding = dataclasses.replace(plain, note="gate waveform not simulated (the cell lacks: "
                                      + ", ".join(run.missing) + "): the driver level alone")
        return _recommended_range(finding, plain, switch, turn_on)
    edge, extreme = ("turn_on", np.maximum) if turn_on else ("turn_off", np.minimum)
    own_limit = limit_of(switch, policy, run.figure(edge, "edge_time"))
    gate = run.figure(edge, "gate_extreme")
    # the driver level joins the simulated figure only where both meet the same (continuous) limit
    own = gate if own_limit.notes else extreme(gate, run.corners[name])
    simulated = worst_case_finding(_simulated_gate_check(
        run, own, plain, own_limit, "simulated gate", switch), policy.marginal_band)
    finding = worse(plain, simulated)
    partner = design.opposite_of(switch)
    idle = None if partner is None else cell_run(partner, design)
    if idle is not None and not idle.missing:
        pick = np.maximum if turn_on else np.minimum
        figure = "idle_gate_max" if turn_on else "idle_gate_min"
        induced = pick(idle.figure("turn_on", figure), idle.figure("turn_off", figure))
        idle_limit = limit_of(switch, policy, np.maximum(idle.figure("turn_on", "edge_time"),
                                                         idle.figure("turn_off", "edge_time")))
        as_idle = worst_case_finding(_simulated_gate_check(
            idle, induced, plain, idle_limit, f"induced while {partner.ref} switches", switch), policy.marginal_band)
        finding = worse(finding, as_idle)
    return _recommended_range(finding, plain, switch, turn_on)


def _simulated_gate_check(run, values: np.ndarray, plain: Finding, limit: DeratedLimit, what: str,
                          switch: Switch) -> Check:
    """A simulated gate figure against ``limit``: the continuous rating, or per corner the transient one (then
    the basis says so)."""
    basis = f"{plain.basis} ({what})"
    if limit.notes:
        continuous = plain.basis.rsplit("* ", 1)[-1]
        transient = limit.needs.rsplit(".ratings.", 1)[-1]
        basis = (f"{plain.basis.rsplit('* ', 1)[0]}* {transient} within its pulse, else * {continuous} ({what}: a "
                 "transient)")
    return cell_check(run, values, rule=plain.rule, subject=switch.ref, kind="voltage", basis=basis,
                      source=f"{DERATING_SOURCE}; {_CELL_SOURCE}", limit=limit.value,
                      limit_needs=() if limit.value is not None else (limit.needs,), bound=limit.bound,
                      scale=limit.scale, caution=_gate_caution(switch), note=run_notes(run, *limit.notes))


def _recommended_range(finding: Finding, plain: Finding, switch: Switch, turn_on: bool) -> Finding:
    """``finding``, made marginal (if it passed) where the driver's steady level (``plain``, at its worst corner)
    lies outside the device's recommended operating range ``v_gs_recommended``; its note says which range. The
    range is an operating condition, not a stress limit: it is not derated, and its ends belong to it."""
    recommended = switch.device.v_gs_recommended
    if recommended is None or plain.value is None or finding.status not in (Status.PASS, Status.MARGINAL):
        return finding
    end, beyond = (recommended.high, plain.value - recommended.high) if turn_on else \
        (recommended.low, recommended.low - plain.value)
    if beyond <= AT_LIMIT_SLACK * max(abs(end), 1.0):
        return finding
    side = "above" if turn_on else "below"
    note = (f"the driver level {plain.value:.4g} V is {side} the recommended operating range {recommended.low:.4g} V "
            f"to {recommended.high:.4g} V ({rating_field(switch, 'v_gs_recommended')}), inside the derated absolute "
            "maximum: marginal")
    return dataclasses.replace(finding, status=Status.MARGINAL, note="; ".join(filter(None, (note, finding.note))))


_GATE_CAUTION = ("The simulated gate includes the gate-loop ring and the common-source coupling of the lumped "
                 "model; measure V_GS at the die-side pins (the Kelvin pin where there is one) with a short ground.")
_NEGATIVE_BIAS_CAUTION = (
    "SiC MOSFET: a sustained negative gate bias shifts the threshold voltage over time (charging of near-interface "
    "oxide traps under bias-temperature stress: A. J. Lelis, R. Green, D. B. Habersat, M. El, Basic Mechanisms of "
    "Threshold-Voltage Instability and Implications for Reliability Testing of SiC MOSFETs, IEEE Trans. Electron "
    "Devices, 2015, doi:10.1109/TED.2014.2356172); keep the off-level inside the recommended range and allow for the "
    "drifted threshold in the spurious-turn-on margin.")


def _gate_caution(switch: Switch) -> str:
    """The gate rules' caution, with the threshold drift under negative bias for a SiC MOSFET."""
    return f"{_GATE_CAUTION} {_NEGATIVE_BIAS_CAUTION}" if switch.device.technology == "sic-mosfet" else _GATE_CAUTION


_BUS_CAUTION = ("Steady voltage derating leaves room for bus transients and for the voltage dependence of cosmic-ray "
                "failure rates in high-voltage devices (common practice).")
_DYNAMIC_ON_RESISTANCE_CAUTION = (
    "GaN HEMT: after blocking a high voltage, trapped charge raises R_ds(on) above its static value for a while "
    "(current collapse, dynamic R_ds(on): R. Vetury, N. Q. Zhang, S. Keller, U. K. Mishra, The impact of surface "
    "states on the DC and RF characteristics of AlGaN/GaN HFETs, IEEE Trans. Electron Devices 48(3), 2001 - from "
    "memory; dynamic R_ON above its DC value in GaN-on-Si HEMTs: Electronics (MDPI) 14(14), 2791, 2025, "
    "doi:10.3390/electronics14142791); the conduction loss and junction temperature at the highest bus voltage "
    "may exceed those from the static R_ds(on): measure R_ds(on) in the converter or a double-pulse test.")


@rule("bus-voltage", title="Highest steady bus voltage against the derated V_DS rating", scope=Scope.SWITCH)
def bus_voltage(switch: Switch, design: Design) -> Finding:
    """Highest bus voltage ≤ ``steady_voltage`` × ``v_ds_max``."""
    check = _level_check(
        "bus-voltage", switch.ref, design_inputs(design, {"bus_voltage": Side.MAX}),
        derated(design.policy_for(switch).steady_voltage, switch.device.v_ds_max), rating_field(switch, "v_ds_max"),
        basis="V_bus,max <= steady_voltage * v_ds_max",
        caution=_BUS_CAUTION + (f" {_DYNAMIC_ON_RESISTANCE_CAUTION}" if switch.device.technology == "gan-hemt" else ""),
    )
    return worst_case_finding(check, design.policy.marginal_band)


def _first_order_peak(switch: Switch, run) -> np.ndarray:
    """V_bus + L_loop·|di/dt|off of the first-order gate-drive model: the cross-check figure."""
    grid = run.corners
    edge = EdgeModel(grid, switch)
    with np.errstate(divide="ignore", invalid="ignore"):   # no gate resistance: an infinite first-order slope
        rate = grid["turn_off_di_dt"] if edge.has("turn_off_di_dt") else edge.turn_off_di_dt(grid["turn_off_current"])
        return turn_off_peak_voltage(grid["bus_voltage"], grid["loop_inductance"], rate)


_OVERSHOOT_FIGURES = {"di_dt_max": "current_slew_rate", "di_dt_10_90": "current_slew_rate",
                      "current_fall_time": "time", "voltage_rise_time": "time", "dv_dt_max": "voltage_slew_rate",
                      "ring_frequency": "frequency", "ring_quality": "dimensionless", "late_growth": "dimensionless"}


@rule("turn-off-overshoot", title="Simulated turn-off peak of the commutation cell against the derated V_DS rating",
      scope=Scope.SWITCH)
def turn_off_overshoot(switch: Switch, design: Design) -> Finding:
    """The simulated peak v_ds of the turn-off edge ≤ ``peak_voltage`` × ``v_ds_max``; a corner whose ring is
    still growing when the simulation ends fails outright."""
    basis = "V_pk = max v_ds of the simulated turn-off edge <= peak_voltage * v_ds_max"
    run = cell_run(switch, design)
    if run.missing:
        return worst_case_finding(Check(
            rule="turn-off-overshoot", subject=switch.ref, kind="voltage", basis=basis,
            source=f"{DERATING_SOURCE}; {_CELL_SOURCE}",
            inputs=run.inputs, model=lambda grid: grid["bus_voltage"], limit=None, note=run_notes(run)),
            design.policy.marginal_band)
    peak = run.figure("turn_off", "peak_voltage")
    limit = ring_peak_limit(switch, design.policy_for(switch), {
        "peak_voltage": peak, "bus_voltage": run.corners["bus_voltage"],
        "ring_frequency": run.figure("turn_off", "ring_frequency"),
        "ring_quality": run.figure("turn_off", "ring_quality")})
    if limit.notes:
        basis = ("V_pk = max v_ds of the simulated turn-off edge <= peak_voltage * v_ds_transient.value where the "
                 "ring stays above peak_voltage * v_ds_max no longer than its pulse, else <= peak_voltage * v_ds_max")
    growth = run.figure("turn_off", "late_growth")
    first_order = _first_order_peak(switch, run)
    details = measured(run, "turn_off", _OVERSHOOT_FIGURES)
    check = cell_check(
        run, peak, rule="turn-off-overshoot", subject=switch.ref, kind="voltage", basis=basis,
        source=f"{DERATING_SOURCE}; {_CELL_SOURCE}",
        limit=limit.value, limit_needs=(limit.needs,), note=run_notes(run, *limit.notes),
        details=lambda grid: details(grid) | {"first_order_peak": (first_order, "voltage")},
        fails_outright=lambda values: growth > STILL_GROWING,
        failure_note="the ring is still growing when the simulated time ends: a sustained parasitic oscillation "
                     "(see parasitic-oscillation); the peak is not bounded by this model",
        tie_break=run.figure("turn_off", "di_dt_max"), caution=_OVERSHOOT_CAUTION)
    return worst_case_finding(check, design.policy.marginal_band)


@rule("gate-on-voltage", title="Highest gate voltage (driver level and simulated gate) against the derated V_GS(max)",
      scope=Scope.SWITCH)
def gate_on_voltage(switch: Switch, design: Design) -> Finding:
    """Highest on-level (with its tolerance), and the highest simulated gate voltage of the switch's own turn-on
    and of its partner's edges, ≤ ``gate_voltage`` × ``v_gs_max``."""
    return _cell_gate_level(
        switch, design, inputs_for(switch, {"gate_drive.on": Side.MAX}, []), turn_on=True, rule_id="gate-on-voltage",
        limit_of=gate_on_limit, basis="V_gs,max <= gate_voltage * v_gs_max")


@rule("gate-off-voltage", title="Most negative gate voltage (driver level and simulated gate) against the derated "
      "V_GS(min)", scope=Scope.SWITCH)
def gate_off_voltage(switch: Switch, design: Design) -> Finding:
    """Most negative off-level, and the lowest simulated gate voltage, ≥ ``gate_voltage`` × ``v_gs_min`` (a lower
    limit).

    The margin is normalised by |limit|; for a device rated 0 V minimum the limit is 0 V, and the positive
    gate limit ``gate_voltage`` × ``v_gs_max`` normalises it instead.
    """
    return _cell_gate_level(
        switch, design, inputs_for(switch, {"gate_drive.off": Side.MIN}, []), turn_on=False,
        rule_id="gate-off-voltage", limit_of=gate_off_limit,
        basis="V_gs,min >= gate_voltage * v_gs_min")


@rule("turn-off-current", title="Largest turn-off current against the derated pulsed current rating",
      scope=Scope.SWITCH)
def turn_off_current(switch: Switch, design: Design) -> Finding:
    """Highest turn-off current ≤ ``pulse_current`` × ``i_d_pulse``."""
    check = _level_check(
        "turn-off-current", switch.ref, design_inputs(design, {"turn_off_current": Side.MAX}),
        derated(design.policy_for(switch).pulse_current, switch.device.i_d_pulse), rating_field(switch, "i_d_pulse"),
        basis="I_off,max <= pulse_current * i_d_pulse",
        caution="Use the over-current trip level plus the current rise during its detection delay, not the "
                "nominal load current.",
    )
    return worst_case_finding(check, design.policy.marginal_band)


def _stored_energy(grid: dict) -> dict:
    if "capacitance" not in grid:
        return {}
    energy = capacitor_energy(grid["capacitance"], grid["bus_voltage"])
    # A hazard figure is the largest over the tolerances (largest C at the highest bus voltage), at every corner.
    return {"stored_energy": (np.full_like(energy, np.max(energy)), "energy")}


@rule("capacitor-voltage", title="Highest bus voltage against the derated capacitor voltage rating",
      scope=Scope.CAPACITOR)
def capacitor_voltage(capacitor: Capacitor, design: Design) -> Finding:
    """Highest bus voltage ≤ ``capacitor_voltage`` × ``rated_voltage``; also states ½·C·V² at that voltage with
    the largest capacitance (the hazard figure is the worst case over the tolerances)."""
    place = format_path(capacitor.path)
    energy_known = capacitor.capacitance is not None and capacitor.capacitance.has_high
    extra = {"capacitance": Input(capacitor.capacitance, "capacitance", Side.MAX, f"{place}.capacitance")}
    check = _level_check(
        "capacitor-voltage", capacitor.ref, design_inputs(design, {"bus_voltage": Side.MAX}),
        derated(design.policy.capacitor_voltage, capacitor.rated_voltage), f"{place}.rated_voltage",
        extra_inputs=extra if energy_known else {}, details=_stored_energy,
        basis="V_bus,max <= capacitor_voltage * rated_voltage; W = C*V^2/2 stated",
        source=f"{DERATING_SOURCE}; W = C*V^2/2: Halliday, Resnick & Walker, Fundamentals of Physics, 10th ed., "
               "2014, Eq. 25-21 (from memory)",
        note="" if energy_known else "capacitance (maximum) not given: stored energy not computed",
        caution="Stored energy is lethal: discharge through a rated resistor and verify zero volts with a "
                "meter before touching.",
    )
    return worst_case_finding(check, design.policy.marginal_band)
