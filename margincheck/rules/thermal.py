"""Thermal rules (design.md section 5, "Thermal, SOA, avalanche"): the junction temperature with its
conduction-loss feedback, single-pulse avalanche energy and short-circuit withstand. Rule ids are contract.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Callable

import numpy as np

from margincheck.design import Design, Switch
from margincheck.errors import format_path
from margincheck.findings import Finding, Status, classify, margin_of
from margincheck.intervals import Interval, Side
from margincheck.physics.safe_operating_area import allowed_avalanche_energy, avalanche_energy
from margincheck.physics.thermal import (
    igbt_conduction_loss,
    junction_temperature,
    junction_temperature_linear_loss,
    log_temperature_coefficient,
    on_resistance,
    saturation_voltage,
)
from margincheck.rules.cell_model import cell_run
from margincheck.rules.core import turn_off_overshoot
from margincheck.rules.registry import Scope, rule
from margincheck.rules.switching_model import design_inputs
from margincheck.rules.worst_case import Check, Input, not_evaluated, worst_case_finding
from margincheck.technology import is_igbt

__all__ = ["case_temperature", "hot_on_resistance", "on_resistance_model", "steady_thermal_resistance"]

_THERMAL_SOURCE = ("T_j = T_c + R_th*(I_rms^2*R_ds(on)(T_j) + f_sw*(E_on + E_off)), R_ds(on) = R_0*exp(k*(T - T_0)): "
                   "Mohan, Undeland & Robbins 2003, ch. 29; Baliga 2008, ch. 6 (from memory)")


def _device_field(switch: Switch, *parts: str) -> str:
    return ".".join((f"devices.{switch.device.name}",) + parts)


def on_resistance_model(switch: Switch) -> tuple[Interval, float, float] | None:
    """(R_0 interval [ohm], T_0 [K], k [1/K]) of R_ds(on)(T) = R_0·exp(k·(T − T_0)); None when unknown.

    Through two datasheet points the curve passes through both maxima; otherwise the stated coefficient at
    its largest (the fastest rise: the hottest junction, the lowest R_ds(on) line of the SOA).
    """
    rating = switch.device.r_ds_on
    if rating is None or rating.value is None or not rating.value.has_high:
        return None
    if rating.hot_value is not None and rating.hot_t_j is not None and rating.hot_value.has_high:
        coefficient = float(log_temperature_coefficient(rating.value.high, rating.t_j, rating.hot_value.high,
                                                        rating.hot_t_j))
        return rating.value, rating.t_j, coefficient
    if rating.coefficient is None or not rating.coefficient.has_high:
        return None
    return rating.value, rating.t_j, rating.coefficient.high


def hot_on_resistance(switch: Switch) -> float | None:
    """Highest R_ds(on) at T_j,max [ohm], for the SOA's on-resistance line."""
    model = on_resistance_model(switch)
    if model is None or switch.device.t_j_max is None:
        return None
    value, reference, coefficient = model
    return float(on_resistance(switch.device.t_j_max, value.high, reference, coefficient))


def steady_thermal_resistance(device) -> Interval | None:
    """R_th,jc [K/W]: as given, else the sum of the Foster network's resistances (its Z_th at t = inf) times
    the network's toleranced scale."""
    if device.r_th_jc is not None or device.foster is None:
        return device.r_th_jc
    return device.foster_scale.scaled(float(sum(device.foster[0])))


def _thermal_path(switch: Switch, design: Design) -> tuple[str, dict[str, Input], str]:
    """The reference temperature's input name, the inputs of the heat path (the reference and the thermal
    resistances to it), and what the reference is."""
    place, device = format_path(switch.path), switch.device
    r_th_jc = Input(steady_thermal_resistance(device), "thermal_resistance", Side.MAX,
                    _device_field(switch, "thermal", "r_th_jc (or foster)"), switch.ref)
    case, heatsink = design.conditions.case_temperature, design.conditions.heatsink_temperature
    if case is not None or heatsink is None:
        return "case_temperature", {
            "case_temperature": Input(case, "temperature", Side.MAX, "conditions.case_temperature (or "
                                      "heatsink_temperature with r_th_cs)"), "r_th_jc": r_th_jc}, "case"
    return "heatsink_temperature", {
        "heatsink_temperature": Input(heatsink, "temperature", Side.MAX, "conditions.heatsink_temperature"),
        "r_th_jc": r_th_jc, "r_th_cs": Input(switch.r_th_cs, "thermal_resistance", Side.MAX, f"{place}.r_th_cs")
    }, "heat sink"


