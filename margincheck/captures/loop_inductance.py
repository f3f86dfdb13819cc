"""Commutation-loop inductance of a double-pulse test from its capture, two ways side by side, and the
common-source inductance where the gate voltage at the die can be inferred.

- From the ring after turn-off: the loop inductance L and the device's C_oss at the bus voltage form the ring,
  L = 1/((2π·f_n)²·C_oss), f_n the ring's undamped frequency, and the loop's series resistance follows from the
  damping ratio, R = 2ζ·√(L/C_oss) (series R-L-C). Exact for a linear C_oss; a real C_oss falls with voltage,
  so the ring (which swings around the bus voltage) sees a slightly different mean capacitance.
- From the turn-on dip: while the current rises, v_ds falls below its off-state value by L·di/dt, L = ΔV/(di/dt).
  ΔV is taken from v_ds just before the edge (the opposite diode's forward drop is in both and cancels); it
  still holds R·i (the loop's resistive drop at the current reached), the change of the diode's drop as its
  current falls, and any ring of L with C_oss excited by the start of the current rise: the method reads high
  by about R·I/2/(L·di/dt) at the 10-90 % levels.

The two rest on different quantities (a frequency and a device capacitance; a voltage and a slope), so their
disagreement is shown, not resolved. No published comparison of the two methods was found; the comparison and
its tolerance here are our own, checked against an independent circuit simulation in the tests.

References
----------
.. [1] W. T. Thomson, M. D. Dahleh, *Theory of Vibration with Applications*, 5th ed., Prentice Hall, 1998,
   sec. 2.6 (damped free vibration, logarithmic decrement) - from memory.
.. [2] C. R. Paul, *Inductance: Loop and Partial*, Wiley-IEEE Press, 2010, ch. 1 (v = L·di/dt of a loop) -
   from memory.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from margincheck.captures.edges import DoublePulseEdges, NotMeasurable, segment
from margincheck.captures.measurements import Figure, TurnOffFigures, TurnOnFigures, rise_crossings
from margincheck.physics import edge_figures as ef

_GAP = 0.5     # the line before the current rise ends this many rise times before its extrapolated start (a
               # current that starts gradually would otherwise tilt the line with its own L_s·di/dt)

__all__ = ["LoopInductance", "common_source_inductance", "compare_loop_inductance", "dip_inductance",
           "ring_inductance", "ring_resistance"]


@dataclass(frozen=True)
class LoopInductance:
    """Loop inductance from the ring [H] and from the dip [H], their disagreement (dip − ring)/ring, and the
    loop's series resistance from the ring's damping [ohm]."""

    from_ring: Figure
    from_dip: Figure
    disagreement: Figure
    ring_resistance: Figure
    c_oss: float


def ring_inductance(natural_frequency, c_oss):
    """Loop inductance from the ring frequency and C_oss.

    Parameters
    ----------
    natural_frequency : float or ndarray
        Undamped ring frequency f_n [Hz].
    c_oss : float or ndarray
        The device's output capacitance at the bus voltage [F].

    Returns
    -------
    float or ndarray
        L = 1/((2π·f_n)²·C_oss) [H].

    Examples
    --------
    >>> round(float(ring_inductance(100e6, 100e-12)) * 1e9, 2)
    25.33
    """
    return 1.0 / ((2.0 * np.pi * np.asarray(natural_frequency)) ** 2 * np.asarray(c_oss))   # ω_n² = 1/(L·C)


def ring_resistance(damping_ratio, loop_inductance, c_oss):
    """Series resistance of the ring's R-L-C loop, R = 2ζ·√(L/C_oss) [ohm] (ζ = (R/2)·√(C/L) [1])."""
    return 2.0 * np.asarray(damping_ratio) * np.sqrt(np.asarray(loop_inductance) / np.asarray(c_oss))


def dip_inductance(voltage_dip, di_dt):
    """Loop inductance from the turn-on dip, L = ΔV/(di/dt) [H] ([2]; ``voltage_dip`` [V], ``di_dt`` [A/s])."""
    return np.asarray(voltage_dip) / np.asarray(di_dt)


