"""The cosmic-ray rule: each switch's failure rate while it blocks the DC link, from its device's
failure-rate-versus-voltage model (margincheck.physics.cosmic_ray), against the policy's budget. Rule ids are
contract.
"""

from __future__ import annotations

import dataclasses

import numpy as np

from margincheck.design import Design, Switch
from margincheck.findings import Finding
from margincheck.intervals import Interval, Side, corner_grid, missing_sides
from margincheck.physics.cosmic_ray import ALTITUDE_RANGE, cosmic_ray_failure_rate
from margincheck.rules.registry import Scope, rule
from margincheck.rules.worst_case import Check, Input, not_evaluated, worst_case_finding
from margincheck.units import format_value

__all__: list[str] = []

RULE_ID = "cosmic-ray-fit"
BUDGET_KEY = "cosmic_ray_fit_budget"

_BASIS = ("lambda = c3*exp(c2/(c1 - V_bus,max)) * exp((1 - (1 - h_max/44300)^5.26)/0.143) * "
          "exp((25 degC - T_j,min)/47.6 K) <= cosmic_ray_fit_budget")
_SOURCE = ("H. R. Zeller, Cosmic ray induced failures in high power semiconductor devices, Solid-State Electronics "
           "38(12), 1995, pp. 2041-2046: the form, the altitude and the temperature factors from memory, not "
           "confirmed; exponential voltage dependence: H. Kabza et al., ISPSD 1994; (1 - h/44300)^5.26 is the "
           "pressure ratio of the U.S. Standard Atmosphere 1976; device constants from the device file")
_CAUTION = ("An empirical model of burnout by terrestrial cosmic-ray neutrons: it takes in the bus voltage, altitude "
            "and junction temperature only; the neutron flux also varies with the site and the solar cycle, and "
            "shielding by buildings changes it (common practice). Use constants measured for this device and "
            "keep the bus well below its rating.")


def _coldest_junction(design: Design) -> tuple[Interval | None, str, str]:
    """The input standing for the coldest junction: a blocking device dissipates little, so its junction is
    at least as warm as its case (and the case as its heat sink); the lowest of these bounds the rate."""
    conditions = design.conditions
    if conditions.case_temperature is not None:
        return conditions.case_temperature, "case_temperature", "conditions.case_temperature"
    if conditions.heatsink_temperature is not None:
        return conditions.heatsink_temperature, "heatsink_temperature", "conditions.heatsink_temperature"
    return None, "case_temperature", "conditions.case_temperature (or heatsink_temperature)"


def _altitude(design: Design, notes: list[str]) -> Interval:
    if design.conditions.altitude is not None:
        return design.conditions.altitude
    notes.append("conditions.altitude not given: sea level (0 m) assumed")
    return Interval.exact(0.0)


def _highest_rate(check: Check) -> str:
    """The highest failure rate over the corners, stated where no budget lets the rule judge it."""
    intervals = {name: item.interval for name, item in check.inputs.items()}
    if missing_sides(intervals, {name: item.side for name, item in check.inputs.items()}):
        return ""
    rates = check.model(corner_grid(intervals))
    if not np.all(np.isfinite(rates)):
        return ""
    return f"highest failure rate over the corners {format_value(float(np.max(rates)), 'failure_rate')}"


@rule(RULE_ID, title="Cosmic-ray failure rate at the highest bus voltage against the policy's budget",
      scope=Scope.SWITCH)
def cosmic_ray_fit(switch: Switch, design: Design) -> Finding | None:
    """λ(V_bus,max, h_max, T_j,min) of the device's cosmic-ray model ≤ ``cosmic_ray_fit_budget`` per switch.

    The worst corner is the highest bus voltage, the highest altitude and the coldest junction (the rate falls
    as the junction warms). The model is optional: the rule applies where the device gives one or the policy
    sets a budget (the project asks for the figure). A device without a model under a budget is not evaluated;
    a model without a budget is not evaluated too, and states the rate.
    """
    device, notes = switch.device, []
    if device.cosmic_ray is None:
        if design.policy.cosmic_ray_fit_budget is None:
            return None  # neither the device nor the policy asks for the figure
        return not_evaluated(RULE_ID, switch.ref, "failure_rate", _BASIS, f"devices.{device.name}.cosmic_ray",
                             "the device gives no cosmic-ray failure-rate model (c1, c2, c3 and their reference)")
    model = device.cosmic_ray
    temperature, temperature_name, temperature_field = _coldest_junction(design)
    inputs = {"bus_voltage": Input(design.conditions.bus_voltage, "voltage", Side.MAX, "conditions.bus_voltage"),
              "altitude": Input(_altitude(design, notes), "altitude", Side.MAX, "conditions.altitude"),
              temperature_name: Input(temperature, "temperature", Side.MIN, temperature_field)}
    notes.append(f"junction taken at the lowest {temperature_name.replace('_', ' ')} (colder raises the rate); "
                 f"constants: {model.reference}")
    bus = design.conditions.bus_voltage
    if bus.has_high and bus.high <= model.c1:
        notes.append(f"the bus stays at or below c1 = {format_value(model.c1, 'voltage')}: the model gives no "
                     "cosmic-ray failures")
    check = Check(
        rule=RULE_ID, subject=switch.ref, kind="failure_rate", basis=_BASIS, source=_SOURCE, inputs=inputs,
        model=lambda grid: cosmic_ray_failure_rate(grid["bus_voltage"], grid["altitude"], grid[temperature_name],
                                                   model.c1, model.c2, model.c3),
        limit=design.policy.cosmic_ray_fit_budget, limit_needs=(f"policy key {BUDGET_KEY} (a budget per switch)",),
        out_of_range=lambda grid, index: (
            f"altitude {format_value(float(grid['altitude'][index]), 'altitude')} is outside the model's range "
            f"{format_value(ALTITUDE_RANGE[0], 'altitude')} to {format_value(ALTITUDE_RANGE[1], 'altitude')} (the "
            "standard atmosphere's lowest layer)"),
        note="; ".join(notes), caution=_CAUTION)
    if check.limit is None:
        stated = _highest_rate(check)
        check = dataclasses.replace(check, note="; ".join(filter(None, [stated, check.note])))
    return worst_case_finding(check, design.policy.marginal_band)
