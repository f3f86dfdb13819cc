"""Switching figures measured from simulated waveforms, by the definitions used for double-pulse measurements.

Every figure is taken from the samples of one corner (arrays over corners), as an oscilloscope would:

- transition times between the 10 % and 90 % points: t_rv and t_fi at turn-off (v_ds rising, i_d falling),
  t_ri and t_fv at turn-on; the 10-90 % slopes are 0.8·V_bus/t_rv, 0.8·I/t_fi...;
- the largest slopes |di/dt| and |dv/dt| anywhere in the edge (the ring included);
- the switching energies ∫v_ds·i_d dt over the window of Volke and Hornkamp: E_off from v_ds reaching 10 % of
  V_bus until i_d has fallen to 2 % of I, E_on from i_d reaching 10 % of I until v_ds has fallen to 2 % of
  V_bus (the window is a parameter, ``EnergyWindow``);
- the ring after turn-off: the frequency from the first two crests after the peak and the damping from their
  logarithmic decrement δ = ln(x1/x2), ζ = δ/√(4π² + δ²), Q = 1/(2ζ).

A figure whose points the waveform never reaches (an edge that does not finish in the simulated time) is NaN.

References
----------
.. [1] A. Volke, M. Hornkamp, *IGBT Modules: Technologies, Driver and Application*, 2nd ed.,
   2012, ch. 3, pp. 122-124 (integration limits of E_on and E_off, Eq. (3.2)).
.. [2] W. T. Thomson, M. D. Dahleh, *Theory of Vibration with Applications*, 5th ed., Prentice Hall, 1998,
   sec. 2.6 (logarithmic decrement) - from memory.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

__all__ = ["EnergyWindow", "Waveforms", "crest", "crossing", "energy_window_end", "ring_after_peak", "switching_energy",
           "transition"]


@dataclass(frozen=True)
class EnergyWindow:
    """Integration limits of E_on and E_off as fractions: start at ``start`` of the rising quantity, end when
    the falling one is down to ``end`` (default 10 % / 2 %, Volke & Hornkamp 2012, ch. 3)."""

    start: float = 0.10
    end: float = 0.02

    def describe(self) -> str:
        """The window in words, for reports."""
        return f"{self.start:.0%} / {self.end:.0%} window (Volke & Hornkamp, IGBT Modules, 2nd ed. 2012, ch. 3)"


@dataclass(frozen=True)
class Waveforms:
    """Samples (samples, corners) of one edge: time [s] and any named signals."""

    time: np.ndarray
    signals: dict[str, np.ndarray]

    def __getitem__(self, name: str) -> np.ndarray:
        return self.signals[name]


@dataclass(frozen=True)
class Crossing:
    """Where a signal first crosses a level: sample index k and fraction toward k + 1, per corner."""

    index: np.ndarray
    fraction: np.ndarray
    found: np.ndarray

    def at(self, signal: np.ndarray) -> np.ndarray:
        """``signal`` interpolated at the crossing (NaN where there is none)."""
        columns = np.arange(signal.shape[1])
        before = signal[self.index, columns]
        after = signal[np.minimum(self.index + 1, signal.shape[0] - 1), columns]
        return np.where(self.found, before + self.fraction * (after - before), np.nan)


def crossing(waves: Waveforms, signal: np.ndarray, level, rising: bool, after=None, hysteresis=0.0) -> Crossing:
    """First crossing of ``level`` (per corner) by ``signal``, upward or downward, at or after time ``after``.

    With a ``hysteresis`` h > 0 (measured, noisy waveforms) a crossing counts only once the signal goes on to
    reach level + h (rising) or level − h (falling); the answer is the last crossing of ``level`` before that
    sample, so noise that flickers across the level ahead of the edge does not move it."""
    level = np.asarray(level, dtype=float)
    if signal.shape[0] < 2:   # nothing was simulated (no corner could start)
        nowhere = np.zeros(signal.shape[1], dtype=int)
        return Crossing(nowhere, np.zeros(signal.shape[1]), np.zeros(signal.shape[1], dtype=bool))
    below, above = signal[:-1], signal[1:]
    crosses = (below < level) & (above >= level) if rising else (below > level) & (above <= level)
    if after is not None:
        crosses &= waves.time[1:] >= np.where(np.isfinite(after), after, np.inf)
    if np.any(hysteresis):
        found, index = _confirmed_crossing(crosses, above >= level + hysteresis if rising
                                           else above <= level - hysteresis)
    else:
        found, index = crosses.any(axis=0), np.argmax(crosses, axis=0)
    columns = np.arange(signal.shape[1])
    step = signal[index + 1, columns] - signal[index, columns]
    with np.errstate(divide="ignore", invalid="ignore"):
        fraction = np.where(step != 0.0, (level - signal[index, columns]) / step, 0.0)
    return Crossing(index, np.clip(fraction, 0.0, 1.0), found)


def _confirmed_crossing(crosses: np.ndarray, beyond: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """The last crossing (per corner) at or before the first sample ``beyond`` the hysteresis band that
    follows any crossing: whether there is one, and its step index."""
    confirmed = beyond & (np.cumsum(crosses, axis=0) > 0)
    found = confirmed.any(axis=0)
    steps = np.arange(crosses.shape[0])[:, None]
    candidates = crosses & (steps <= np.argmax(confirmed, axis=0))
    return found, np.where(candidates, steps, -1).max(axis=0).clip(min=0)


def transition(waves: Waveforms, signal: np.ndarray, full_scale, rising: bool, low: float = 0.1,
               high: float = 0.9, hysteresis=0.0) -> np.ndarray:
    """Time between the ``low`` and ``high`` points of a rising (or the ``high`` and ``low`` points of a
    falling) signal of amplitude ``full_scale`` [s] (``hysteresis`` as in ``crossing``)."""
    first, second = (low, high) if rising else (high, low)
    start = crossing(waves, signal, first * np.asarray(full_scale), rising, hysteresis=hysteresis).at(waves.time)
    end = crossing(waves, signal, second * np.asarray(full_scale), rising, after=start,
                   hysteresis=hysteresis).at(waves.time)
    return end - start


def crest(waves: Waveforms, signal: np.ndarray) -> np.ndarray:
    """The largest value of ``signal`` per corner: the vertex of the parabola through the largest sample and
    its neighbours, so that the answer does not depend on where the steps fall on the crest (a bare sample
    maximum is low by up to (1 − cos(π/n)) of the ring amplitude at n samples per period)."""
    samples, columns = signal.shape[0], np.arange(signal.shape[1])
    top = np.clip(np.argmax(signal, axis=0), 1, max(samples - 2, 1))
    t0, t1, t2 = (waves.time[np.clip(top + shift, 0, samples - 1), columns] for shift in (-1, 0, 1))
    y0, y1, y2 = (signal[np.clip(top + shift, 0, samples - 1), columns] for shift in (-1, 0, 1))
    with np.errstate(all="ignore"):
        slope_left, slope_right = (y1 - y0) / (t1 - t0), (y2 - y1) / (t2 - t1)
        curvature = (slope_right - slope_left) / (t2 - t0)            # half the second derivative
        middle = 0.5 * (t0 + t1) - slope_left / (2.0 * curvature)     # where the parabola's slope is zero
        vertex = y1 + (slope_left + curvature * (t1 - t0)) * (middle - t1) + curvature * (middle - t1) ** 2
    usable = np.isfinite(vertex) & (curvature < 0) & (middle >= t0) & (middle <= t2)
    return np.maximum(np.where(usable, vertex, -np.inf), signal.max(axis=0))


def largest_slope(waves: Waveforms, signal: np.ndarray, sign: float) -> np.ndarray:
    """The largest ``sign``·d(signal)/dt over the samples [unit/s] (steps of zero length skipped)."""
    step = np.diff(waves.time, axis=0)
    with np.errstate(divide="ignore", invalid="ignore"):
        slope = np.where(step > 0, sign * np.diff(signal, axis=0) / np.where(step > 0, step, 1.0), -np.inf)
    return slope.max(axis=0, initial=-np.inf)


def energy_window_end(waves: Waveforms, start: Crossing, end_signal: np.ndarray, end_level) -> Crossing:
    """Where an energy window that opened at ``start`` closes: ``end_signal``'s first fall to ``end_level``
    after it."""
    return crossing(waves, end_signal, end_level, rising=False, after=start.at(waves.time))


def switching_energy(waves: Waveforms, power: np.ndarray, start: Crossing, end_signal: np.ndarray, end_level,
                     running_maximum: bool = False) -> np.ndarray:
    """∫ power dt from the ``start`` crossing until ``end_signal`` first falls to ``end_level`` after it [J].

    With ``running_maximum`` the answer is the largest value the running integral takes inside the window
    (Volke & Hornkamp 2012, ch. 3: E is the maximum of the running integral), which differs from its end
    value where the power turns negative inside the window (capacitive current, probe skew)."""
    cumulative = np.concatenate([np.zeros((1, power.shape[1])),
                                 np.cumsum(0.5 * (power[1:] + power[:-1]) * np.diff(waves.time, axis=0), axis=0)])
    end = energy_window_end(waves, start, end_signal, end_level)
    end_value = end.at(cumulative)
    if running_maximum:
        samples = np.arange(power.shape[0])[:, None]
        inside = (samples > start.index) & (samples <= end.index)
        end_value = np.maximum(end_value, np.where(inside, cumulative, -np.inf).max(axis=0))
    return end_value - start.at(cumulative)


def ring_after_peak(waves: Waveforms, deviation: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Frequency [Hz] and quality factor of the ring of ``deviation`` (e.g. v_ds − V_bus) from its peak on:
    the first crest is the peak, the second the next local maximum after the first trough (NaN if none)."""
    samples, corners = deviation.shape
    columns = np.arange(corners)
    peak = np.argmax(deviation, axis=0)
    index = np.arange(samples)[:, None]
    interior = (index > 0) & (index < samples - 1)
    padded = np.vstack([deviation[:1], deviation, deviation[-1:]])
    trough = interior & (deviation <= padded[:-2]) & (deviation < padded[2:]) & (index > peak)
    first_trough = np.where(trough.any(axis=0), np.argmax(trough, axis=0), samples)
    crest = interior & (deviation >= padded[:-2]) & (deviation > padded[2:]) & (index > first_trough)
    found = crest.any(axis=0)
    second = np.argmax(crest, axis=0)
    period = waves.time[second, columns] - waves.time[peak, columns]
    first_height, second_height = deviation[peak, columns], deviation[second, columns]
    with np.errstate(divide="ignore", invalid="ignore"):
        frequency = np.where(found & (period > 0), 1.0 / period, np.nan)
        decrement = np.log(first_height / second_height)                        # logarithmic decrement
        zeta = decrement / np.sqrt(4.0 * np.pi ** 2 + decrement ** 2)
        quality = np.where(found & (second_height > 0) & (zeta > 0), 0.5 / zeta, np.nan)
        quality = np.where(found & (second_height >= first_height), np.inf, quality)
    return frequency, quality


def late_growth(waves: Waveforms, signal: np.ndarray, significant) -> np.ndarray:
    """Peak-to-peak swing of ``signal`` in the last fifth of the simulated time over that in the fifth before
    it: above 1 the oscillation is still growing when the simulation ends. A last swing below ``significant``
    (per corner) has died out and counts as 0."""
    elapsed = waves.time / np.where(waves.time[-1] > 0, waves.time[-1], 1.0)

    def swing(window: np.ndarray) -> np.ndarray:
        return np.where(window, signal, -np.inf).max(axis=0) - np.where(window, signal, np.inf).min(axis=0)

    last, before = swing(elapsed > 0.8), swing((elapsed > 0.6) & (elapsed <= 0.8))
    with np.errstate(divide="ignore", invalid="ignore"):
        ratio = np.where(before > 0, last / before, np.where(last > 0, np.inf, 0.0))
    return np.where(last >= significant, ratio, 0.0)
