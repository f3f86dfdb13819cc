"""Both edges of the switch under test, simulated and measured at every corner: the figures every transient
rule reads.

For each edge the simulated time covers the gate delay, the voltage and current transitions (first-order
estimates, one and a half times), five periods of the loop ring and, for an IGBT's turn-off, five tail
time constants (the tail then is below 1 % of its start, inside the energy window's end), with at most a
tenth of a ring period per step; crests are the vertex of the parabola through the three highest samples.
Corners are simulated in chunks so that the stored waveforms stay small.

The parasitic-oscillation screen linearises the cell where the channel current is half-way through its
transition (margincheck.physics.oscillation) and weighs the fastest-growing mode over the time the channel
spends between 90 % and 10 % of the current (t_active).
"""

from __future__ import annotations

import dataclasses

import numpy as np

from margincheck.physics import edge_figures as ef
from margincheck.physics.oscillation import build_up, growing_mode
from margincheck.physics.switching_cell import (
    I_TAIL,
    STATES,
    V_DS,
    V_GS,
    Cell,
    CellDevice,
    CellEquations,
    CurveTable,
    cell_at,
    channel_current,
    simulate_edge,
)

__all__ = ["measure_edges", "ring_period", "simulated_time"]

_CHUNK = 256
_RING_PERIODS = 5
_STEPS_PER_RING = 10
_BLOCKING = 0.1  # the idle device blocks when its voltage is above this fraction of the bus
_SIGNIFICANT = 0.01  # a ring whose swing at the end is below this fraction of the bus has died out
_TAIL_TIME_CONSTANTS = 5


def ring_period(cell: Cell) -> np.ndarray:
    """2π·√(L_loop·(C_oss(V_bus) + C_x)), the period of the loop ring after turn-off [s]."""
    node = cell.dut.c_oss.capacitance(cell.bus_voltage) + cell.node_capacitance
    return 2.0 * np.pi * np.sqrt(cell.loop_inductance * node)


def simulated_time(cell: Cell, edge: str) -> np.ndarray:
    """How long to simulate an edge [s]: one and a half times the first-order delay and transitions plus five
    ring periods (NaN where the gate cannot make the edge: an off-level not below the threshold, an on-level
    not above the plateau)."""
    dut, bus, current = cell.dut, cell.bus_voltage, cell.load_current
    tau = dut.r_gate * dut.c_iss
    feedback = tau + dut.shared * dut.g_fs * dut.l_source
    plateau = dut.v_th + current / dut.g_fs
    miller_charge = dut.c_rss.charge(bus)
    node_charge = dut.c_oss.charge(bus) + cell.opposite.c_oss.charge(bus) + cell.node_capacitance * bus
    with np.errstate(divide="ignore", invalid="ignore"):
        if edge == "turn_off":
            delay = tau * np.log((dut.v_on - dut.v_off) / (plateau - dut.v_off))
            voltage = np.maximum(miller_charge * dut.r_gate / (plateau - dut.v_off), node_charge / current)
            current_time = feedback * np.log((plateau - dut.v_off) / (dut.v_th - dut.v_off))
            settling = 0.0 if dut.tail_time is None else _TAIL_TIME_CONSTANTS * dut.tail_time / 1.5
        else:
            delay = tau * np.log((dut.v_on - dut.v_off) / (dut.v_on - dut.v_th))
            voltage = miller_charge * dut.r_gate / (dut.v_on - plateau)
            current_time = feedback * np.log((dut.v_on - dut.v_th) / (dut.v_on - plateau))
            transit = cell.opposite.recovery_transit
            settling = 0.0 if transit is None else 6.0 * transit
        total = 1.5 * (delay + voltage + current_time + settling) + _RING_PERIODS * ring_period(cell)
    return np.where(np.isfinite(total) & (total > 0), total, np.nan)


_DEFAULT_WINDOW = ef.EnergyWindow()


