"""One switching-cell simulation per switch: the switch under test and its partner at every corner, both edges.

Every transient rule and the switching-figures table read the same run (``cell_run``), so that each figure of
a finding comes from the same waveforms at the same corner. The corners are the full factorial of the
toleranced inputs, with the midpoint of the threshold added (the simulated peak is not monotone in it), and the
nominal point last. Identical cells (a leg of two equal switches) are simulated once.
"""

from __future__ import annotations

import dataclasses
from dataclasses import dataclass
from typing import Callable

import numpy as np

from margincheck.design import Design, Switch
from margincheck.findings import Finding, attention_rank
from margincheck.intervals import Interval, Side, missing_sides, search_grid
from margincheck.physics.cell_edges import measure_edges
from margincheck.physics.edge_figures import EnergyWindow
from margincheck.physics.switching import turn_on_di_dt
from margincheck.physics.switching_cell import Cell, CellDevice, CurveTable
from margincheck.rules.sampling import active_sampling
from margincheck.rules.switching_model import OPPOSITE, EdgeModel, design_inputs, inputs_for, nominal_grid
from margincheck.rules.worst_case import Check, Input
from margincheck.technology import is_igbt

__all__ = ["STILL_GROWING", "CellRun", "INTERIOR", "SEARCH", "cell_check", "cell_inputs", "cell_run", "cells_for_grid",
           "measured", "run_notes", "worse"]

#: Inputs searched at their midpoint too (the simulated figures are not monotone in the threshold: a higher one
#: falls faster, a lower one leaves the channel on longer into the voltage rise).
INTERIOR = ("v_gs_th",)
SEARCH = ("corners: the fastest end of the bus, the current, the drive levels and the gate resistances; both ends "
          "of L_loop, L_s, g_fs, the capacitances and the partner's off-level and resistance; v_gs_th at both ends "
          "and its midpoint")
#: Forward drop of the body (or reverse-conduction) diode when the device file gives none [V] (common practice).
_DIODE_DROP = {"si-mosfet": 0.9, "sic-mosfet": 3.0, "gan-hemt": 2.0, "igbt": 1.5}  # igbt: its co-packaged diode
_DIODE_RESISTANCE = 0.02   # ohm, the diode's slope resistance (common practice)
_KNEE_VOLTAGE = 1.0        # V across the channel at the load current when R_ds(on) is not given
_NO_PARTNER_CAPACITANCE = 1e-12
#: A ring whose last swing exceeds the one before by this factor is still growing (a lossless ring holds its
#: swing within the integrator's noise, well below 2 %).
STILL_GROWING = 1.02
_TOLERANCE = 1e-3          # the integrator's relative error per step (peaks within 0.5 % of Radau: see tests)

#: The inputs of the switch under test and of its partner, with the ends the search takes: one end where the
#: direction of the worst case is known (the fastest edge: the highest drive, the lowest resistances), both ends
#: where the simulated figures are not monotone (the oscillation and the ring depend on L_s, g_fs and the
#: capacitances both ways), and the midpoint of the threshold too (INTERIOR).
_OWN_NEEDS = {"v_gs_th": Side.BOTH, "transconductance": Side.MIN, "c_iss": Side.MIN, "c_oss": Side.MIN,
              "gate_drive.on": Side.MAX, "gate_drive.off": Side.MIN, "gate_drive.r_on": Side.MIN,
              "gate_drive.r_off": Side.MIN, "r_g_internal": Side.MIN, "common_source_inductance": Side.MIN}
_PARTNER_NEEDS = {"v_gs_th": Side.MIN, "transconductance": Side.MAX, "c_iss": Side.MIN, "c_oss": Side.MIN,
                  "gate_drive.off": Side.MAX, "gate_drive.r_off": Side.MAX, "r_g_internal": Side.MIN,
                  "common_source_inductance": Side.MIN}
#: Inputs searched at both of their ends whenever both are known (the figures are not monotone in them).
_BOTH_ENDS = ("loop_inductance", "transconductance", "c_iss", "c_oss", "c_rss", "common_source_inductance",
              "gate_drive.off", "gate_drive.r_off")


