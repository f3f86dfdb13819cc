"""The core rules (design.md section 5): bus voltage, turn-off overshoot, gate levels, turn-off current and
capacitor voltage. Each reads the design at the corners of the toleranced inputs it uses and reports the
worst corner. Rule ids are contract.
"""

from __future__ import annotations

import dataclasses

import numpy as np

from margincheck.design import Capacitor, Design, Switch
from margincheck.errors import format_path
from margincheck.findings import Bound, Finding
from margincheck.intervals import Side
from margincheck.physics.energy import capacitor_energy
from margincheck.physics.overshoot import turn_off_peak_voltage
from margincheck.rules.cell_model import STILL_GROWING, cell_check, cell_run, measured, run_notes, worse
from margincheck.rules.registry import Scope, rule
from margincheck.rules.switching_model import EdgeModel, design_inputs, inputs_for
from margincheck.rules.worst_case import Check, Input, worst_case_finding

__all__: list[str] = []

_DERATING = ("margincheck criterion: the stress stays within the policy's derating factor times the device's "
             "absolute maximum rating (the policy names the basis of its factors)")
_OVERSHOOT_CAUTION = (
    "A lumped-circuit simulation (one loop inductance, the devices' capacitances, a transconductance channel; "
    "no skin effect unless a quality factor is given). Measure the turn-off peak in a double-pulse test at the "
    "highest bus voltage and current, with a probe rated for it and a short ground connection, before relying "
    "on this margin."
)


def _limit(factor: float, rating: float | None) -> float | None:
    return None if rating is None else factor * rating


def _rating_field(switch: Switch, rating: str) -> str:
    return f"devices.{switch.device.name}.ratings.{rating}"


def _level_check(rule_id: str, subject: str, level: dict[str, Input], limit: float | None, limit_field: str,
                 **options) -> Check:
    """A check of one toleranced level (the single entry of ``level``) against a derated rating: the model
    is the level itself unless ``model`` says otherwise."""
    (name, item), = level.items()
    inputs = {name: item, **options.pop("extra_inputs", {})}
    model = options.pop("model", lambda grid: grid[name])
    return Check(rule=rule_id, subject=subject, kind=item.kind, source=options.pop("source", _DERATING),
                 inputs=inputs, model=model, limit=limit, limit_needs=(limit_field,), **options)


_CELL_SOURCE = ("one simulation of the commutation cell per corner (margincheck.physics.switching_cell: Kirchhoff's "
                "laws of the cell, TR-BDF2), checked against scipy Radau on the same circuit written apart")


def _cell_gate_level(switch: Switch, design: Design, level: dict[str, Input], turn_on: bool, **fields) -> Finding:
    """A gate-level finding: the driver level alone, or with the gate waveform of the cell simulation (the
    switch's own edge and, as the idle device, its partner's edges), whichever is worse."""
    (name, item), = level.items()
    plain = worst_case_finding(_level_check(fields.pop("rule_id"), switch.ref, level, **fields,
                                            caution=_GATE_CAUTION), design.policy.marginal_band)
    run = cell_run(switch, design)
    if run.missing:
        return dataclasses.replace(plain, note="gate waveform not simulated (the cell lacks: "
                                   + ", ".join(run.missing) + "): the driver level alone")
    edge, extreme = ("turn_on", np.maximum) if turn_on else ("turn_off", np.minimum)
    own = extreme(run.figure(edge, "gate_extreme"), run.corners[name])
    simulated = worst_case_finding(cell_check(
        run, own, rule=plain.rule, subject=switch.ref, kind="voltage", basis=plain.basis + " (simulated gate)",
        source=f"{_DERATING}; {_CELL_SOURCE}", limit=plain.limit, limit_needs=(), bound=plain.bound,
        scale=fields.get("scale"), caution=_GATE_CAUTION), design.policy.marginal_band)
    finding = worse(plain, simulated)
    partner = design.opposite_of(switch)
    if partner is None:
        return finding
    idle = cell_run(partner, design)
    if idle.missing:
        return finding
    pick = np.maximum if turn_on else np.minimum
    figure = "idle_gate_max" if turn_on else "idle_gate_min"
    induced = pick(idle.figure("turn_on", figure), idle.figure("turn_off", figure))
    as_idle = worst_case_finding(cell_check(
        idle, induced, rule=plain.rule, subject=switch.ref, kind="voltage", source=f"{_DERATING}; {_CELL_SOURCE}",
        basis=plain.basis + f" (induced while {partner.ref} switches)", limit=plain.limit, bound=plain.bound,
        scale=fields.get("scale"), caution=_GATE_CAUTION), design.policy.marginal_band)
    return worse(finding, as_idle)