def measure_edges(cells: dict[str, Cell], corners: int, window: ef.EnergyWindow = _DEFAULT_WINDOW,
                  relative_tolerance: float = 1e-3) -> dict[str, dict[str, np.ndarray]]:
    """Simulate and measure each edge (``cells``: the cell of each edge, ``turn_off`` and/or ``turn_on``, which
    differ in the gate resistance) over ``corners``: ``{edge: {figure: array}}``.

    Each edge is simulated once per distinct set of the values its cell holds: corners that differ only in an
    input the edge does not read (the turn-off resistance for a turn-on) share one simulation.
    """
    results = {}
    for edge, cell in cells.items():
        distinct, inverse = _distinct_corners(cell, corners)
        figures = _measure_chunks(cell_at(cell, distinct, corners), distinct.size, edge, window, relative_tolerance)
        results[edge] = {name: values[inverse] for name, values in figures.items()}
    return results


def _distinct_corners(cell: Cell, corners: int) -> tuple[np.ndarray, np.ndarray]:
    """The first corner of each distinct set of cell values, and for every corner the index of its set."""
    values = np.stack(_cell_values(cell, corners), axis=1)
    _, first, inverse = np.unique(values, axis=0, return_index=True, return_inverse=True)
    return first, inverse.reshape(-1)


def _cell_values(value, corners: int) -> list[np.ndarray]:
    """Every per-corner value of a cell, device or capacitance curve, each spread over ``corners``."""
    if isinstance(value, CurveTable):
        return _cell_values(value.scale, corners)
    if isinstance(value, (Cell, CellDevice)):
        return [column for item in dataclasses.fields(value) for column in _cell_values(getattr(value, item.name),
                                                                                         corners)]
    if value is None:
        return []
    return [np.broadcast_to(np.asarray(value, dtype=float), (corners,))]


def _measure_chunks(cell: Cell, corners: int, edge: str, window: ef.EnergyWindow, relative_tolerance: float) -> dict:
    """One edge over ``corners`` in chunks of about _CHUNK corners (the stored waveforms stay small)."""
    bounds = np.linspace(0, corners, max(1, round(corners / _CHUNK)) + 1).astype(int)
    parts = [_measure_edge(cell_at(cell, slice(start, end), corners), edge, window, relative_tolerance)
             for start, end in zip(bounds[:-1], bounds[1:])]
    return {name: np.concatenate([part[name] for part in parts]) for name in parts[0]}


def _measure_edge(cell: Cell, edge: str, window: ef.EnergyWindow, relative_tolerance: float) -> dict:
    end = simulated_time(cell, edge)
    possible = np.isfinite(end)
    end = np.where(possible, end, 0.0)
    trajectory = simulate_edge(cell, edge, end, ring_period(cell) / _STEPS_PER_RING, relative_tolerance)
    state = trajectory.state
    i_ch, _, _ = channel_current(cell.dut, state[..., V_GS], state[..., V_DS])
    # the device's own conduction current: the channel's, and an IGBT's bipolar (tail) current
    waves = ef.Waveforms(trajectory.time, {name: state[..., index] for index, name in enumerate(STATES)}
                         | {"i_ch": i_ch + state[..., I_TAIL]})
    figures = (_turn_off if edge == "turn_off" else _turn_on)(cell, waves, window)
    figures |= _idle_gate(cell, waves) | _oscillation(cell, edge, waves, state)
    figures["edge_time"] = waves.time[-1]   # the simulated span: every gate excursion of the edge lies inside it
    completed = trajectory.completed & possible
    return {name: np.where(completed, values, np.nan) for name, values in figures.items()} | {
        "completed": completed.astype(float)}


def _turn_off(cell: Cell, waves: ef.Waveforms, window: ef.EnergyWindow) -> dict:
    bus, current = cell.bus_voltage, cell.load_current
    v_ds, i_d = waves["v_ds"], waves["i_L"]
    fall, rise = ef.transition(waves, i_d, current, rising=False), ef.transition(waves, v_ds, bus, rising=True)
    start = ef.crossing(waves, v_ds, window.start * bus, rising=True)
    frequency, quality = ef.ring_after_peak(waves, v_ds - bus)
    return {
        "peak_voltage": ef.crest(waves, v_ds), "di_dt_max": ef.largest_slope(waves, i_d, -1.0),
        "di_dt_10_90": 0.8 * current / fall, "current_fall_time": fall, "voltage_rise_time": rise,
        "dv_dt_max": ef.largest_slope(waves, v_ds, 1.0), "dv_dt_10_90": 0.8 * bus / rise,
        "turn_off_energy": ef.switching_energy(waves, v_ds * i_d, start, _window_current(cell, waves),
                                               window.end * current),
        "ring_frequency": frequency, "ring_quality": quality, "gate_extreme": -ef.crest(waves, -waves["v_gs"]),
        "late_growth": ef.late_growth(waves, v_ds, _SIGNIFICANT * bus),
    }