@dataclass(frozen=True)
class CellRun:
    """The simulation of one switch (under test) with its partner: inputs, corners and measured figures.

    ``grid`` and every array in ``edges`` hold the corners first and the nominal point last; ``missing``
    names what the cell lacks (then nothing was simulated).
    """

    switch: Switch
    partner: Switch | None
    inputs: dict[str, Input]
    grid: dict[str, np.ndarray]
    edges: dict[str, dict[str, np.ndarray]]
    notes: tuple[str, ...]
    missing: tuple[str, ...] = ()

    @property
    def corners(self) -> dict[str, np.ndarray]:
        """The corner grid without the nominal point."""
        return {name: values[:-1] for name, values in self.grid.items()}

    def figure(self, edge: str, name: str) -> np.ndarray:
        """One figure at every corner (the nominal point left out)."""
        return self.edges[edge][name][:-1]


def _optional(switch: Switch, notes: list[str], prefix: str = "") -> dict[str, Input]:
    needs = {}
    if switch.device.c_rss is not None:
        needs["c_rss"] = Side.MIN
    else:
        notes.append(f"{switch.ref}: c_rss (or q_gd) not given: no Miller feedback, the fastest voltage edge")
    for name in ("gate_drive.r_driver", "gate_loop_inductance"):
        interval = switch.gate_drive.r_driver if name == "gate_drive.r_driver" else switch.gate_loop_inductance
        if interval is not None:
            needs[name] = Side.MIN
    return inputs_for(switch, needs, notes, prefix)


def cell_inputs(switch: Switch, design: Design, notes: list[str]) -> dict[str, Input]:
    """Everything the cell simulation of ``switch`` reads, with the fields they come from."""
    inputs = design_inputs(design, {"bus_voltage": Side.MAX, "turn_off_current": Side.MAX,
                                    "loop_inductance": Side.MAX})
    if design.loop_resistance is not None:
        inputs |= design_inputs(design, {"loop_resistance": Side.MIN})
    if design.node_capacitance is not None:
        inputs["node_capacitance"] = Input(design.node_capacitance, "capacitance", Side.MIN,
                                           "commutation_loop.node_capacitance")
    inputs |= inputs_for(switch, _OWN_NEEDS, notes) | _optional(switch, notes)
    if switch.turn_off_di_dt is not None:
        inputs |= inputs_for(switch, {"turn_off_di_dt": Side.BOTH}, notes)
    partner = design.opposite_of(switch)
    if partner is not None:
        inputs |= inputs_for(partner, _PARTNER_NEEDS, notes, OPPOSITE) | _optional(partner, notes, OPPOSITE)
    else:
        notes.append("no opposite switch known (give both switches the same leg): the opposite device is taken "
                     "as a diode with 1 pF and no gate")
    return inputs


def _curve(edge: EdgeModel, name: str, absent: float = 0.0) -> CurveTable:
    curve = getattr(edge.switch.device, name) if edge.switch is not None else None
    if curve is None or not edge.has(name):
        return CurveTable.constant(absent)
    return CurveTable(curve.voltages, curve.values, edge[name])


def _knee(switch: Switch, current, notes: list[str]):
    on_resistance, saturation = switch.device.r_ds_on, switch.device.v_ce_sat
    if on_resistance is not None and on_resistance.value.has_high:
        return on_resistance.value.high
    if saturation is not None and saturation.value is not None and saturation.value.has_high and saturation.i_c:
        return saturation.value.high / saturation.i_c  # an IGBT: the on-state line through V_CE(sat) at I_C
    notes.append(f"{switch.ref}: r_ds_on not given: the channel's linear region is taken to start at "
                 f"{_KNEE_VOLTAGE:g} V at the turn-off current")
    return _KNEE_VOLTAGE / current


