"""The core rules (design.md section 5): bus voltage, turn-off overshoot, gate levels, turn-off current and
capacitor voltage. Each reads the design at the corners of the toleranced inputs it uses and reports the
worst corner. Rule ids are contract.
"""

from __future__ import annotations

import numpy as np

from margincheck.design import Capacitor, Design, Switch
from margincheck.errors import format_path
from margincheck.findings import Bound, Finding
from margincheck.intervals import Interval, Side
from margincheck.physics.energy import capacitor_energy
from margincheck.physics.overshoot import inductive_overshoot, turn_off_peak_voltage
from margincheck.physics.switching import (
    current_fall_time,
    gate_loop_time_constant,
    miller_plateau_voltage,
    turn_off_di_dt,
)
from margincheck.rules.registry import Scope, rule
from margincheck.rules.worst_case import Check, Input, worst_case_finding

__all__: list[str] = []

_DERATING = "derating of the absolute maximum rating by the policy factor (design.md section 4)"
_GATE_MODEL_SOURCE = (
    "gate-loop model tau = R_g*C_iss + g_fs*L_s: Mohan, Undeland & Robbins, Power Electronics, 3rd ed. "
    "2003, ch. 22; Xiao et al., IEEE APEC 2004 (from memory); closed form checked against solve_ivp"
)
_OVERSHOOT_CAUTION = (
    "First-order estimate: the loop rings with the output capacitance and an undamped ring can reach up to "
    "twice L*di/dt. Measure the turn-off peak in a double-pulse test at the highest bus voltage and current, "
    "with a probe rated for it, before relying on this margin."
)


def _limit(factor: float, rating: float | None) -> float | None:
    return None if rating is None else factor * rating


def _field(switch: Switch) -> str:
    """Where a switch's entry is in the design file, e.g. ``switches[1]``."""
    return format_path(switch.path)


def _bus_input(design: Design) -> Input:
    return Input(design.conditions.bus_voltage, "voltage", Side.MAX, "conditions.bus_voltage")


def _loop_input(design: Design) -> Input:
    return Input(design.loop_inductance, "inductance", Side.MAX, "commutation_loop.inductance")


def _turn_off_current_input(design: Design) -> Input:
    return Input(design.conditions.turn_off_current, "current", Side.MAX, "conditions.turn_off_current")


def _rating_field(switch: Switch, rating: str) -> str:
    return f"devices.{switch.device.name}.ratings.{rating}"


def _level_check(rule_id: str, subject: str, name: str, item: Input, limit: float | None, limit_field: str,
                 **options) -> Check:
    """A check of one toleranced level against a derated rating: the model is the level itself."""
    inputs = {name: item, **options.pop("extra_inputs", {})}
    return Check(rule=rule_id, subject=subject, kind=item.kind, source=options.pop("source", _DERATING),
                 inputs=inputs, model=lambda grid: grid[name], limit=limit, limit_needs=(limit_field,), **options)


@rule("bus-voltage", title="Highest steady bus voltage against the derated V_DS rating", scope=Scope.SWITCH)
def bus_voltage(switch: Switch, design: Design) -> Finding:
    """Highest bus voltage ≤ ``steady_voltage`` × ``v_ds_max``."""
    check = _level_check(
        "bus-voltage", switch.ref, "bus_voltage", _bus_input(design),
        _limit(design.policy.steady_voltage, switch.device.v_ds_max), _rating_field(switch, "v_ds_max"),
        basis="V_bus,max <= steady_voltage * v_ds_max",
        caution="Steady voltage derating leaves room for bus transients and for the voltage dependence of "
                "cosmic-ray failure rates in high-voltage devices (common practice).",
    )
    return worst_case_finding(check, design.policy.marginal_band)


def _assumed_zero(interval: Interval | None, name: str, unit: str, notes: list[str]) -> Interval:
    """A missing input whose smallest value is the conservative one for di/dt: taken as 0, and said so."""
    if interval is not None:
        return interval
    notes.append(f"{name} not given: taken as 0 {unit}, which gives the fastest edge")
    return Interval.exact(0.0)