def _switched_current(switch: Switch, design: Design, notes: list[str]) -> Input:
    """The current the switch commutates for its switching loss: as given, else the turn-off current."""
    if switch.switched_current is not None:
        return Input(switch.switched_current, "current", Side.MAX, f"{format_path(switch.path)}.switched_current")
    notes.append("switching loss at the turn-off current (give switched_current for the operating value); "
                 "conservative")
    return design_inputs(design, {"turn_off_current": Side.MAX})["turn_off_current"]


def _switching_energy_per_cycle(switch: Switch, design: Design, notes: list[str]
                                ) -> tuple[dict[str, Input], Callable[[dict], np.ndarray]] | str:
    """Inputs and a model of E_on + E_off per cycle at the corners, or what is missing.

    Datasheet energies (or the modelled ones at the turn-off current) are scaled linearly with the voltage
    and the switched current, E ∝ V·I as in E = ½·V·I·t with transition times that vary little with I
    (common practice).
    """
    energy = switch.device.switching_energy
    inputs = {"switched_current": _switched_current(switch, design, notes)}
    if energy is not None:
        energies = {key: Input(getattr(energy, key), "energy", Side.MAX,
                               _device_field(switch, "characteristics", "switching_energy", key), switch.ref)
                    for key in ("e_on", "e_off")}
        inputs |= design_inputs(design, {"bus_voltage": Side.MAX}) | energies
        resistances = [r.high for r in (switch.gate_drive.r_on, switch.gate_drive.r_off) if r is not None]
        if energy.r_g is not None and (not resistances or max(resistances) > energy.r_g):
            return (f"{_device_field(switch, 'characteristics', 'switching_energy')} at the design's gate "
                    f"resistance (the datasheet energies are stated at r_g {energy.r_g:g} ohm, a faster drive)")
        notes.append("datasheet E_on + E_off scaled linearly with V and I (common practice)")
        at_voltage, at_current = energy.v_ds, energy.i_d

        def reference(grid: dict) -> np.ndarray:
            return grid["e_on"] + grid["e_off"]
    elif is_igbt(switch.device.technology) and switch.device.tail is None:
        return (f"{_device_field(switch, 'characteristics', 'switching_energy')} (or, for simulated energies, "
                f"{_device_field(switch, 'characteristics', 'tail')}: without its tail an IGBT's E_off is too low)")
    else:
        run = cell_run(switch, design)
        current = design.conditions.turn_off_current
        if run.missing:
            return (f"{_device_field(switch, 'characteristics', 'switching_energy')} (or, for simulated energies, "
                    + ", ".join(run.missing) + ")")
        total = run.figure("turn_on", "turn_on_energy") + run.figure("turn_off", "turn_off_energy")
        if not np.isfinite(total).all():
            return (f"{_device_field(switch, 'characteristics', 'switching_energy')} (the simulated edges do not "
                    "finish at every corner, so the simulated energies are not known)")
        notes.append("simulated E_on + E_off (the largest sum over the corners, at the turn-off current) scaled "
                     "linearly with the switched current (common practice); the terminal energies of one on-off "
                     "cycle add up to its dissipation, the switch's own C_oss energy included")
        largest = float(total.max())
        at_voltage, at_current = None, current.high

        def reference(grid: dict) -> float:
            return largest

    def per_cycle(grid: dict) -> np.ndarray:
        voltage_ratio = 1.0 if at_voltage is None else grid["bus_voltage"] / at_voltage
        return reference(grid) * voltage_ratio * grid["switched_current"] / at_current

    return inputs, per_cycle


def _gate_below_rating(switch: Switch) -> str | None:
    """Why the stated R_ds(on) does not hold: the drive's nominal on-level is below its test voltage."""
    rating, on = switch.device.r_ds_on, switch.gate_drive.on
    if rating is None or rating.v_gs is None or not math.isfinite(on.nominal) or on.nominal >= rating.v_gs - 1e-9:
        return None
    return (f"r_ds_on is stated at v_gs {rating.v_gs:g} V, above the drive's on-level {on.nominal:g} V, where the "
            "on-resistance is higher")


