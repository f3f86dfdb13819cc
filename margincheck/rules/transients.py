"""Switching-transient rules (design.md section 5, "Switching transients"): spurious turn-on of the idle
switch, the isolated driver's CMTI, and the recovery spike across the opposite device. Rule ids are contract.
"""

from __future__ import annotations

import numpy as np

from margincheck.design import Design, Switch
from margincheck.errors import format_path
from margincheck.findings import Finding
from margincheck.intervals import Side
from margincheck.physics.coupling import induced_gate_voltage
from margincheck.physics.recovery import peak_recovery_current, recovery_peak_voltage
from margincheck.physics.ringing import ramp_ring_overshoot
from margincheck.rules.registry import Scope, rule
from margincheck.rules.switching_model import OPPOSITE, EdgeModel, design_inputs, inputs_for
from margincheck.rules.worst_case import Check, Input, not_evaluated, worst_case_finding

__all__: list[str] = []

#: The turning-on partner's inputs for its fastest turn-on (lowest threshold and resistance, highest level).
_FAST_TURN_ON = {"v_gs_th": Side.MIN, "gate_drive.on": Side.MAX, "gate_drive.r_on": Side.MIN,
                 "r_g_internal": Side.MIN, "c_iss": Side.MIN, "transconductance": Side.BOTH,
                 "common_source_inductance": Side.MIN, "c_rss": Side.MIN}
_SOURCE_MILLER = ("induced gate voltage min(R_g*C_rss*dv/dt, dV*C_rss/C_iss) + L_s*di/dt: Baliga, Fundamentals "
                  "of Power Semiconductor Devices, 2008, ch. 6 (from memory)")


def _no_partner(rule_id: str, switch: Switch, kind: str, basis: str) -> Finding:
    """Not evaluated: the rule needs the opposite switch of the leg."""
    return not_evaluated(rule_id, switch.ref, kind, basis, f"{format_path(switch.path)}.leg (or opposite)",
                          "the opposite switch of the leg is not known: give both switches the same leg, or opposite")


def _partner_turn_on_dv_dt(partner: EdgeModel, bus) -> np.ndarray:
    """Fastest dv/dt the partner's turn-on puts on the switch node, at zero current (plateau at V_th)."""
    rate, _ = partner.turn_on_fall(bus, np.zeros_like(np.asarray(bus, dtype=float)))
    return rate


@rule("spurious-turn-on", title="Gate voltage induced on the idle switch against its hot threshold",
      scope=Scope.SWITCH)
def spurious_turn_on(switch: Switch, design: Design) -> Finding:
    """Off-level + induced ΔV of the idle switch ≤ ``spurious_turn_on`` × its minimum threshold at hot T_j."""
    basis = ("V_off + min(R_g,off*C_rss*dv/dt, V_bus*C_rss/C_iss) + L_s*|di/dt| "
             "<= spurious_turn_on * V_th,min(T_j,max)")
    partner = design.opposite_of(switch)
    if partner is None:
        return _no_partner("spurious-turn-on", switch, "voltage", basis)
    notes: list[str] = []
    inputs = design_inputs(design, {"bus_voltage": Side.MAX})
    inputs |= inputs_for(switch, {"gate_drive.off": Side.MAX, "gate_drive.r_off": Side.MAX,
                                  "r_g_internal": Side.MAX, "c_rss": Side.MAX, "c_iss": Side.MIN}, notes)
    if switch.gate_drive.r_driver is not None:
        inputs |= inputs_for(switch, {"gate_drive.r_driver": Side.MAX}, notes)
    if switch.source_connection == "shared":  # needed at its largest: not assumed when left out
        inputs |= inputs_for(switch, {"common_source_inductance": Side.MAX}, notes)
    inputs |= inputs_for(partner, _FAST_TURN_ON, notes, OPPOSITE)
    hot = inputs_for(switch, {"v_gs_th_hot": Side.MIN}, notes)["v_gs_th_hot"]

    def model(grid: dict) -> np.ndarray:
        idle, other = EdgeModel(grid, switch), EdgeModel(grid, partner, OPPOSITE)
        bus = grid["bus_voltage"]
        source = grid.get("common_source_inductance", 0.0)
        induced = induced_gate_voltage(idle.r_off, idle.c_rss(bus), grid["c_iss"], _partner_turn_on_dv_dt(other, bus),
                                       bus, source, other.turn_on_di_dt())
        return grid["gate_drive.off"] + induced

    factor = design.policy.spurious_turn_on
    check = Check(
        rule="spurious-turn-on", subject=switch.ref, kind="voltage", basis=basis, source=_SOURCE_MILLER,
        inputs=inputs, model=model,
        limit=factor * hot.interval.low if hot.interval is not None and hot.interval.has_low else None,
        limit_needs=(hot.field,),
        note="; ".join(dict.fromkeys(notes + [f"the partner {partner.ref} turning on at its fastest"])),
        caution="Dead time, a negative off-level or an active Miller clamp are the usual cures; confirm the idle "
                "gate with a differential probe during a double-pulse test of the partner.",
    )
    return worst_case_finding(check, design.policy.marginal_band)


_CMTI_NEEDS = {"v_gs_th": Side.BOTH, "gate_drive.on": Side.MAX, "gate_drive.off": Side.MIN,
               "gate_drive.r_on": Side.MIN, "gate_drive.r_off": Side.MIN, "r_g_internal": Side.MIN,
               "c_iss": Side.MIN, "transconductance": Side.BOTH, "common_source_inductance": Side.MIN,
               "c_rss": Side.MIN}


