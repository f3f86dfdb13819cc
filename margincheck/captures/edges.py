"""The switching edges of a measured double-pulse capture, found by a comparator with hysteresis.

A double-pulse capture holds the end of the first pulse (turn-off at the first pulse's current), the second
pulse's turn-on (at about the same current, now commutating the opposite diode) and its turn-off. The edges are
found on the gate voltage (or, without a gate trace, on v_ds with the sense inverted) by a Schmitt trigger: the
state turns on only when the signal reaches the upper threshold and off only when it falls to the lower one, so
noise and ringing smaller than the band between them cannot make extra edges. The instant of an edge is the last
crossing of the middle of the band before the trigger fired (interpolated between samples, no smoothing).

The thresholds default to 30 % and 70 % of the span between the signal's low and high levels (its 2nd and 98th
percentiles): `common practice` for a comparator on a two-level signal, not a published definition.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

__all__ = ["DoublePulseEdges", "NotMeasurable", "WaveformError", "check_waveforms", "comparator_edges",
           "find_edges", "segment"]


class WaveformError(ValueError):
    """A capture that cannot be measured: lengths differ, time not strictly increasing, values not finite, test
    conditions (bus voltage, load inductance) not positive."""


@dataclass(frozen=True)
class NotMeasurable:
    """A figure that could not be taken from the capture, and why (never a silent number)."""

    reason: str


@dataclass(frozen=True)
class ComparatorEdges:
    """Instants [s] at which a two-level signal went high (``rising``) and low (``falling``)."""

    rising: np.ndarray
    falling: np.ndarray
    low_threshold: float
    high_threshold: float


@dataclass(frozen=True)
class DoublePulseEdges:
    """The three edges of a double-pulse capture [s], or why one is missing, and the trace they came from."""

    first_turn_off: float | NotMeasurable
    second_turn_on: float | NotMeasurable
    second_turn_off: float | NotMeasurable
    source: str
    low_threshold: float
    high_threshold: float

    def instants(self) -> list[float]:
        """The edges found, in time order."""
        found = (self.first_turn_off, self.second_turn_on, self.second_turn_off)
        return [edge for edge in found if not isinstance(edge, NotMeasurable)]


def check_waveforms(time: np.ndarray, **signals: np.ndarray | None) -> None:
    """Raise ``WaveformError`` unless ``time`` is strictly increasing and every signal given has its length,
    all values finite."""
    time = np.asarray(time, dtype=float)
    if time.ndim != 1 or time.size < 3:
        raise WaveformError(f"time: expected a 1-D array of at least 3 samples, got shape {time.shape}")
    if not np.all(np.isfinite(time)) or np.any(np.diff(time) <= 0):
        raise WaveformError("time: must be finite and strictly increasing")
    for name, signal in signals.items():
        if signal is None:
            continue
        signal = np.asarray(signal, dtype=float)
        if signal.shape != time.shape:
            raise WaveformError(f"{name}: {signal.shape[0] if signal.ndim else 0} samples, time has {time.size}")
        if not np.all(np.isfinite(signal)):
            raise WaveformError(f"{name}: holds non-finite values (NaN or infinity)")


def comparator_edges(time: np.ndarray, signal: np.ndarray, low_threshold: float, high_threshold: float,
                     ) -> ComparatorEdges:
    """Edges of ``signal`` through a comparator with hysteresis.

    Parameters
    ----------
    time : ndarray
        Sample instants [s], strictly increasing (not necessarily uniform).
    signal : ndarray
        The signal, same length [any unit].
    low_threshold, high_threshold : float
        The comparator turns on at or above ``high_threshold`` and off at or below ``low_threshold``.

    Returns
    -------
    ComparatorEdges
        Rising and falling instants [s]: each the last crossing of the band's middle before the comparator
        fired, linearly interpolated between samples.
    """
    mark = np.where(signal >= high_threshold, 1, np.where(signal <= low_threshold, 0, -1))
    middle = 0.5 * (low_threshold + high_threshold)
    first = int(signal[0] >= middle)
    positions = np.where(mark >= 0, np.arange(mark.size), -1)
    latest = np.maximum.accumulate(positions)
    state = np.where(latest >= 0, mark[np.maximum(latest, 0)], first)
    changes = np.flatnonzero(np.diff(state)) + 1
    above = signal >= middle
    crossings = np.flatnonzero(above[1:] != above[:-1])      # the middle is crossed between k and k + 1
    rising, falling = [], []
    for change in changes:
        k = crossings[np.searchsorted(crossings, change, side="left") - 1]
        instant = time[k] + (middle - signal[k]) / (signal[k + 1] - signal[k]) * (time[k + 1] - time[k])
        (rising if state[change] == 1 else falling).append(instant)
    return ComparatorEdges(np.array(rising), np.array(falling), low_threshold, high_threshold)


def find_edges(time: np.ndarray, signal: np.ndarray, source: str = "v_gs", thresholds=(0.3, 0.7),
               min_hold: float = 50e-9) -> DoublePulseEdges:
    """The turn-off ending the first pulse and the second pulse's turn-on and turn-off.

    Parameters
    ----------
    time : ndarray
        Sample instants [s], strictly increasing.
    signal : ndarray
        The device's gate voltage v_gs [V] (high = on), or v_ds [V] (high = off) when ``source`` is "v_ds".
    source : {"v_gs", "v_ds"}
        Which trace ``signal`` is.
    thresholds : tuple of float
        The comparator's low and high thresholds as fractions of the span between the signal's 2nd and 98th
        percentiles (default 30 % / 70 %, `common practice`).
    min_hold : float
        A state held for less than this [s] is ringing, not a pulse: the two edges around it are dropped
        (default 50 ns, `common practice`: double-pulse on- and off-times are hundreds of ns or more).

    Returns
    -------
    DoublePulseEdges
        The three edge instants [s]; an edge the capture does not hold is ``NotMeasurable`` with the reason.
        A capture that starts in the off state has the first pulse's turn-on skipped.
    """
    if source not in ("v_gs", "v_ds"):
        raise WaveformError(f"source: expected 'v_gs' or 'v_ds', got {source!r}")
    check_waveforms(time, **{source: signal})
    bottom, top = np.percentile(signal, [2.0, 98.0])
    low, high = bottom + thresholds[0] * (top - bottom), bottom + thresholds[1] * (top - bottom)
    if top <= bottom:
        why = NotMeasurable(f"{source} is flat: no edge")
        return DoublePulseEdges(why, why, why, source, low, high)
    edges = comparator_edges(np.asarray(time, float), np.asarray(signal, float), low, high)
    rising, falling = _without_short_states(edges.rising, edges.falling, min_hold)
    turn_ons, turn_offs = (rising, falling) if source == "v_gs" else (falling, rising)
    first_off = _first_after(turn_offs, -np.inf, f"no turn-off found in {source}")
    second_on = _first_after(turn_ons, first_off, "no second pulse: the device never turns on again after the "
                                                  "first turn-off")
    second_off = _first_after(turn_offs, second_on, "the second pulse does not end inside the capture")
    return DoublePulseEdges(first_off, second_on, second_off, source, low, high)


def _without_short_states(rising: np.ndarray, falling: np.ndarray, min_hold: float):
    """Rising and falling instants with every pair of consecutive edges closer than ``min_hold`` removed."""
    instants = np.concatenate([rising, falling])
    up = np.concatenate([np.ones(rising.size, bool), np.zeros(falling.size, bool)])
    order = np.argsort(instants)
    instants, up = list(instants[order]), list(up[order])
    k = 0
    while k + 1 < len(instants):
        if instants[k + 1] - instants[k] < min_hold:
            del instants[k:k + 2], up[k:k + 2]
            k = max(k - 1, 0)
        else:
            k += 1
    instants, up = np.array(instants), np.array(up, dtype=bool)
    return instants[up] if up.size else instants, instants[~up] if up.size else instants


def _first_after(instants: np.ndarray, start, reason: str) -> float | NotMeasurable:
    if isinstance(start, NotMeasurable):
        return start                      # the earlier edge is missing: the same reason holds
    later = instants[instants > start]
    return float(later[0]) if later.size else NotMeasurable(reason)


def segment(time: np.ndarray, edges: DoublePulseEdges, instant: float) -> slice:
    """The samples that belong to the edge at ``instant``: from half-way after the previous edge (or the start
    of the capture) to half-way before the next one (or the end)."""
    instants = edges.instants()
    order = instants.index(instant)
    start = 0.5 * (instants[order - 1] + instant) if order > 0 else time[0]
    end = 0.5 * (instant + instants[order + 1]) if order + 1 < len(instants) else time[-1]
    return slice(int(np.searchsorted(time, start)), int(np.searchsorted(time, end, side="right")))