def _gate_model_inputs(switch: Switch, design: Design, notes: list[str]) -> dict[str, Input]:
    device, drive = switch.device, switch.gate_drive
    switch_field = _field(switch)
    drive_field, characteristics = f"{switch_field}.gate_drive", f"devices.{device.name}.characteristics"
    inputs = {
        "bus_voltage": _bus_input(design),
        "loop_inductance": _loop_input(design),
        "turn_off_current": _turn_off_current_input(design),
        "v_gs_th": Input(device.v_gs_th, "voltage", Side.MAX, f"{characteristics}.v_gs_th"),
        "gate_drive.off": Input(drive.off, "voltage", Side.MIN, f"{drive_field}.off"),
        "gate_drive.on": Input(drive.on, "voltage", Side.MIN, f"{drive_field}.on"),
        "gate_drive.r_off": Input(drive.r_off, "resistance", Side.MIN, f"{drive_field}.r_off"),
        "r_g_internal": Input(_assumed_zero(device.r_g_internal, "r_g_internal", "ohm", notes), "resistance",
                              Side.MIN, f"{characteristics}.r_g_internal"),
        "c_iss": Input(device.c_iss, "capacitance", Side.MIN, f"{characteristics}.c_iss"),
        "transconductance": Input(device.transconductance, "conductance", Side.BOTH,
                                  f"{characteristics}.transconductance"),
        "common_source_inductance": Input(
            _assumed_zero(switch.common_source_inductance, "common_source_inductance", "nH", notes),
            "inductance", Side.MIN, f"{switch_field}.common_source_inductance"),
    }
    if drive.r_driver is not None:  # often already folded into r_off; then it is simply not written
        inputs["gate_drive.r_driver"] = Input(drive.r_driver, "resistance", Side.MIN, f"{drive_field}.r_driver")
    return inputs


def _turn_off_resistance(grid: dict) -> np.ndarray:
    """Total turn-off gate-loop resistance: external + driver output + internal [ohm]."""
    return grid["gate_drive.r_off"] + grid.get("gate_drive.r_driver", 0.0) + grid["r_g_internal"]


def _gate_model_di_dt(grid: dict) -> np.ndarray:
    """|di/dt|_off,max from the gate-drive model; NaN where the on-level cannot carry the current."""
    rate = turn_off_di_dt(
        grid["v_gs_th"], grid["gate_drive.off"], grid["turn_off_current"], grid["transconductance"],
        _turn_off_resistance(grid), grid["c_iss"], grid["common_source_inductance"])
    plateau = miller_plateau_voltage(grid["v_gs_th"], grid["transconductance"], grid["turn_off_current"])
    return np.where(grid["gate_drive.on"] > plateau, rate, np.nan)


def _gate_model_failure(grid: dict, index: int) -> str:
    """Why the gate-drive model has no valid turn-off at corner ``index``."""
    at = {name: float(values[index]) for name, values in grid.items()}
    plateau = miller_plateau_voltage(at["v_gs_th"], at["transconductance"], at["turn_off_current"])
    tau = gate_loop_time_constant(_turn_off_resistance(at), at["c_iss"], at["transconductance"],
                                  at["common_source_inductance"])
    if at["gate_drive.off"] >= at["v_gs_th"]:
        return "no turn-off at this corner: the off-level does not fall below the threshold"
    if at["gate_drive.on"] <= plateau:
        return (f"the on-level does not reach the plateau V_th + I/g_fs = {plateau:.3g} V at this corner, so "
                "the switch cannot carry the turn-off current in this model")
    if tau <= 0:
        return "the gate-loop time constant is zero (no gate resistance or common-source inductance given)"
    return "the gate-drive model gives no finite di/dt at this corner"


def _not_finite(grid: dict, index: int) -> str:
    return "the peak voltage is not finite at this corner"


def _gate_model_details(grid: dict) -> dict:
    resistance = _turn_off_resistance(grid)
    di_dt = _gate_model_di_dt(grid)
    return {
        "turn_off_di_dt": (di_dt, "current_slew_rate"),
        "inductive_overshoot": (inductive_overshoot(grid["loop_inductance"], di_dt), "voltage"),
        "gate_loop_time_constant": (gate_loop_time_constant(
            resistance, grid["c_iss"], grid["transconductance"], grid["common_source_inductance"]), "time"),
        "current_fall_time": (current_fall_time(
            grid["v_gs_th"], grid["gate_drive.off"], grid["turn_off_current"], grid["transconductance"], resistance,
            grid["c_iss"], grid["common_source_inductance"]), "time"),
    }


def _given_di_dt(grid: dict) -> np.ndarray:
    return grid["turn_off_di_dt"]


def _given_di_dt_details(grid: dict) -> dict:
    return {"inductive_overshoot": (inductive_overshoot(grid["loop_inductance"], grid["turn_off_di_dt"]),
                                    "voltage")}


@rule("turn-off-overshoot", title="Turn-off peak V_bus + L*|di/dt| against the derated V_DS rating",
      scope=Scope.SWITCH)
