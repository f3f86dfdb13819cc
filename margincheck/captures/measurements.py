"""Figures of each edge of a measured double-pulse capture, by the definitions used for simulated waveforms.

The definitions are those of ``margincheck.physics.edge_figures`` (called here on one column), taken with a
hysteresis band on every level crossing because measured traces are noisy:

- slopes and transition times between a named level pair of the switched quantity (``LevelPair``: 10-90 %
  by default, 20-80 % selectable): |di/dt| = (high − low)·I/t_f, |dv/dt| = (high − low)·V_bus/t_r...;
- E_on and E_off over a named window (``EnergyWindow``, default 10 %/2 %): E_off from v_ds reaching 10 % of
  V_bus until i_d has fallen to 2 % of I, E_on from i_d reaching 10 % of I until v_ds has fallen to 2 % of
  V_bus, each the maximum of the running integral of v_ds·i_d (Volke & Hornkamp 2012, ch. 3, pp. 122-124,
  Eq. (3.2)); published windows differ, so the window is a parameter and is named in every result;
- the peak of v_ds at turn-off (the vertex of the parabola through the top samples) and its overshoot above
  the bus; the ring after that peak (``ringing.measure_ring``);
- at turn-on, the dip of v_ds while the current rises, measured from v_ds just before the edge (so that the
  opposite diode's forward drop, which sits in both, cancels): ΔV = mean v_ds before − mean v_ds over the
  current's level pair;
- the extremes of both gate voltages over the edge (noise adds to an extreme; they are not smoothed).

The switched current I is the drain current extrapolated to the edge along the on-state slope V_bus/L_load
(the load inductor charging; the on-state drop is neglected) from the middle of the adjacent on-time.

Probe skew: a current probe late by τ shifts i_d against v_ds, and changes E by about τ·∫v_ds·(di_d/dt)dt,
which is ±τ·V_bus·I when v_ds is at the bus while the current moves: tens of per cent of E for τ of a few ns
on a 10 ns edge. Deskew before measuring energies. Slopes, times and the peak are single-trace figures and
do not move; the dip shifts its window by τ and stays right while τ is small against the current rise time.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from margincheck.captures.edges import (
    DoublePulseEdges,
    NotMeasurable,
    WaveformError,
    check_waveforms,
    find_edges,
    segment,
)
from margincheck.captures.ringing import RingFigures, measure_ring
from margincheck.physics import edge_figures as ef

__all__ = ["CROSSING_BAND", "TEN_NINETY", "TWENTY_EIGHTY", "DoublePulseFigures", "EdgeInstants", "GateExtremes",
           "LevelPair", "TurnOffFigures", "TurnOnFigures", "edge_instants", "measure_double_pulse", "measure_edge",
           "no_trace", "rise_crossings"]

Figure = float | NotMeasurable
CROSSING_BAND = 0.05    # hysteresis of level crossings, a fraction of full scale (above a usable capture's noise)
_PLATEAU = (0.3, 0.9)   # the samples of an on- or off-time that give its level: this far from the edge, as
                        # fractions of its length (clear of the edge's ring, and of the other edge)


@dataclass(frozen=True)
class LevelPair:
    """The two levels (fractions of the switched quantity) between which slopes and times are taken."""

    low: float = 0.1
    high: float = 0.9

    def describe(self) -> str:
        """The pair in words, for reports."""
        return f"{self.low:.0%}-{self.high:.0%}"


TEN_NINETY, TWENTY_EIGHTY = LevelPair(0.1, 0.9), LevelPair(0.2, 0.8)


@dataclass(frozen=True)
class GateExtremes:
    """Highest and lowest gate voltages [V] of the device and of the opposite (idle) device over an edge."""

    v_gs_max: Figure
    v_gs_min: Figure
    v_gs_idle_max: Figure
    v_gs_idle_min: Figure


@dataclass(frozen=True)
class TurnOffFigures:
    """One turn-off: instant [s] (gate), switched current [A], peak v_ds and overshoot above the bus [V],
    |di/dt| [A/s] and dv/dt [V/s] between ``levels``, current fall and voltage rise times [s], E_off [J] over
    ``window``, the ring after the peak, and the gate extremes."""

    instant: float
    current: Figure
    peak_v_ds: Figure
    overshoot: Figure
    di_dt: Figure
    dv_dt: Figure
    current_fall_time: Figure
    voltage_rise_time: Figure
    turn_off_energy: Figure
    ring: RingFigures | NotMeasurable
    gate: GateExtremes
    levels: LevelPair
    window: ef.EnergyWindow


@dataclass(frozen=True)
class TurnOnFigures:
    """One turn-on: instant [s] (gate), switched current [A], di/dt [A/s] and |dv/dt| [V/s] between
    ``levels``, current rise and voltage fall times [s], E_on [J] over ``window``, the v_ds dip while the
    current rises [V] and the current peak [A] (reverse recovery of the opposite device), and the gate
    extremes."""

    instant: float
    current: Figure
    di_dt: Figure
    dv_dt: Figure
    current_rise_time: Figure
    voltage_fall_time: Figure
    turn_on_energy: Figure
    voltage_dip: Figure
    peak_current: Figure
    gate: GateExtremes
    levels: LevelPair
    window: ef.EnergyWindow


@dataclass(frozen=True)
class DoublePulseFigures:
    """The edges of one capture and the figures of each (or why an edge could not be measured)."""

    edges: DoublePulseEdges
    first_turn_off: TurnOffFigures | NotMeasurable
    turn_on: TurnOnFigures | NotMeasurable
    turn_off: TurnOffFigures | NotMeasurable


#: The energy window of Volke & Hornkamp (2012), ch. 3: 10 % / 2 %.
_DEFAULT_WINDOW = ef.EnergyWindow()


@dataclass(frozen=True)
class _Edge:
    """The samples of one edge as a one-column ``Waveforms``, with the test's bus voltage and current."""

    waves: ef.Waveforms
    bus_voltage: float
    current: float


