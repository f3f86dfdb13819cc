"""Switching-transient rules (design.md section 5, "The switching cell"): spurious turn-on of the idle switch,
the isolated driver's CMTI, the recovery spike across the opposite device, and parasitic oscillation. Every one
reads the cell simulation (margincheck.rules.cell_model). Rule ids are contract.
"""

from __future__ import annotations

import dataclasses

import numpy as np

from margincheck.design import Design, Switch
from margincheck.errors import format_path
from margincheck.findings import Finding, Status
from margincheck.rules.cell_model import STILL_GROWING, CellRun, cell_check, cell_run, measured, run_notes, worse
from margincheck.rules.limits import DeratedLimit, cmti_limit, peak_voltage_limit, spurious_turn_on_limit
from margincheck.rules.registry import Scope, rule
from margincheck.rules.worst_case import not_evaluated, worst_case_finding

__all__ = ["BUILD_UP_LIMIT", "no_partner"]

_SOURCE = ("one simulation of the commutation cell per corner (margincheck.physics.switching_cell), checked against "
           "scipy Radau on the same circuit written apart")
_OSCILLATION_SOURCE = ("eigenvalues of the cell linearised half-way through the current transition, growth "
                       "exp(alpha*t_active): Lemmon, Mazzola, Gafford & Parker, IEEE Trans. Power Electron. 28(10), "
                       "2013, p. 4453; the growth limit 10 is a margincheck criterion (the edge's own ring outgrown "
                       "tenfold)")
_SPURIOUS_SOURCE = (f"{_SOURCE}; margincheck criterion: the idle gate's peak stays within the policy's fraction of "
                    "its lowest threshold at the hottest junction")
_CMTI_SOURCE = (f"{_SOURCE}; margincheck criterion: the switch-node dv/dt stays within the policy's fraction of the "
                "driver's rated common-mode transient immunity")
#: A mode that grows by this factor while the channel is in its active region builds up: the edge's own ring
#: is then outgrown by an order of magnitude (our criterion; a smaller growth is marginal).
BUILD_UP_LIMIT = 10.0


def no_partner(rule_id: str, switch: Switch, kind: str, basis: str) -> Finding:
    """Not evaluated: the rule needs the opposite switch of the leg."""
    return not_evaluated(rule_id, switch.ref, kind, basis, f"{format_path(switch.path)}.leg (or opposite)",
                          "the opposite switch of the leg is not known: give both switches the same leg, or opposite")


def _not_simulated(rule_id: str, switch: Switch, kind: str, basis: str, run: CellRun) -> Finding:
    return dataclasses.replace(not_evaluated(rule_id, switch.ref, kind, basis, run.missing[0], run_notes(run)),
                               missing=run.missing)


def _favourable_zeros(switch: Switch) -> list[str]:
    """Inputs of the idle switch that the cell takes as 0 when left out, where 0 understates the induced
    voltage: its internal gate resistance, and its common-source inductance when the source is shared."""
    missing = []
    if switch.device.r_g_internal is None:
        missing.append(f"devices.{switch.device.name}.characteristics.r_g_internal")
    if switch.source_connection == "shared" and switch.common_source_inductance is None:
        missing.append(f"{format_path(switch.path)}.common_source_inductance")
    return missing


@rule("spurious-turn-on", title="Simulated gate voltage of the idle switch while it blocks, against its hot "
      "threshold", scope=Scope.SWITCH)