def _edge_inputs(switch: Switch, notes: list[str], prefix: str = "") -> dict[str, Input]:
    """A switch's inputs for the dv/dt of both its edges; C_oss only when given (none is the faster case)."""
    inputs = inputs_for(switch, _CMTI_NEEDS, notes, prefix)
    if switch.device.c_oss is not None:
        inputs |= inputs_for(switch, {"c_oss": Side.MIN}, notes, prefix)
    return inputs


def _node_dv_dt(grid: dict, switch: Switch, partner: Switch | None) -> np.ndarray:
    """Highest dv/dt of the switch node over the four edges of the leg (both devices, both edges)."""
    bus, current = grid["bus_voltage"], grid["turn_off_current"]
    own = EdgeModel(grid, switch)
    other = EdgeModel(grid, partner, OPPOSITE)
    rates = [own.turn_off_rise(bus, current, other)[0], own.turn_on_fall(bus, np.zeros_like(bus))[0]]
    if partner is not None:
        rates += [other.turn_off_rise(bus, current, own)[0], other.turn_on_fall(bus, np.zeros_like(bus))[0]]
    return np.max(rates, axis=0)


@rule("driver-cmti", title="Highest dv/dt of the switch node against the isolated driver's CMTI",
      scope=Scope.SWITCH)
def driver_cmti(switch: Switch, design: Design) -> Finding | None:
    """max dv/dt ≤ ``cmti`` × the driver's common-mode transient immunity (isolated drivers only)."""
    if not switch.driver_isolated:
        return None
    partner = design.opposite_of(switch)
    notes: list[str] = []
    inputs = design_inputs(design, {"bus_voltage": Side.MAX, "turn_off_current": Side.MAX})
    inputs |= _edge_inputs(switch, notes)
    if partner is not None:
        inputs |= _edge_inputs(partner, notes, OPPOSITE)
    else:
        notes.append("no opposite switch known: only this switch's own edges are counted")
    limit = None if switch.driver_cmti is None else design.policy.cmti * switch.driver_cmti
    check = Check(
        rule="driver-cmti", subject=switch.ref, kind="voltage_slew_rate",
        basis="max(dv/dt of both edges of both devices) <= cmti * CMTI",
        source="gate-limited (V_pl - V_off)/(R_g*C_rss) and load-limited I/C_oss dv/dt: Mohan, Undeland & Robbins "
               "2003, ch. 22 (from memory)",
        inputs=inputs, model=lambda grid: _node_dv_dt(grid, switch, partner), limit=limit,
        limit_needs=(f"{format_path(switch.path)}.driver_cmti (or driver_cmti: not-isolated)",),
        note="; ".join(dict.fromkeys(notes)),
        caution="CMTI is stated at a test condition; ringing at the switch node raises the local dv/dt above the "
                "edge average used here.",
    )
    return worst_case_finding(check, design.policy.marginal_band)


@rule("recovery-overshoot", title="Recovery spike across this device when the opposite switch turns on",
      scope=Scope.SWITCH)
def recovery_overshoot(switch: Switch, design: Design) -> Finding:
    """V_bus + the recovery (or capacitive ring) spike ≤ ``peak_voltage`` × this device's ``v_ds_max``."""
    basis = "V_pk = V_bus + L_loop*a/S (recovery), or V_bus + ring of the turn-on edge (capacitive only)"
    partner = design.opposite_of(switch)
    if partner is None:
        return _no_partner("recovery-overshoot", switch, "voltage", basis)
    recovery = switch.device.recovery
    if recovery is None:
        return not_evaluated("recovery-overshoot", switch.ref, "voltage", basis,
                              f"devices.{switch.device.name}.characteristics.reverse_recovery",
                              "the recovery of this device's diode is not given (q_rr and softness, or none)")
    notes: list[str] = list(switch.device.notes)
    inputs = design_inputs(design, {"bus_voltage": Side.MAX, "loop_inductance": Side.MAX,
                                    "turn_off_current": Side.MAX})
    inputs |= inputs_for(partner, _FAST_TURN_ON, notes, OPPOSITE)
    if recovery.capacitive_only:
        inputs |= inputs_for(switch, {"c_oss": Side.MIN}, notes)

    def model(grid: dict) -> np.ndarray:
        other = EdgeModel(grid, partner, OPPOSITE)
        bus, inductance, current = grid["bus_voltage"], grid["loop_inductance"], grid["turn_off_current"]
        rate = other.turn_on_di_dt()
        if not recovery.capacitive_only:
            return recovery_peak_voltage(bus, inductance, rate, recovery.softness)
        return bus + ramp_ring_overshoot(inductance, EdgeModel(grid, switch).c_oss(bus), current, current / rate)

    def details(grid: dict) -> dict:
        rate = EdgeModel(grid, partner, OPPOSITE).turn_on_di_dt()
        found = {"commutation_di_dt": (rate, "current_slew_rate")}
        if not recovery.capacitive_only:
            found["peak_recovery_current"] = (peak_recovery_current(recovery.charge, rate, recovery.softness),
                                              "current")
        return found

    check = Check(
        rule="recovery-overshoot", subject=switch.ref, kind="voltage", basis=basis, details=details,
        source="triangular recovery with softness S = t_b/t_a: Mohan, Undeland & Robbins 2003, sec. 20-2; "
               "Williams 2006, ch. 4 (from memory); capacitive ring: closed form of the linear ramp",
        inputs=inputs, model=model, limit=design.policy.peak_voltage * switch.device.v_ds_max,
        note="; ".join(dict.fromkeys(notes + [f"when {partner.ref} turns on at its fastest"])),
        caution="The recovery spike depends strongly on temperature and current; measure it at the hottest case in "
                "a double-pulse test.",
    )
    return worst_case_finding(check, design.policy.marginal_band)