def measure_double_pulse(time, v_ds, i_d, v_gs, bus_voltage: float, load_inductance: float, v_gs_idle=None,
                         levels: LevelPair = TEN_NINETY, window: ef.EnergyWindow = _DEFAULT_WINDOW,
                         edge_source: str = "v_gs") -> DoublePulseFigures:
    """Find the edges of a double-pulse capture and measure each.

    Parameters
    ----------
    time : ndarray
        Sample instants [s], strictly increasing (not necessarily uniform), deskewed.
    v_ds, i_d, v_gs : ndarray
        Drain-source voltage [V], drain current [A] and gate-source voltage [V] of the device under test.
    bus_voltage : float
        The test's bus voltage [V].
    load_inductance : float
        The test's load inductance [H] (the on-state current slope V_bus/L_load).
    v_gs_idle : ndarray, optional
        The opposite device's gate-source voltage [V].
    levels : LevelPair
        Levels of slopes and transition times (default 10-90 %).
    window : EnergyWindow
        Integration window of E_on and E_off (default 10 %/2 %).
    edge_source : {"v_gs", "v_ds"}
        The trace the edges are found on.

    Returns
    -------
    DoublePulseFigures
    """
    check_waveforms(time, v_ds=v_ds, i_d=i_d, v_gs=v_gs, v_gs_idle=v_gs_idle)
    if not (bus_voltage > 0 and load_inductance > 0):
        raise WaveformError(f"bus_voltage and load_inductance must be positive, got {bus_voltage} V, "
                            f"{load_inductance} H")
    time, v_ds, i_d, v_gs = (np.asarray(a, dtype=float) for a in (time, v_ds, i_d, v_gs))
    edges = find_edges(time, v_gs if edge_source == "v_gs" else v_ds, edge_source)
    signals = {"v_ds": v_ds, "i_d": i_d, "v_gs": v_gs}
    if v_gs_idle is not None:
        signals["v_gs_idle"] = np.asarray(v_gs_idle, dtype=float)
    slope = bus_voltage / load_inductance
    instants = [edges.first_turn_off, edges.second_turn_on, edges.second_turn_off]
    second_end = time[-1] if isinstance(instants[2], NotMeasurable) else instants[2]   # a pulse cut off by the end
    on_times = [(time[0], instants[0]), (instants[1], second_end), (instants[1], second_end)]
    figures = []
    for instant, on_time, turning_on in zip(instants, on_times, (False, True, False)):
        if isinstance(instant, NotMeasurable):
            figures.append(instant)
            continue
        current = _switched_current(time, i_d, instant, on_time, slope)
        if isinstance(current, NotMeasurable):
            figures.append(current)
            continue
        part = segment(time, edges, instant)
        figures.append(measure_edge(time[part], {name: s[part] for name, s in signals.items()}, bus_voltage,
                                    current, turning_on, levels, window, instant))
    return DoublePulseFigures(edges, *figures)