def compare_loop_inductance(turn_off: TurnOffFigures | NotMeasurable, turn_on: TurnOnFigures | NotMeasurable,
                            c_oss: float) -> LoopInductance:
    """Both loop-inductance estimates of one capture, side by side.

    Parameters
    ----------
    turn_off : TurnOffFigures or NotMeasurable
        The turn-off whose ring gives the frequency and damping.
    turn_on : TurnOnFigures or NotMeasurable
        The turn-on whose dip and di/dt give the second estimate.
    c_oss : float
        The device's C_oss at the bus voltage [F] (from its capacitance curve).

    Returns
    -------
    LoopInductance
    """
    from_ring, resistance = _from_ring(turn_off, c_oss)
    from_dip = _from_dip(turn_on)
    if isinstance(from_ring, NotMeasurable) or isinstance(from_dip, NotMeasurable):
        disagreement = NotMeasurable("needs both estimates")
    else:
        disagreement = (from_dip - from_ring) / from_ring
    return LoopInductance(from_ring, from_dip, disagreement, resistance, c_oss)


def _from_ring(turn_off, c_oss: float) -> tuple[Figure, Figure]:
    if isinstance(turn_off, NotMeasurable):
        return turn_off, turn_off
    ring = turn_off.ring
    if isinstance(ring, NotMeasurable):
        return ring, ring
    inductance = float(ring_inductance(ring.natural_frequency, c_oss))
    return inductance, float(ring_resistance(ring.damping_ratio, inductance, c_oss))


def _from_dip(turn_on) -> Figure:
    if isinstance(turn_on, NotMeasurable):
        return turn_on
    for figure in (turn_on.voltage_dip, turn_on.di_dt):
        if isinstance(figure, NotMeasurable):
            return figure
    if turn_on.voltage_dip <= 0:
        return NotMeasurable(f"v_ds does not dip while the current rises ({turn_on.voltage_dip:.3g} V)")
    return float(dip_inductance(turn_on.voltage_dip, turn_on.di_dt))


def common_source_inductance(time, v_gs, i_d, edges: DoublePulseEdges, turn_on: TurnOnFigures | NotMeasurable,
                             ) -> Figure:
    """Common-source inductance from the rise of the measured gate voltage while the drain current rises.

    Parameters
    ----------
    time, v_gs, i_d : ndarray
        The capture: sample instants [s], gate-source voltage [V] and drain current [A].
    edges : DoublePulseEdges
        Its edges (the turn-on's samples are those of ``segment``).
    turn_on : TurnOnFigures or NotMeasurable
        The turn-on's figures (its switched current, levels and di/dt).

    Returns
    -------
    float or NotMeasurable
        L_s = Δv_gs/(di/dt) [H].

    Notes
    -----
    Our own method (none published was found). Assumptions: v_gs is measured between the gate pin and the
    power-source pin, so that L_s carries the drain current between the measuring point and the die and
    v_gs = v_gs,die + L_s·di_d/dt; over the current rise the die's gate voltage goes on along the straight
    line it followed during one rise time ending half a rise time before the current started (gate charging
    through R_g away from the plateau, little Miller current since v_ds moves only by the dip); skew between
    v_gs and i_d is small against the rise time. Δv_gs is the median of v_gs minus that line between the
    current's levels. A gate measured at a Kelvin source shows no step: then L_s is not measurable here.
    """
    if isinstance(turn_on, NotMeasurable) or isinstance(turn_on.di_dt, NotMeasurable):
        return turn_on if isinstance(turn_on, NotMeasurable) else turn_on.di_dt
    part = segment(np.asarray(time, float), edges, turn_on.instant)
    time, v_gs = np.asarray(time, float)[part], np.asarray(v_gs, float)[part]
    waves = ef.Waveforms(time[:, None], {"i_d": np.asarray(i_d, float)[part, None]})
    levels = turn_on.levels
    low, high = rise_crossings(waves, waves["i_d"], turn_on.current, levels)
    rise = high - low
    started = low - levels.low / (levels.high - levels.low) * rise     # the current's start, extrapolated
    before = (time >= started - (1.0 + _GAP) * rise) & (time <= started - _GAP * rise)
    during = (time >= low) & (time <= high)
    if not np.isfinite(rise) or np.count_nonzero(before) < 3 or np.count_nonzero(during) < 3:
        return NotMeasurable("too few samples before or during the current rise to read the gate step")
    line = np.polyfit(time[before], v_gs[before], 1)
    step = float(np.median(v_gs[during] - np.polyval(line, time[during])))
    if step <= 0:
        return NotMeasurable(f"no rise of v_gs while the current rises ({step:.3g} V): gate measured at a "
                             "Kelvin source, or the die voltage is not inferable")
    return step / turn_on.di_dt