def _recovery(switch: Switch | None, partner_edge: EdgeModel, current, notes: list[str]):
    """Lauritzen-Ma lifetime τ = Q_rr/I and transit time T_M = S·t_a/2, t_a = √(2·Q_rr/(a·(1 + S))), with a
    the first-order turn-on di/dt of the switch that turns on: the triangular recovery of the same Q_rr and
    softness at that rate (Mohan, Undeland & Robbins 2003, sec. 20-2) has the same charge and peak."""
    recovery = switch.device.recovery if switch is not None else None
    if recovery is None or recovery.capacitive_only:
        if switch is not None and recovery is None:
            notes.append(f"{switch.ref}: reverse_recovery not given: its diode is taken to recover with no "
                         "stored charge")
        return None, None
    softness = recovery.softness if recovery.softness is not None else 1.0
    charge = recovery.charge.high  # not a corner input: the largest Q_rr, the largest recovery (conservative)
    if recovery.charge.low != charge:
        notes.append(f"{switch.ref}: q_rr taken at its maximum, the largest recovery current and overshoot")
    rate = turn_on_di_dt(partner_edge["v_gs_th"], partner_edge["gate_drive.on"], partner_edge["transconductance"],
                         partner_edge.r_on, partner_edge["c_iss"], partner_edge.shared_source_inductance)
    storage = np.sqrt(2.0 * charge / (rate * (1.0 + softness)))
    return charge / current, softness * storage / 2.0


def _technology_drop(switch: Switch | None) -> float:
    return 1.0 if switch is None else _DIODE_DROP.get(switch.device.technology, 1.0)


def _device(edge: EdgeModel, resistance, level_on, knee) -> CellDevice:
    switch = edge.switch
    shape = np.shape(edge.grid["bus_voltage"])
    full = lambda value: np.broadcast_to(np.asarray(value, dtype=float), shape)  # noqa: E731
    get = lambda name, default=0.0: full(edge[name]) if edge.has(name) else full(default)  # noqa: E731
    return CellDevice(
        v_th=get("v_gs_th"), g_fs=get("transconductance"), r_on=full(knee), c_iss=get("c_iss"),
        c_rss=_curve(edge, "c_rss"), c_oss=_curve(edge, "c_oss"), r_gate=full(resistance),
        l_gate=get("gate_loop_inductance"), v_on=full(level_on), v_off=get("gate_drive.off"),
        l_source=get("common_source_inductance"), shared=full(float(switch.source_connection == "shared")),
        v_f=full(_technology_drop(switch)), r_diode=full(_DIODE_RESISTANCE))


def _no_partner(shape) -> CellDevice:
    full = lambda value: np.full(shape, float(value))  # noqa: E731
    return CellDevice(
        v_th=full(1e3), g_fs=full(0.0), r_on=full(1.0), c_iss=full(_NO_PARTNER_CAPACITANCE),
        c_rss=CurveTable.constant(0.0), c_oss=CurveTable.constant(full(_NO_PARTNER_CAPACITANCE)), r_gate=full(1.0),
        l_gate=full(0.0), v_on=full(0.0), v_off=full(0.0), l_source=full(0.0), shared=full(0.0),
        v_f=full(1.0), r_diode=full(_DIODE_RESISTANCE))


def _turn_off_resistance(own: EdgeModel, current, notes: list[str]):
    """The turn-off gate resistance; with a measured turn_off_di_dt, the resistance at which the first-order
    gate model gives that slope, τ = (g_fs·(V_th − V_off) + I)/|di/dt| = R·C_iss + k·g_fs·L_s."""
    if not own.has("turn_off_di_dt"):
        return own.r_off
    notes.append("turn_off_di_dt given: the turn-off gate resistance is set so that the gate model falls at "
                 "that slope; the simulated slope is shown beside it")
    needed = (own["transconductance"] * (own["v_gs_th"] - own["gate_drive.off"]) + current) / own["turn_off_di_dt"]
    return np.maximum((needed - own["transconductance"] * own.shared_source_inductance) / own["c_iss"], 1e-3)