def measure_edge(time, signals: dict[str, np.ndarray], bus_voltage: float, current: float, turning_on: bool,
                 levels: LevelPair = TEN_NINETY, window: ef.EnergyWindow = _DEFAULT_WINDOW, instant: float = 0.0,
                 ) -> TurnOffFigures | TurnOnFigures:
    """The figures of one edge's samples (``time`` [s]; ``signals`` ``v_ds``, ``i_d``, ``v_gs`` and optionally
    ``v_gs_idle``, one value per sample) switching ``current`` [A] against ``bus_voltage`` [V]: the definitions
    of a capture's edges, also used on simulated waveforms so that both are measured alike."""
    edge = _Edge(ef.Waveforms(np.asarray(time, dtype=float)[:, None],
                              {name: np.asarray(s, dtype=float)[:, None] for name, s in signals.items()}),
                 bus_voltage, current)
    return (_turn_on if turning_on else _turn_off)(edge, instant, levels, window)


def _switched_current(time, i_d, instant: float, on_time, slope: float) -> float | NotMeasurable:
    """The drain current at ``instant`` [A]: i_d − slope·(t − instant) over the middle of the on-time, its
    median (the load inductor charges at ``slope`` = V_bus/L_load while the device is on)."""
    start, end = on_time
    length = end - start
    from_edge = (time - start) / length if instant == start else (end - time) / length
    inside = (from_edge >= _PLATEAU[0]) & (from_edge <= _PLATEAU[1])
    if np.count_nonzero(inside) < 3:
        return NotMeasurable("too few samples in the on-time to read the switched current")
    current = float(np.median(i_d[inside] - slope * (time[inside] - instant)))
    return current if current > 0 else NotMeasurable(f"no positive drain current in the on-time ({current:.3g} A)")


def _figure(value, why: str) -> Figure:
    """A finite value as a float, anything else as NotMeasurable(why)."""
    value = float(np.asarray(value).reshape(-1)[0])
    return value if np.isfinite(value) else NotMeasurable(why)


def _slope_and_time(edge: _Edge, name: str, full_scale: float, rising: bool, levels: LevelPair):
    """|slope| [unit/s] and transition time [s] of signal ``name`` between ``levels`` of ``full_scale``."""
    duration = ef.transition(edge.waves, edge.waves[name], full_scale, rising, levels.low, levels.high,
                             hysteresis=CROSSING_BAND * full_scale)
    why = f"{name} does not cross both {levels.describe()} levels of {full_scale:.4g} in this edge"
    with np.errstate(divide="ignore", invalid="ignore"):      # both levels inside one step: no slope
        slope = (levels.high - levels.low) * full_scale / duration
    return _figure(slope, why), _figure(duration, why)