def turn_off_overshoot(switch: Switch, design: Design) -> Finding:
    """V_pk = V_bus,max + L_loop,max·|di/dt|_off,max ≤ ``peak_voltage`` × ``v_ds_max``."""
    notes: list[str] = []
    if switch.turn_off_di_dt is not None:
        inputs = {"bus_voltage": _bus_input(design),
                  "loop_inductance": _loop_input(design),
                  "turn_off_di_dt": Input(switch.turn_off_di_dt, "current_slew_rate", Side.MAX,
                                          f"{_field(switch)}.turn_off_di_dt")}
        di_dt, details = _given_di_dt, _given_di_dt_details
        source = "Faraday's law v = L*di/dt with the turn_off_di_dt given in the design"
        notes.append("di/dt from the design's turn_off_di_dt, not from the gate-drive model")
    else:
        inputs = _gate_model_inputs(switch, design, notes)
        di_dt, details, source = _gate_model_di_dt, _gate_model_details, _GATE_MODEL_SOURCE
    check = Check(
        rule="turn-off-overshoot", subject=switch.ref, kind="voltage",
        basis="V_pk = V_bus,max + L_loop,max*|di/dt|_off,max <= peak_voltage * v_ds_max", source=source,
        inputs=inputs,
        model=lambda grid: turn_off_peak_voltage(grid["bus_voltage"], grid["loop_inductance"], di_dt(grid)),
        limit=_limit(design.policy.peak_voltage, switch.device.v_ds_max),
        out_of_range=_gate_model_failure if switch.turn_off_di_dt is None else _not_finite,
        details=details, note="; ".join(notes), caution=_OVERSHOOT_CAUTION,
    )
    return worst_case_finding(check, design.policy.marginal_band)


@rule("gate-on-voltage", title="Highest gate on-level against the derated V_GS(max) rating", scope=Scope.SWITCH)
def gate_on_voltage(switch: Switch, design: Design) -> Finding:
    """Highest on-level (with its tolerance) ≤ ``gate_voltage`` × ``v_gs_max``."""
    level = Input(switch.gate_drive.on, "voltage", Side.MAX, f"{_field(switch)}.gate_drive.on")
    check = _level_check(
        "gate-on-voltage", switch.ref, "gate_drive.on", level,
        _limit(design.policy.gate_voltage, switch.device.v_gs_max), _rating_field(switch, "v_gs_max"),
        basis="V_on,max <= gate_voltage * v_gs_max",
        caution="Measure V_GS at the device pins with a short ground lead: gate-loop ringing adds to the "
                "driver level and is not modelled here.",
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
    level = Input(switch.gate_drive.off, "voltage", Side.MIN, f"{_field(switch)}.gate_drive.off")
    check = _level_check(
        "gate-off-voltage", switch.ref, "gate_drive.off", level, limit if scale else None, needed,
        basis="V_off,min >= gate_voltage * v_gs_min", bound=Bound.LOWER, scale=scale,
        caution="The L_s*di/dt and Miller-coupled spikes at switching add to the off-level and are not "
                "modelled here; measure at the device pins.",
    )
    return worst_case_finding(check, design.policy.marginal_band)


@rule("turn-off-current", title="Largest turn-off current against the derated pulsed current rating",
      scope=Scope.SWITCH)
def turn_off_current(switch: Switch, design: Design) -> Finding:
    """Highest turn-off current ≤ ``pulse_current`` × ``i_d_pulse``."""
    check = _level_check(
        "turn-off-current", switch.ref, "turn_off_current", _turn_off_current_input(design),
        _limit(design.policy.pulse_current, switch.device.i_d_pulse), _rating_field(switch, "i_d_pulse"),
        basis="I_off,max <= pulse_current * i_d_pulse",
        caution="Use the over-current trip level plus the current rise during its detection delay, not the "
                "nominal load current.",
    )
    return worst_case_finding(check, design.policy.marginal_band)


def _stored_energy(grid: dict) -> dict:
    if "capacitance" not in grid:
        return {}
    return {"stored_energy": (capacitor_energy(grid["capacitance"], grid["bus_voltage"]), "energy")}


@rule("capacitor-voltage", title="Highest bus voltage against the derated capacitor voltage rating",
      scope=Scope.CAPACITOR)
def capacitor_voltage(capacitor: Capacitor, design: Design) -> Finding:
    """Highest bus voltage ≤ ``capacitor_voltage`` × ``rated_voltage``; also states ½·C·V² at that voltage."""
    place = format_path(capacitor.path)
    energy_known = capacitor.capacitance is not None and capacitor.capacitance.has_high
    extra = {"capacitance": Input(capacitor.capacitance, "capacitance", Side.MAX, f"{place}.capacitance")}
    check = _level_check(
        "capacitor-voltage", capacitor.ref, "bus_voltage", _bus_input(design),
        _limit(design.policy.capacitor_voltage, capacitor.rated_voltage), f"{place}.rated_voltage",
        extra_inputs=extra if energy_known else {}, details=_stored_energy,
        basis="V_bus,max <= capacitor_voltage * rated_voltage; W = C*V^2/2 stated",
        source=f"{_DERATING}; W = C*V^2/2 (Halliday, Resnick & Walker, Fundamentals of Physics)",
        note="" if energy_known else "capacitance (maximum) not given: stored energy not computed",
        caution="Stored energy is lethal: discharge through a rated resistor and verify zero volts with a "
                "meter before touching.",
    )
    return worst_case_finding(check, design.policy.marginal_band)