#: The junction-temperature basis of a MOSFET or HEMT (False) and of an IGBT (True).
_BASIS = {False: "T_j = T_c + R_th*(I_rms^2*R_ds(on)(T_j) + f_sw*(E_on + E_off)) <= t_j_max - tj",
          True: "T_j = T_c + R_th*(V_CE(sat)(T_j)*max(I_rms, I_rms^2/I_ref) + f_sw*(E_on + E_off)) <= t_j_max - tj"}


@dataclass(frozen=True)
class _Conduction:
    """The conduction loss of one switch: its device input, the loss at T and T_j solving Eq. (4) or (7)."""

    inputs: dict[str, Input]
    loss: Callable[[dict, np.ndarray], np.ndarray]
    junction: Callable[[dict, np.ndarray, np.ndarray, np.ndarray], np.ndarray]
    hot_value: Callable[[dict, np.ndarray], tuple[np.ndarray, str]]
    basis: str
    source: str


def _on_resistance_conduction(switch: Switch) -> _Conduction | tuple[str, str]:
    """A MOSFET's I_rms²·R_ds(on)(T_j), or (what is missing, why)."""
    model = on_resistance_model(switch)
    if model is None:
        return _device_field(switch, "characteristics", "r_ds_on (with r_ds_on_hot or "
                             "r_ds_on_temperature_coefficient)"), ""
    reason = _gate_below_rating(switch)
    if reason is not None:
        return _device_field(switch, "characteristics", "r_ds_on at the drive's on-level"), reason
    resistance, reference_temperature, coefficient = model
    inputs = {"r_ds_on": Input(resistance, "resistance", Side.MAX, _device_field(switch, "characteristics", "r_ds_on"),
                               switch.ref)}
    return _Conduction(
        inputs, lambda grid, temperature: grid["rms_current"]**2 * on_resistance(
            temperature, grid["r_ds_on"], reference_temperature, coefficient),
        lambda grid, reference, r_th, switching: junction_temperature(
            reference, r_th, grid["rms_current"], grid["r_ds_on"], reference_temperature, coefficient, switching),
        lambda grid, temperature: ("on_resistance_at_t_j", on_resistance(temperature, grid["r_ds_on"],
                                                                          reference_temperature, coefficient)),
        _BASIS[False], _THERMAL_SOURCE)


def _saturation_conduction(switch: Switch) -> _Conduction | tuple[str, str]:
    """An IGBT's V_CE(sat)(T_j)·max(I_rms, I_rms²/I_ref) (Eq. (5)-(7) of margincheck.physics.thermal), or (what
    is missing, why)."""
    saturation = switch.device.v_ce_sat
    needed = _device_field(switch, "characteristics", "v_ce_sat (with v_ce_sat_hot or "
                           "v_ce_sat_temperature_coefficient)")
    coefficient = None if saturation is None else saturation.temperature_coefficient()
    if coefficient is None or saturation.i_c is None or saturation.t_j is None:
        return needed, ""
    on = switch.gate_drive.on
    if saturation.v_ge is not None and math.isfinite(on.nominal) and on.nominal < saturation.v_ge - 1e-9:
        return (_device_field(switch, "characteristics", "v_ce_sat at the drive's on-level"),
                f"v_ce_sat is stated at v_ge {saturation.v_ge:g} V, above the drive's on-level {on.nominal:g} V, "
                "where the saturation voltage is higher")
    reference_current, reference_temperature = saturation.i_c, saturation.t_j
    inputs = {"v_ce_sat": Input(saturation.value, "voltage", Side.MAX,
                                _device_field(switch, "characteristics", "v_ce_sat"), switch.ref)}

    def voltage(grid: dict, temperature):
        return saturation_voltage(temperature, grid["v_ce_sat"], reference_temperature, coefficient)

    def loss(grid: dict, temperature):
        return igbt_conduction_loss(grid["rms_current"], voltage(grid, temperature), reference_current)

    def junction(grid: dict, reference, r_th, switching):
        slope = igbt_conduction_loss(grid["rms_current"], coefficient, reference_current)  # dP/dT, Eq. (5)-(6)
        return junction_temperature_linear_loss(reference, r_th, loss(grid, reference), slope, switching)

    return _Conduction(inputs, loss, junction, lambda grid, temperature: (
        "saturation_voltage_at_t_j", voltage(grid, temperature)),
        _BASIS[True],
        "P_cond = V_CE0*I_avg + r_CE*I_rms^2 bounded over the lines through the datasheet point, V_CE(sat) linear in "
        "T_j: Mohan, Undeland & Robbins 2003, ch. 22 and 29 (from memory)")