def _window_signals(edge: _Edge, turning_on: bool) -> tuple[str, float, str, float]:
    """The signal whose rise opens the energy window and its full scale, then the one whose fall closes it."""
    if turning_on:
        return "i_d", edge.current, "v_ds", edge.bus_voltage
    return "v_ds", edge.bus_voltage, "i_d", edge.current


def _window_start(edge: _Edge, turning_on: bool, window: ef.EnergyWindow) -> ef.Crossing:
    start_name, start_scale, _, _ = _window_signals(edge, turning_on)
    return ef.crossing(edge.waves, edge.waves[start_name], window.start * start_scale, rising=True,
                       hysteresis=CROSSING_BAND * start_scale)


def _energy(edge: _Edge, turning_on: bool, window: ef.EnergyWindow) -> Figure:
    waves = edge.waves
    start_name, _, end_name, end_scale = _window_signals(edge, turning_on)
    energy = ef.switching_energy(waves, waves["v_ds"] * waves["i_d"], _window_start(edge, turning_on, window),
                                 waves[end_name], window.end * end_scale, running_maximum=True)
    return _figure(energy, f"{start_name} never reaches {window.start:.0%} or {end_name} never falls to "
                           f"{window.end:.0%} in this edge ({window.describe()})")


def no_trace(name: str) -> NotMeasurable:
    """The figure of a signal the capture does not hold (e.g. ``v_gs_idle`` when the idle gate was not probed)."""
    return NotMeasurable(f"no {name} trace in the capture")


def _gate_extremes(edge: _Edge) -> GateExtremes:
    waves = edge.waves
    extremes = {}
    for name in ("v_gs", "v_gs_idle"):
        if name in waves.signals:
            extremes[name] = (float(ef.crest(waves, waves[name])[0]), float(-ef.crest(waves, -waves[name])[0]))
        else:
            missing = no_trace(name)
            extremes[name] = (missing, missing)
    return GateExtremes(*extremes["v_gs"], *extremes["v_gs_idle"])


def _turn_off(edge: _Edge, instant: float, levels: LevelPair, window: ef.EnergyWindow) -> TurnOffFigures:
    waves, bus, current = edge.waves, edge.bus_voltage, edge.current
    di_dt, fall = _slope_and_time(edge, "i_d", current, False, levels)
    dv_dt, rise = _slope_and_time(edge, "v_ds", bus, True, levels)
    peak = float(ef.crest(waves, waves["v_ds"])[0])
    top = int(np.argmax(waves["v_ds"][:, 0]))
    return TurnOffFigures(
        instant=instant, current=current, peak_v_ds=peak, overshoot=peak - bus, di_dt=di_dt, dv_dt=dv_dt,
        current_fall_time=fall, voltage_rise_time=rise,
        turn_off_energy=_energy(edge, False, window),
        ring=measure_ring(waves.time[top:, 0], waves["v_ds"][top:, 0]), gate=_gate_extremes(edge),
        levels=levels, window=window)


def _turn_on(edge: _Edge, instant: float, levels: LevelPair, window: ef.EnergyWindow) -> TurnOnFigures:
    waves, bus, current = edge.waves, edge.bus_voltage, edge.current
    di_dt, rise = _slope_and_time(edge, "i_d", current, True, levels)
    dv_dt, fall = _slope_and_time(edge, "v_ds", bus, False, levels)
    return TurnOnFigures(
        instant=instant, current=current, di_dt=di_dt, dv_dt=dv_dt, current_rise_time=rise,
        voltage_fall_time=fall, turn_on_energy=_energy(edge, True, window),
        voltage_dip=_voltage_dip(edge, levels), peak_current=float(ef.crest(waves, waves["i_d"])[0]),
        gate=_gate_extremes(edge), levels=levels, window=window)