def cells_for_grid(run_switch: Switch, design: Design, grid: dict, notes: list[str]) -> dict[str, Cell]:
    """The cell of each edge (``turn_off``, ``turn_on``) with ``run_switch`` under test, at every corner of
    ``grid`` (the inputs of :func:`cell_inputs` by name; ``quality_factor``, when present, replaces the design's
    measured Q of the loop per corner)."""
    own = EdgeModel(grid, run_switch)
    partner = design.opposite_of(run_switch)
    other = EdgeModel(grid, partner, OPPOSITE)
    current = grid["turn_off_current"]
    knee = _knee(run_switch, current, notes)
    opposite = _device(other, other.r_off, 0.0, _knee(partner, current, notes)) if partner is not None \
        else _no_partner(current.shape)
    lifetime, transit = _recovery(partner, own, current, notes)
    opposite = dataclasses.replace(opposite, recovery_lifetime=lifetime, recovery_transit=transit)
    damping = _damping(design, grid, own)
    common = {"bus_voltage": grid["bus_voltage"], "load_current": current, "loop_inductance": grid["loop_inductance"],
              "loop_resistance": grid.get("loop_resistance", np.zeros_like(current)), "opposite": opposite,
              "damping_conductance": damping, "node_capacitance": grid.get("node_capacitance", 0.0)}
    tail = _tail(run_switch, current.shape, notes)
    return {"turn_off": Cell(dut=dataclasses.replace(
                _device(own, _turn_off_resistance(own, current, notes), own["gate_drive.on"], knee), **tail), **common),
            "turn_on": Cell(dut=dataclasses.replace(_device(own, own.r_on, own["gate_drive.on"], knee), **tail),
                            **common)}


def _tail(switch: Switch, shape: tuple, notes: list[str]) -> dict:
    """The tail fraction α and time constant τ_t of an IGBT under test (margincheck.physics.switching_cell,
    row (10)); none for other technologies. The largest stated values are the worst case of E_off."""
    tail = switch.device.tail
    if not is_igbt(switch.device.technology):
        return {}
    if tail is None:
        notes.append(f"{switch.ref}: tail not given: the IGBT is simulated without a turn-off tail (E_off too low)")
        return {}
    return {"tail_fraction": np.full(shape, tail.fraction), "tail_time": np.full(shape, tail.time_constant)}


def _damping(design: Design, grid: dict, own: EdgeModel):
    """1/R_p of a measured quality factor: R_p = Q·√(L/C) across the loop inductance (C at the bus voltage)."""
    quality = grid.get("quality_factor", design.loop_quality_factor)
    if quality is None:
        return 0.0
    capacitance = own.c_oss(grid["bus_voltage"]) + grid.get("node_capacitance", 0.0)
    return 1.0 / (quality * np.sqrt(grid["loop_inductance"] / capacitance))


def _searched_side(name: str, item: Input) -> Side:
    """The ends the search takes: both for the inputs of _BOTH_ENDS (where known), else the needed end."""
    both = name.removeprefix(OPPOSITE) in _BOTH_ENDS and item.interval.has_low and item.interval.has_high
    return Side.BOTH if both else item.side


def cell_run(switch: Switch, design: Design) -> CellRun:
    """The cell with ``switch`` under test, simulated once per design (both edges, every corner), and once per
    process for cells that are the same in every value the simulation reads (a batch of variants, a what-if
    that leaves a switch alone, a rating changed between two checks)."""
    if active_sampling() is not None:  # points of a Monte-Carlo or sensitivity pass: never shared
        return design.remembered(("cell", switch.ref), lambda: _cell_run(switch, design))
    return design.remembered(("cell", switch.ref), lambda: _shared_run(switch, design))


_RUNS: dict[tuple, CellRun] = {}
_RUNS_KEPT = 16


def _signature(switch: Switch | None) -> tuple:
    """Everything of a switch that the cell simulation reads besides its toleranced inputs."""
    if switch is None:
        return ()
    device = switch.device
    curves = tuple(None if curve is None else (curve.voltages, curve.values) for curve in (device.c_oss, device.c_rss))
    knee = device.r_ds_on.value if device.r_ds_on is not None else None
    return (switch.ref, switch.source_connection, device.technology, curves, device.recovery, knee, device.notes,
            device.v_ce_sat, device.tail)


