"""The core rules (design.md section 5): bus voltage, turn-off overshoot, gate levels, turn-off current and
capacitor voltage. Each reads the design at the corners of the toleranced inputs it uses and reports the
worst corner. Rule ids are contract.
"""

from __future__ import annotations

import numpy as np

from margincheck.design import Capacitor, Design, Switch
from margincheck.errors import format_path
from margincheck.findings import Bound, Finding
from margincheck.intervals import Side
from margincheck.physics.energy import capacitor_energy
from margincheck.physics.overshoot import inductive_overshoot, turn_off_peak_voltage
from margincheck.physics.ringing import gate_ringing_peak, ramp_ring_overshoot, ring_frequency
from margincheck.physics.switching import miller_plateau_voltage
from margincheck.rules.registry import Scope, rule
from margincheck.rules.switching_model import (
    FIGURE_KINDS,
    EdgeModel,
    design_inputs,
    gate_model_overshoot,
    inputs_for,
    overshoot_inputs,
)
from margincheck.rules.worst_case import Check, Input, worst_case_finding

__all__: list[str] = []

_DERATING = "derating of the absolute maximum rating by the policy factor (design.md section 4)"
_GATE_MODEL_SOURCE = (
    "gate-loop model tau = R_g*C_iss + g_fs*L_s: Mohan, Undeland & Robbins, Power Electronics, 3rd ed. "
    "2003, ch. 22; Xiao et al., IEEE APEC 2004 (from memory); closed form checked against solve_ivp"
)
_OVERSHOOT_CAUTION = (
    "A lumped-model estimate (one loop inductance, the switch's C_oss, the gate-drive model of the current "
    "fall). Measure the turn-off peak in a double-pulse test at the highest bus voltage and current, with a "
    "probe rated for it and a short ground connection, before relying on this margin."
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


_RINGING_SOURCE = ("gate loop as a series RLC step response, overshoot exp(-zeta*pi/sqrt(1-zeta^2)): Ogata, Modern "
                   "Control Engineering, 5th ed., 2010, sec. 5-3 (from memory)")


def _gate_ringing(switch: Switch, turn_on: bool) -> dict:
    """Options for a gate-level check that adds the ringing of the gate loop, when its inductance is given."""
    if switch.gate_loop_inductance is None:
        return {"caution": "Measure V_GS at the device pins with a short ground lead: gate-loop ringing (give "
                           "gate_loop_inductance to model it) adds to the driver level."}
    notes: list[str] = []
    resistor = "gate_drive.r_on" if turn_on else "gate_drive.r_off"
    needs = {"gate_drive.off" if turn_on else "gate_drive.on": Side.MIN if turn_on else Side.MAX,
             resistor: Side.MIN, "r_g_internal": Side.MIN, "c_iss": Side.MIN, "gate_loop_inductance": Side.MAX}
    extra = inputs_for(switch, needs, notes)
    if switch.gate_drive.r_driver is not None:
        extra |= inputs_for(switch, {"gate_drive.r_driver": Side.MIN}, notes)

    def model(grid: dict) -> np.ndarray:
        edge = EdgeModel(grid, switch)
        start, end = ("gate_drive.off", "gate_drive.on") if turn_on else ("gate_drive.on", "gate_drive.off")
        resistance = edge.r_on if turn_on else edge.r_off
        return gate_ringing_peak(grid[start], grid[end], resistance, grid["gate_loop_inductance"], grid["c_iss"])

    return {"extra_inputs": extra, "model": model, "source": f"{_DERATING}; {_RINGING_SOURCE}",
            "note": "; ".join(dict.fromkeys(notes + ["the peak includes the ringing of the gate loop"])),
            "caution": "The step-response peak ignores the Miller plateau; measure V_GS at the device pins."}


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


def _given_di_dt_overshoot(switch: Switch, design: Design, grid: dict) -> dict[str, np.ndarray]:
    """The same two estimates for a design that gives the turn-off di/dt: the ring of a linear current fall."""
    bus, inductance, di_dt = grid["bus_voltage"], grid["loop_inductance"], grid["turn_off_di_dt"]
    first_order = turn_off_peak_voltage(bus, inductance, di_dt)
    results = {"turn_off_di_dt": di_dt, "first_order_peak": first_order,
               "resonant_peak": bus + 2.0 * inductive_overshoot(inductance, di_dt)}
    edge = EdgeModel(grid, switch)
    if edge.has("c_oss") and "turn_off_current" in grid:
        current = grid["turn_off_current"]
        capacitance = edge.c_oss(bus)
        results["resonant_peak"] = bus + ramp_ring_overshoot(inductance, capacitance, current, current / di_dt)
        results["ring_frequency"] = ring_frequency(inductance, capacitance)
    return results


def _gate_model_failure(grid: dict, index: int) -> str:
    """Why the gate-drive model has no valid turn-off at corner ``index``."""
    at = {name: values[index:index + 1] for name, values in grid.items()}
    edge = EdgeModel(at, None)
    plateau = miller_plateau_voltage(at["v_gs_th"], at["transconductance"], at["turn_off_current"])[0]
    if at["gate_drive.off"][0] >= at["v_gs_th"][0]:
        return "no turn-off at this corner: the off-level does not fall below the threshold"
    if at["gate_drive.on"][0] <= plateau:
        return (f"the on-level does not reach the plateau V_th + I/g_fs = {plateau:.3g} V at this corner, so "
                "the switch cannot carry the turn-off current in this model")
    if edge.tau(edge.r_off)[0] <= 0:
        return "the gate-loop time constant is zero (no gate resistance or common-source inductance given)"
    return ("the turn-off model is out of its range at this corner (no finite di/dt, or a current fall far "
            "slower than the loop's ring)")


def _not_finite(grid: dict, index: int) -> str:
    return "the peak voltage is not finite at this corner"


@rule("turn-off-overshoot", title="Turn-off peak (first-order L*|di/dt| and resonant) against the derated V_DS "
      "rating", scope=Scope.SWITCH)
def turn_off_overshoot(switch: Switch, design: Design) -> Finding:
    """The larger of V_bus,max + L_loop,max·|di/dt|_off,max and the resonant peak ≤ ``peak_voltage`` × ``v_ds_max``.
    """
    notes: list[str] = []
    if switch.turn_off_di_dt is not None:
        inputs = design_inputs(design, {"bus_voltage": Side.MAX, "loop_inductance": Side.MAX})
        inputs |= inputs_for(switch, {"turn_off_di_dt": Side.MAX}, notes)
        if switch.device.c_oss is not None and design.conditions.turn_off_current is not None:
            inputs |= inputs_for(switch, {"c_oss": Side.MIN}, notes)
            inputs |= design_inputs(design, {"turn_off_current": Side.MAX})
        estimate, source = _given_di_dt_overshoot, "Faraday's law v = L*di/dt with the design's turn_off_di_dt"
        notes.append("di/dt from the design's turn_off_di_dt, not from the gate-drive model")
    else:
        inputs = overshoot_inputs(switch, design, notes)
        estimate, source = gate_model_overshoot, _GATE_MODEL_SOURCE
    results: dict[str, np.ndarray] = {}

    def model(grid: dict) -> np.ndarray:
        results.update(estimate(switch, design, grid))
        return np.maximum(results["first_order_peak"], results["resonant_peak"])

    check = Check(
        rule="turn-off-overshoot", subject=switch.ref, kind="voltage",
        basis="V_pk = max(V_bus + L*|di/dt|_off, resonant peak of L_loop with C_oss) <= peak_voltage * v_ds_max",
        source=source, inputs=inputs, model=model,
        limit=_limit(design.policy.peak_voltage, switch.device.v_ds_max),
        out_of_range=_gate_model_failure if switch.turn_off_di_dt is None else _not_finite,
        details=lambda grid: {name: (values, FIGURE_KINDS[name]) for name, values in results.items()},
        note="; ".join(dict.fromkeys(notes)), caution=_OVERSHOOT_CAUTION,
    )
    return worst_case_finding(check, design.policy.marginal_band)


@rule("gate-on-voltage", title="Highest gate on-level against the derated V_GS(max) rating", scope=Scope.SWITCH)
def gate_on_voltage(switch: Switch, design: Design) -> Finding:
    """Highest on-level (with its tolerance) ≤ ``gate_voltage`` × ``v_gs_max``."""
    check = _level_check(
        "gate-on-voltage", switch.ref, inputs_for(switch, {"gate_drive.on": Side.MAX}, []),
        _limit(design.policy.gate_voltage, switch.device.v_gs_max), _rating_field(switch, "v_gs_max"),
        basis="V_on,max (+ gate-loop ring) <= gate_voltage * v_gs_max", **_gate_ringing(switch, turn_on=True),
    )
    return worst_case_finding(check, design.policy.marginal_band)


@rule("gate-off-voltage", title="Most negative gate off-level against the derated V_GS(min) rating",
      scope=Scope.SWITCH)
def gate_off_voltage(switch: Switch, design: Design) -> Finding:
    """Most negative off-level ≥ ``gate_voltage`` × ``v_gs_min`` (a lower limit).

    The margin is normalised by |limit|; for a device rated 0 V minimum the limit is 0 V, and the positive
    gate limit ``gate_voltage`` × ``v_gs_max`` normalises it instead.
    """
    device, factor = switch.device, design.policy.gate_voltage
    limit = _limit(factor, device.v_gs_min)
    scale = abs(limit) if limit else _limit(factor, device.v_gs_max)
    needed = _rating_field(switch, "v_gs_min") if limit is None else \
        _rating_field(switch, "v_gs_max") + " (to scale a 0 V limit)"
    check = _level_check(
        "gate-off-voltage", switch.ref, inputs_for(switch, {"gate_drive.off": Side.MIN}, []), limit if scale else None,
        needed,
        basis="V_off,min (- gate-loop ring) >= gate_voltage * v_gs_min", bound=Bound.LOWER, scale=scale,
        **_gate_ringing(switch, turn_on=False),
    )
    return worst_case_finding(check, design.policy.marginal_band)


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
        source=f"{_DERATING}; W = C*V^2/2 (Halliday, Resnick & Walker, Fundamentals of Physics)",
        note="" if energy_known else "capacitance (maximum) not given: stored energy not computed",
        caution="Stored energy is lethal: discharge through a rated resistor and verify zero volts with a "
                "meter before touching.",
    )
    return worst_case_finding(check, design.policy.marginal_band)