def spurious_turn_on(switch: Switch, design: Design) -> Finding:
    """Highest simulated gate voltage of the idle switch while it blocks (both edges of its partner) ≤
    ``spurious_turn_on`` × its minimum threshold at the hottest junction."""
    basis = "max v_gs of the idle switch while it blocks > 10 % of V_bus <= spurious_turn_on * V_th,min(T_j,max)"
    partner = design.opposite_of(switch)
    if partner is None:
        return no_partner("spurious-turn-on", switch, "voltage", basis)
    if switch.device.c_rss is None:
        return not_evaluated("spurious-turn-on", switch.ref, "voltage", basis,
                              f"devices.{switch.device.name}.characteristics.c_rss (or q_gd)",
                              "the Miller capacitance couples the switch node into the idle gate")
    unknown = _favourable_zeros(switch)
    if unknown:
        return dataclasses.replace(not_evaluated("spurious-turn-on", switch.ref, "voltage", basis, unknown[0],
                                                 "left out, it would be taken as 0, which lowers the induced "
                                                 "voltage: zero is not the conservative value here"),
                                   missing=tuple(unknown))
    run = cell_run(partner, design)
    if run.missing:
        return _not_simulated("spurious-turn-on", switch, "voltage", basis, run)
    limit = spurious_turn_on_limit(switch, design.policy_for(switch))
    induced = np.maximum(run.figure("turn_on", "idle_gate_blocking_max"),
                         run.figure("turn_off", "idle_gate_blocking_max"))
    check = cell_check(
        run, induced, rule="spurious-turn-on", subject=switch.ref, kind="voltage", basis=basis,
        source=_SPURIOUS_SOURCE,
        limit=limit.value, limit_needs=(limit.needs,),
        note=run_notes(run, *limit.notes, f"the idle gate while {partner.ref} switches"),
        caution="Dead time, a negative off-level or an active Miller clamp are the usual cures; confirm the idle "
                "gate with a differential probe during a double-pulse test of the partner.")
    return worst_case_finding(check, design.policy.marginal_band)


def _dv_dt_finding(switch: Switch, design: Design, run: CellRun, limit: DeratedLimit, whose: str) -> Finding:
    rate = np.maximum(run.figure("turn_off", "dv_dt_max"), run.figure("turn_on", "dv_dt_max"))
    check = cell_check(
        run, rate, rule="driver-cmti", subject=switch.ref, kind="voltage_slew_rate",
        basis=f"max |dv/dt| of the switch node over the edges of {whose} <= cmti * CMTI", source=_CMTI_SOURCE,
        limit=limit.value, limit_needs=(limit.needs,),
        caution="CMTI is stated at a test condition; ringing at the switch node raises the local dv/dt above the "
                "10-90 % edge rate.")
    return worst_case_finding(check, design.policy.marginal_band)


@rule("driver-cmti", title="Highest simulated dv/dt of the switch node against the isolated driver's CMTI",
      scope=Scope.SWITCH)
def driver_cmti(switch: Switch, design: Design) -> Finding | None:
    """max |dv/dt| of both edges of both devices ≤ ``cmti`` × the driver's common-mode transient immunity."""
    if not switch.driver_isolated:
        return None
    basis = "max |dv/dt| of the switch node <= cmti * CMTI"
    limit = cmti_limit(switch, design.policy_for(switch))
    run = cell_run(switch, design)
    if run.missing:
        return _not_simulated("driver-cmti", switch, "voltage_slew_rate", basis, run)
    finding = _dv_dt_finding(switch, design, run, limit, switch.ref)
    partner = design.opposite_of(switch)
    if partner is None:
        return dataclasses.replace(finding, note=finding.note + "; no opposite switch known: only this switch's "
                                   "own edges are counted")
    other = cell_run(partner, design)
    if other.missing:
        return _not_simulated("driver-cmti", switch, "voltage_slew_rate", basis, other)
    return worse(finding, _dv_dt_finding(switch, design, other, limit, partner.ref))


@rule("recovery-overshoot", title="Simulated peak across this device when the opposite switch turns on",
      scope=Scope.SWITCH)