def _shared_run(switch: Switch, design: Design) -> CellRun:
    notes: list[str] = []
    inputs = cell_inputs(switch, design, notes)
    key = (tuple((name, item.interval, item.side, item.field) for name, item in inputs.items()), _signature(switch),
           _signature(design.opposite_of(switch)), design.loop_quality_factor)
    if key not in _RUNS:
        if len(_RUNS) >= _RUNS_KEPT:
            _RUNS.pop(next(iter(_RUNS)))
        _RUNS[key] = _cell_run(switch, design)
    return dataclasses.replace(_RUNS[key], switch=switch, partner=design.opposite_of(switch))


def _cell_run(switch: Switch, design: Design) -> CellRun:
    notes: list[str] = list(switch.device.notes)
    inputs = cell_inputs(switch, design, notes)
    partner = design.opposite_of(switch)
    missing = missing_sides({name: item.interval for name, item in inputs.items()},
                            {name: item.side for name, item in inputs.items()},
                            {name: item.field for name, item in inputs.items()})
    if missing:
        return CellRun(switch, partner, inputs, {}, {}, tuple(dict.fromkeys(notes)), tuple(missing))
    intervals: dict[str, Interval] = {name: item.interval for name, item in inputs.items()}
    sampled = active_sampling()
    if sampled is not None:
        corners = sampled.plan.cell_grid(inputs)
    else:
        corners = search_grid(intervals, {name: _searched_side(name, item) for name, item in inputs.items()},
                              INTERIOR)
    nominal = nominal_grid(inputs)
    grid = {name: np.concatenate([corners[name], nominal[name]]) for name in corners}
    cells = cells_for_grid(switch, design, grid, notes)
    with np.errstate(all="ignore"):
        edges = measure_edges(cells, grid["bus_voltage"].size, EnergyWindow(), _TOLERANCE)
    notes.append(f"figures measured on the simulated waveforms; E_on and E_off over the {EnergyWindow().describe()}")
    return CellRun(switch, partner, inputs, grid, edges, tuple(dict.fromkeys(notes)))


def run_notes(run: CellRun, *extra: str) -> str:
    """The run's notes and the corner search, as a finding's note."""
    return "; ".join(dict.fromkeys((*run.notes, f"search: {SEARCH}", *extra)))


def measured(run: CellRun, edge: str, names: dict[str, str]) -> Callable[[dict], dict]:
    """Details for a finding: the named figures of ``edge`` at every corner, with their kinds."""
    return lambda grid: {name: (run.figure(edge, name), kind) for name, kind in names.items()}


def cell_check(run: CellRun, values: np.ndarray, **fields) -> Check:
    """A check over the run's corners whose model is the measured ``values`` (NaN where a corner did not
    finish: not evaluated, never a pass)."""
    fields.setdefault("note", run_notes(run))
    fields.setdefault("out_of_range", _unfinished)
    return Check(inputs=run.inputs, grid=run.corners, model=lambda grid: values, **fields)


def _unfinished(grid: dict, index: int) -> str:
    """Why the simulated edge has no figure at corner ``index``."""
    at = {name: float(values[index]) for name, values in grid.items()}
    plateau = at["v_gs_th"] + at["turn_off_current"] / at["transconductance"]
    if at["gate_drive.off"] >= at["v_gs_th"]:
        return "no turn-off at this corner: the off-level does not fall below the threshold"
    leads = at.get("common_source_inductance", 0.0) + at.get("opposite.common_source_inductance", 0.0)
    if at["loop_inductance"] < leads:
        return (f"the commutation-loop inductance {at['loop_inductance'] * 1e9:.3g} nH is smaller than the "
                f"common-source inductances it contains ({leads * 1e9:.3g} nH)")
    if at["gate_drive.on"] <= plateau:
        return (f"the on-level does not reach the plateau V_th + I/g_fs = {plateau:.3g} V at this corner, so the "
                "switch cannot carry the turn-off current")
    return "the simulated edge does not finish at this corner within the simulated time or the step budget"


def worse(first: Finding, second: Finding) -> Finding:
    """The finding that needs more attention: the worse status, then the smaller margin."""
    return min((first, second), key=attention_rank)