_GATE_CAUTION = ("The simulated gate includes the gate-loop ring and the common-source coupling of the lumped "
                 "model; measure V_GS at the die-side pins (the Kelvin pin where there is one) with a short ground.")


@rule("bus-voltage", title="Highest steady bus voltage against the derated V_DS rating", scope=Scope.SWITCH)
def bus_voltage(switch: Switch, design: Design) -> Finding:
    """Highest bus voltage ≤ ``steady_voltage`` × ``v_ds_max``."""
    check = _level_check(
        "bus-voltage", switch.ref, design_inputs(design, {"bus_voltage": Side.MAX}),
        _limit(design.policy.steady_voltage, switch.device.v_ds_max), _rating_field(switch, "v_ds_max"),
        basis="V_bus,max <= steady_voltage * v_ds_max",
        caution="Steady voltage derating leaves room for bus transients and for the voltage dependence of "
                "cosmic-ray failure rates in high-voltage devices (common practice).",
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
            source=f"{_DERATING}; {_CELL_SOURCE}",
            inputs=run.inputs, model=lambda grid: grid["bus_voltage"], limit=None, note=run_notes(run)),
            design.policy.marginal_band)
    growth = run.figure("turn_off", "late_growth")
    first_order = _first_order_peak(switch, run)
    details = measured(run, "turn_off", _OVERSHOOT_FIGURES)
    check = cell_check(
        run, run.figure("turn_off", "peak_voltage"), rule="turn-off-overshoot", subject=switch.ref, kind="voltage",
        basis=basis, source=f"{_DERATING}; {_CELL_SOURCE}",
        limit=_limit(design.policy.peak_voltage, switch.device.v_ds_max),
        limit_needs=(_rating_field(switch, "v_ds_max"),),
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
        limit=_limit(design.policy.gate_voltage, switch.device.v_gs_max),
        limit_field=_rating_field(switch, "v_gs_max"), basis="V_gs,max <= gate_voltage * v_gs_max")


@rule("gate-off-voltage", title="Most negative gate voltage (driver level and simulated gate) against the derated "
      "V_GS(min)", scope=Scope.SWITCH)
def gate_off_voltage(switch: Switch, design: Design) -> Finding:
    """Most negative off-level, and the lowest simulated gate voltage, ≥ ``gate_voltage`` × ``v_gs_min`` (a lower
    limit).

    The margin is normalised by |limit|; for a device rated 0 V minimum the limit is 0 V, and the positive
    gate limit ``gate_voltage`` × ``v_gs_max`` normalises it instead.
    """
    device, factor = switch.device, design.policy.gate_voltage
    limit = _limit(factor, device.v_gs_min)
    scale = abs(limit) if limit else _limit(factor, device.v_gs_max)
    needed = _rating_field(switch, "v_gs_min") if limit is None else \
        _rating_field(switch, "v_gs_max") + " (to scale a 0 V limit)"
    return _cell_gate_level(
        switch, design, inputs_for(switch, {"gate_drive.off": Side.MIN}, []), turn_on=False,
        rule_id="gate-off-voltage", limit=limit if scale else None, limit_field=needed,
        basis="V_gs,min >= gate_voltage * v_gs_min", bound=Bound.LOWER, scale=scale)


@rule("turn-off-current", title="Largest turn-off current against the derated pulsed current rating",
      scope=Scope.SWITCH)
def turn_off_current(switch: Switch, design: Design) -> Finding:
    """Highest turn-off current ≤ ``pulse_current`` × ``i_d_pulse``."""
    check = _level_check(
        "turn-off-current", switch.ref, design_inputs(design, {"turn_off_current": Side.MAX}),
        _limit(design.policy.pulse_current, switch.device.i_d_pulse), _rating_field(switch, "i_d_pulse"),
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
        _limit(design.policy.capacitor_voltage, capacitor.rated_voltage), f"{place}.rated_voltage",
        extra_inputs=extra if energy_known else {}, details=_stored_energy,
        basis="V_bus,max <= capacitor_voltage * rated_voltage; W = C*V^2/2 stated",
        source=f"{_DERATING}; W = C*V^2/2: Halliday, Resnick & Walker, Fundamentals of Physics, 10th ed., 2014, "
               "Eq. 25-21 (from memory)",
        note="" if energy_known else "capacitance (maximum) not given: stored energy not computed",
        caution="Stored energy is lethal: discharge through a rated resistor and verify zero volts with a "
                "meter before touching.",
    )
    return worst_case_finding(check, design.policy.marginal_band)