def _window_current(cell: Cell, waves: ef.Waveforms) -> np.ndarray:
    """The current whose fall to the window's end level ends E_off: the terminal current, or for an IGBT its own
    conduction current (channel and tail), which the loop's ring would otherwise cut short while the tail flows."""
    return waves["i_L"] if cell.dut.tail_time is None else waves["i_ch"]


def _turn_on(cell: Cell, waves: ef.Waveforms, window: ef.EnergyWindow) -> dict:
    bus, current = cell.bus_voltage, cell.load_current
    v_ds, i_d = waves["v_ds"], waves["i_L"]
    rise, fall = ef.transition(waves, i_d, current, rising=True), ef.transition(waves, v_ds, bus, rising=False)
    start = ef.crossing(waves, i_d, window.start * current, rising=True)
    return {
        "peak_opposite_voltage": ef.crest(waves, waves["v_o"]), "di_dt_max": ef.largest_slope(waves, i_d, 1.0),
        "di_dt_10_90": 0.8 * current / rise, "current_rise_time": rise, "voltage_fall_time": fall,
        "dv_dt_max": ef.largest_slope(waves, v_ds, -1.0), "dv_dt_10_90": 0.8 * bus / fall,
        "turn_on_energy": ef.switching_energy(waves, v_ds * i_d, start, v_ds, window.end * bus),
        "peak_reverse_current": i_d.max(axis=0) - current, "gate_extreme": ef.crest(waves, waves["v_gs"]),
        "late_growth": ef.late_growth(waves, waves["v_o"], _SIGNIFICANT * bus),
    }


def _idle_gate(cell: Cell, waves: ef.Waveforms) -> dict:
    """The opposite (idle) device's gate: its extremes, and its highest level while it blocks voltage (where
    a channel that turns on would short the bus)."""
    v_go = waves["v_go"]
    blocking = waves["v_o"] > _BLOCKING * cell.bus_voltage
    return {"idle_gate_max": ef.crest(waves, v_go), "idle_gate_min": -ef.crest(waves, -v_go),
            "idle_gate_blocking_max": np.where(blocking, v_go, -np.inf).max(axis=0)}


def _oscillation(cell: Cell, edge: str, waves: ef.Waveforms, state: np.ndarray) -> dict:
    """Growth of the least damped mode half-way through the current transition, and its build-up."""
    rising = edge == "turn_on"
    half = ef.crossing(waves, waves["i_ch"], 0.5 * cell.load_current, rising=rising)
    point = np.stack([half.at(state[..., index]) for index in range(len(STATES))], axis=-1)
    point = np.where(half.found[:, None], point, np.nan)
    usable = np.isfinite(point).all(axis=1)
    equations = CellEquations(cell, cell.dut.v_on if rising else cell.dut.v_off)
    safe_point = np.where(usable[:, None], point, 0.0)
    _, capacitance = equations.charges(safe_point)
    _, jacobian = equations.currents(safe_point, np.zeros(point.shape[0]))
    rate, frequency = growing_mode(capacitance, jacobian)
    active = ef.transition(waves, waves["i_ch"], cell.load_current, rising=rising)
    rate = np.where(usable, rate, np.nan)
    with np.errstate(divide="ignore"):
        growth_time = np.where(rate > 0, 1.0 / rate, np.inf)
    return {"growth_rate": rate, "growth_time": np.where(usable, growth_time, np.nan),
            "mode_frequency": np.where(usable, frequency, np.nan), "active_time": active,
            "build_up": build_up(np.where(np.isfinite(rate), rate, 0.0), active)}