@rule("junction-temperature", title="Junction temperature at the hottest case against the derated T_j,max",
      scope=Scope.SWITCH)
def junction_temperature_rule(switch: Switch, design: Design) -> Finding:
    """T_j of the conduction and switching losses ≤ ``t_j_max`` − ``tj``, or thermal runaway (a failure). The
    conduction loss is I_rms²·R_ds(on)(T_j) for a MOSFET or HEMT, V_CE(sat)(T_j) times the current for an IGBT."""
    device, place, notes = switch.device, format_path(switch.path), []
    conduction = (_saturation_conduction if is_igbt(device.technology) else _on_resistance_conduction)(switch)
    if isinstance(conduction, tuple):
        return not_evaluated("junction-temperature", switch.ref, "temperature", _BASIS[is_igbt(device.technology)],
                             *conduction)
    energy = _switching_energy_per_cycle(switch, design, notes)
    if isinstance(energy, str):
        return not_evaluated("junction-temperature", switch.ref, "temperature", conduction.basis, energy)
    energy_inputs, energy_per_cycle = energy
    reference_name, path, reference_kind = _thermal_path(switch, design)
    inputs = path | energy_inputs | conduction.inputs | {
        "rms_current": Input(switch.rms_current, "current", Side.MAX, f"{place}.rms_current"),
        "switching_frequency": Input(design.conditions.switching_frequency, "frequency", Side.MAX,
                                     "conditions.switching_frequency")}

    def losses(grid: dict, temperature) -> tuple[np.ndarray, np.ndarray]:
        return conduction.loss(grid, temperature), grid["switching_frequency"] * energy_per_cycle(grid)

    def solve(grid: dict) -> np.ndarray:
        reference = grid[reference_name]
        r_th = grid["r_th_jc"] + grid.get("r_th_cs", 0.0)  # R_th,cs only on the heat-sink path
        return conduction.junction(grid, reference, r_th, losses(grid, reference)[1])

    def details(grid: dict) -> dict:
        temperature = solve(grid)
        with np.errstate(invalid="ignore", over="ignore"):
            conducted, switching = losses(grid, temperature)
            name, hot = conduction.hot_value(grid, temperature)
        return {name: (hot, "voltage" if name.startswith("saturation") else "resistance"),
                "conduction_loss": (conducted, "power"), "switching_loss": (switching, "power"),
                "dissipated_power": (conducted + switching, "power")}

    limit = None if device.t_j_max is None else device.t_j_max - design.policy_for(switch).tj
    reference = path[reference_name].interval
    hottest = reference.high if reference is not None else math.nan
    check = Check(
        rule="junction-temperature", subject=switch.ref, kind="temperature", basis=conduction.basis,
        source=conduction.source, inputs=inputs, model=solve, limit=limit,
        limit_needs=(_device_field(switch, "ratings", "t_j_max"),),
        scale=max(limit - hottest, 1.0) if limit is not None and math.isfinite(hottest) else None,
        details=details, fails_outright=np.isposinf,
        failure_note="thermal runaway: the conduction loss rises faster with T_j than the heat path removes it, "
                     "so there is no equilibrium",
        note="; ".join(notes + [f"margin as a fraction of the allowed rise above the hottest {reference_kind}",
                                "switching energies taken as independent of T_j"]),
        caution="Confirm the hottest case temperature with a thermocouple or thermal camera at full load before "
                "relying on the thermal margin.")
    return worst_case_finding(check, design.policy.marginal_band)