def recovery_overshoot(switch: Switch, design: Design) -> Finding:
    """Peak v_ds of this device (its diode recovering, or its C_oss ringing) while the partner turns on ≤
    ``peak_voltage`` × ``v_ds_max``."""
    basis = "max v_ds of this device while the opposite switch turns on <= peak_voltage * v_ds_max"
    partner = design.opposite_of(switch)
    if partner is None:
        return no_partner("recovery-overshoot", switch, "voltage", basis)
    if switch.device.recovery is None:
        return not_evaluated("recovery-overshoot", switch.ref, "voltage", basis,
                              f"devices.{switch.device.name}.characteristics.reverse_recovery",
                              "the recovery of this device's diode is not given (q_rr and softness, or none)")
    run = cell_run(partner, design)
    if run.missing:
        return _not_simulated("recovery-overshoot", switch, "voltage", basis, run)
    check = cell_check(
        run, run.figure("turn_on", "peak_opposite_voltage"), rule="recovery-overshoot", subject=switch.ref,
        kind="voltage", basis=basis,
        source=f"{_SOURCE}; diode recovery: Lauritzen & Ma, IEEE Trans. Power Electron. 6(2), 1991 (charge control)",
        limit=peak_voltage_limit(switch, design.policy_for(switch)).value,
        details=measured(run, "turn_on", {"di_dt_max": "current_slew_rate", "peak_reverse_current": "current"}),
        note=run_notes(run, f"when {partner.ref} turns on"),
        caution="The recovery spike depends strongly on temperature and current; measure it at the hottest case in "
                "a double-pulse test.")
    return worst_case_finding(check, design.policy.marginal_band)


def _oscillation_finding(switch: Switch, design: Design, run: CellRun, edge: str) -> Finding:
    growth = run.figure(edge, "build_up")
    sustained = run.figure(edge, "late_growth") > STILL_GROWING
    rate = run.figure(edge, "growth_rate")
    check = cell_check(
        run, np.where(np.isfinite(rate), growth, np.nan), rule="parasitic-oscillation", subject=switch.ref,
        kind="dimensionless", basis=f"growth exp(alpha*t_active) of the least damped mode at {edge.replace('_', '-')} "
        f"< {BUILD_UP_LIMIT:g}, and no ring still growing when the simulation ends", source=_OSCILLATION_SOURCE,
        limit=BUILD_UP_LIMIT, fails_outright=lambda values: sustained,
        failure_note="the simulated ring is still growing when the simulated time ends (a sustained oscillation)",
        details=measured(run, edge, {"growth_time": "time", "mode_frequency": "frequency",
                                     "active_time": "time"}),
        note=run_notes(run, "damping in the model: the gate resistances (external, internal, driver), the loop "
                       "resistance and a measured quality factor where given; skin effect, core and dielectric "
                       "losses are left out, so the model oscillates more easily than the hardware"),
        caution="Usual remedies: more gate resistance, the Kelvin-source connection, a ferrite bead in the gate "
                "lead, less common-source or loop inductance; confirm in a double-pulse test at the worst corner.")
    finding = worst_case_finding(check, design.policy.marginal_band)
    grows = finding.status in (Status.PASS, Status.MARGINAL) and finding.value is not None and finding.value > 1.0
    if grows:
        return dataclasses.replace(finding, status=Status.MARGINAL, note=finding.note + "; a mode grows, but not "
                                   "enough to build up while the channel is in its active region")
    return finding


@rule("parasitic-oscillation", title="Growing mode of the cell while the switch is in its active region",
      scope=Scope.SWITCH)
def parasitic_oscillation(switch: Switch, design: Design) -> Finding:
    """Fail when the least damped mode of the cell builds up (growth ≥ 10) during a current transition, or the
    simulated ring is still growing at the end; marginal when a mode grows but cannot build up."""
    run = cell_run(switch, design)
    if run.missing:
        return _not_simulated("parasitic-oscillation", switch, "dimensionless",
                              "growth of the least damped mode of the cell", run)
    return worse(_oscillation_finding(switch, design, run, "turn_off"),
                 _oscillation_finding(switch, design, run, "turn_on"))