def rise_crossings(waves: ef.Waveforms, signal: np.ndarray, full_scale: float, levels: LevelPair,
                   ) -> tuple[float, float]:
    """Instants [s] where a rising one-column ``signal`` crosses the low and then the high level of
    ``full_scale`` (with the crossing band; NaN where it does not)."""
    band = CROSSING_BAND * full_scale
    low = ef.crossing(waves, signal, levels.low * full_scale, True, hysteresis=band).at(waves.time)
    high = ef.crossing(waves, signal, levels.high * full_scale, True, after=low, hysteresis=band)
    return float(low[0]), float(high.at(waves.time)[0])


def _voltage_dip(edge: _Edge, levels: LevelPair) -> Figure:
    """Mean v_ds before the edge minus its mean while i_d is between ``levels`` of the current [V]."""
    waves, current = edge.waves, edge.current
    time, v_ds = waves.time[:, 0], waves["v_ds"][:, 0]
    start, end = rise_crossings(waves, waves["i_d"], current, levels)
    # the off-state level: from 30 % into the segment (half-way into the off-time) until one rise time ahead of
    # the low-level crossing, clear of a current that starts gradually (and ahead of the gate's edge instant)
    before = (time >= time[0] + _PLATEAU[0] * (start - time[0])) & (time <= start - (end - start))
    rising = (time >= start) & (time <= end)
    if not (np.isfinite(start) and np.isfinite(end)) or np.count_nonzero(rising) < 3 or not before.any():
        return NotMeasurable(f"i_d does not rise through {levels.describe()} of {current:.4g} A after the "
                             "off-state, or too few samples in the rise")
    return float(np.mean(v_ds[before]) - np.mean(v_ds[rising]))   # means: a median of 8-bit codes is a code


def _edge_samples(time, signals: dict, edges: DoublePulseEdges, instant: float, bus_voltage: float,
                  current: float) -> _Edge:
    """The samples of ``signals`` in the segment of the edge at ``instant``."""
    part = segment(time, edges, instant)
    return _Edge(ef.Waveforms(time[part, None], {name: s[part, None] for name, s in signals.items()}),
                 bus_voltage, current)


@dataclass(frozen=True)
class EdgeInstants:
    """Where one measured edge's figures were taken [s]: the start and end of its energy window (NaN where the
    capture does not cross a limit) and the sample of its peak (v_ds at turn-off, i_d at turn-on)."""

    window_start: float
    window_end: float
    peak: float


def edge_instants(time, v_ds, i_d, edges: DoublePulseEdges, figures: TurnOffFigures | TurnOnFigures,
                  bus_voltage: float) -> EdgeInstants:
    """The instants at which ``measure_double_pulse`` took the energy window and the peak of one edge.

    Parameters
    ----------
    time, v_ds, i_d : ndarray
        The capture given to ``measure_double_pulse`` [s], [V], [A].
    edges : DoublePulseEdges
        Its edges (``DoublePulseFigures.edges``).
    figures : TurnOffFigures or TurnOnFigures
        The figures of the edge.
    bus_voltage : float
        The test's bus voltage [V].

    Returns
    -------
    EdgeInstants
    """
    time, v_ds, i_d = (np.asarray(a, dtype=float) for a in (time, v_ds, i_d))
    edge = _edge_samples(time, {"v_ds": v_ds, "i_d": i_d}, edges, figures.instant, bus_voltage, figures.current)
    turning_on = isinstance(figures, TurnOnFigures)
    start = _window_start(edge, turning_on, figures.window)
    _, _, end_name, end_scale = _window_signals(edge, turning_on)
    end = ef.energy_window_end(edge.waves, start, edge.waves[end_name], figures.window.end * end_scale)
    peak = int(np.argmax(edge.waves["i_d" if turning_on else "v_ds"][:, 0]))
    return EdgeInstants(float(start.at(edge.waves.time)[0]), float(end.at(edge.waves.time)[0]),
                        float(edge.waves.time[peak, 0]))