def case_temperature(switch: Switch, design: Design) -> tuple[Interval | None, str]:
    """The switch's case temperature [K]: as given, or the heat sink plus R_th,cs times its worst loss."""
    given, heatsink = design.conditions.case_temperature, design.conditions.heatsink_temperature
    if given is not None:
        return given, "conditions.case_temperature"
    field = "conditions.case_temperature (or heatsink_temperature with r_th_cs and the junction-temperature inputs)"
    if heatsink is None or switch.r_th_cs is None or not heatsink.has_high:
        return None, field
    thermal = junction_temperature_rule(switch, design)
    power = thermal.details.get("dissipated_power")
    if thermal.status is Status.NOT_EVALUATED or power is None or not math.isfinite(power.value):
        return None, field
    rise = switch.r_th_cs.high * power.value
    return Interval(heatsink.low + rise if heatsink.has_low else math.nan, heatsink.nominal + rise,
                    heatsink.high + rise), field


def _avalanche_start_temperature(switch: Switch, design: Design, notes: list[str]) -> float:
    """Starting T_j of an avalanche: the junction-temperature result, or the derated limit when unknown."""
    thermal = junction_temperature_rule(switch, design)
    if thermal.value is not None and math.isfinite(thermal.value):
        return thermal.value
    notes.append("junction temperature not computed: the avalanche is taken to start at t_j_max - tj")
    return switch.device.t_j_max - design.policy_for(switch).tj


@rule("avalanche-energy", title="Avalanche energy of a turn-off peak that reaches V(BR)DSS", scope=Scope.SWITCH)
def avalanche_energy_rule(switch: Switch, design: Design) -> Finding:
    """No breakdown (V_pk < v_ds_max); else E_AS = ½·L·I²·V_BR/(V_BR − V_DD) ≤ the T_j-derated rating."""
    basis = "V_pk < v_ds_max, else E = L*I^2/2 * V_BR/(V_BR - V_DD) <= E_AS*(T_j,max - T_j)/(T_j,max - T_j,rated)"
    device, rating = switch.device, switch.device.avalanche
    peak = turn_off_overshoot(switch, design)
    if peak.value is None:
        return not_evaluated("avalanche-energy", switch.ref, "voltage", basis,
                              "the turn-off peak (see turn-off-overshoot)", peak.note)
    below = margin_of(peak.value, device.v_ds_max, peak.bound)
    if below > 0 or (rating is not None and rating.energy is None):
        no_avalanche = below > 0
        return Finding(
            rule="avalanche-energy", subject=switch.ref, kind="voltage", basis=basis,
            source="margincheck criterion: a turn-off peak below the rated V(BR)DSS (v_ds_max) leaves the device "
                   "out of avalanche",
            status=classify(below, design.policy.marginal_band) if no_avalanche else Status.FAIL,
            value=peak.value, limit=device.v_ds_max, margin=below, corner=peak.corner,
            note="the turn-off peak stays below V(BR)DSS: no avalanche" if no_avalanche else
            "the turn-off peak reaches V(BR)DSS and the device has no avalanche capability (avalanche: none)")
    for value, field in ((rating, "avalanche"), (device.t_j_max, "t_j_max")):
        if value is None:
            return not_evaluated("avalanche-energy", switch.ref, "energy", basis,
                                 _device_field(switch, "ratings", field), "the turn-off peak reaches V(BR)DSS")
    notes = ["the turn-off peak reaches V(BR)DSS; V_BR taken as the rated v_ds_max (the larger energy)"]
    allowed = float(allowed_avalanche_energy(rating.energy, rating.t_j, device.t_j_max,
                                             _avalanche_start_temperature(switch, design, notes)))
    check = Check(
        rule="avalanche-energy", subject=switch.ref, kind="energy", basis=basis,
        source="unclamped inductive switching energy balance (JEDEC JESD24, from memory); linear derating to zero "
               "at T_j,max (common practice)",
        inputs=design_inputs(design, {"bus_voltage": Side.MAX, "loop_inductance": Side.MAX,
                                      "turn_off_current": Side.MAX}),
        model=lambda grid: avalanche_energy(grid["loop_inductance"], grid["turn_off_current"], device.v_ds_max,
                                            grid["bus_voltage"]),
        limit=allowed, scale=allowed if allowed > 0 else rating.energy, note="; ".join(notes),
        out_of_range=lambda grid, index: "the bus voltage reaches V(BR)DSS: the current would not fall",
        caution="Repetitive avalanche is a separate rating; design the overshoot out rather than relying on it.")
    return worst_case_finding(check, design.policy.marginal_band)
