"""Frequency and damping of a measured ring (the v_ds ring after turn-off), fitted over several periods.

Method (ours; the definitions it rests on are published):

1. the ring is ``deviation`` = signal − its settled level (the median of the last quarter of the samples given);
2. its zero crossings are found by the comparator of ``edges`` with a band of ±``band_sigmas``·σ, σ the
   sample noise estimated from second differences (a ring sampled many times per period has second differences
   far below the noise's), so noise cannot add crossings while the ring is above it; each is then refined to
   the root of a straight line fitted over ±1/8 period around it;
3. each half-cycle between two crossings gets an amplitude a_k by least squares against a half sine over all
   its samples (noise averages out, unlike a crest sample, which noise biases upward);
4. half-cycles are kept from the first on while a_k > ``floor_sigmas``·σ and the period starting with them
   lasts within 25 % of the median of the first three; at least two full periods are needed, else the ring is
   not measurable;
5. the damped period T_d is twice the least-squares slope of the crossing instants over their index, and the
   logarithmic decrement δ is twice the least-squares slope of −ln s_k over k, s_k = (a_k + a_(k+1))/2 (an
   offset of the settled level raises one half-cycle and lowers the next): for noise-free data this equals
   δ = (1/n)·ln(x(t)/x(t + nT)) [1]; then ζ = δ/√(4π² + δ²), Q = 1/(2ζ) [1] and the undamped (natural)
   frequency f_n = f_d/√(1 − ζ²). The decrement is imprecise above ζ ≈ 0.5 [1].

References
----------
.. [1] W. T. Thomson, M. D. Dahleh, *Theory of Vibration with Applications*, 5th ed., Prentice Hall, 1998,
   sec. 2.6 (logarithmic decrement) - from memory; the same relations are in any vibrations text.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from margincheck.captures.edges import NotMeasurable, comparator_edges

__all__ = ["RingFigures", "measure_ring", "sample_noise"]

_SAME_PERIOD = 0.25          # a period more than 25 % off the typical one ends the ring
_SETTLED_PART = 0.25         # the last quarter of the samples gives the settled level


@dataclass(frozen=True)
class RingFigures:
    """A ring measured over ``half_cycles`` half-periods.

    Attributes: ``frequency`` the damped ring frequency f_d [Hz]; ``natural_frequency`` f_n = f_d/√(1 − ζ²)
    [Hz]; ``decrement`` δ per period; ``damping_ratio`` ζ; ``quality`` Q; ``first_amplitude`` [signal unit];
    ``settled_level`` [signal unit]; ``noise`` σ of the samples [signal unit]; ``method`` in words."""

    frequency: float
    natural_frequency: float
    decrement: float
    damping_ratio: float
    quality: float
    half_cycles: int
    first_amplitude: float
    settled_level: float
    noise: float
    method: str = ("zero crossings with hysteresis and least-squares half-cycle amplitudes; logarithmic "
                   "decrement over all half-cycles above the noise")


def sample_noise(signal: np.ndarray) -> float:
    """Standard deviation of white noise on an oversampled signal [signal unit], from the median absolute
    second difference (a second difference of white noise has σ·√6; 0.6745 turns a median absolute value of
    a normal variable into its σ)."""
    second = np.diff(signal, n=2)
    return float(np.median(np.abs(second - np.median(second))) / (0.6745 * np.sqrt(6.0)))


def measure_ring(time: np.ndarray, signal: np.ndarray, band_sigmas: float = 4.0, floor_sigmas: float = 3.0,
                 ) -> RingFigures | NotMeasurable:
    """Frequency and damping of the ring in ``signal`` from its first sample on (start it at the crest).

    Parameters
    ----------
    time : ndarray
        Sample instants [s], strictly increasing.
    signal : ndarray
        The ringing signal from its first crest on [any unit].
    band_sigmas : float
        Half-width of the comparator band around the settled level, in noise σ.
    floor_sigmas : float
        Half-cycles with an amplitude below this many σ end the ring.

    Returns
    -------
    RingFigures or NotMeasurable
        The ring's figures, or why there are none (fewer than two periods above the noise).
    """
    if signal.size < 16:
        return NotMeasurable(f"ring too short: {signal.size} samples after the crest")
    settled = float(np.median(signal[-max(int(_SETTLED_PART * signal.size), 4):]))
    deviation = signal - settled
    noise = max(sample_noise(signal), 1e-12 * float(np.max(np.abs(deviation))))
    band = band_sigmas * noise
    edges = comparator_edges(time, deviation, -band, band)
    crossings = _refined(time, deviation, np.sort(np.concatenate([edges.rising, edges.falling])))
    amplitudes = np.array([_half_cycle_amplitude(time, deviation, start, end)
                           for start, end in zip(crossings[:-1], crossings[1:])])
    kept = _ring_half_cycles(np.diff(crossings), amplitudes, floor_sigmas * noise)
    if kept < 4:
        return NotMeasurable(f"ring too short: {kept} half-cycles above {floor_sigmas:g} σ of noise "
                             f"(σ = {noise:.3g}), at least 4 (two periods) needed")
    index = np.arange(kept + 1)
    half_period = np.polyfit(index, crossings[:kept + 1], 1)[0]
    swings = 0.5 * (amplitudes[:kept - 1] + amplitudes[1:kept])   # an offset of the level cancels in a pair
    decrement = -2.0 * np.polyfit(index[:kept - 1], np.log(swings), 1)[0]
    zeta = decrement / np.sqrt(4.0 * np.pi ** 2 + decrement ** 2)
    frequency = 1.0 / (2.0 * half_period)
    return RingFigures(frequency=float(frequency), natural_frequency=float(frequency / np.sqrt(1.0 - zeta ** 2)),
                       decrement=float(decrement), damping_ratio=float(zeta),
                       quality=float(0.5 / zeta) if zeta > 0 else float("inf"), half_cycles=int(kept),
                       first_amplitude=float(amplitudes[0]), settled_level=settled, noise=noise)


def _refined(time: np.ndarray, deviation: np.ndarray, crossings: np.ndarray) -> np.ndarray:
    """Each zero crossing again, as the root of a straight line fitted to the samples within ±1/8 period of it
    (a sinusoid is straight at its zero crossing). The comparator's instant is the last crossing before the band
    edge, which noise makes late where the ring is small; the fit over the samples is not biased."""
    if crossings.size < 3:
        return crossings
    reach = 0.25 * np.median(np.diff(crossings))
    refined = crossings.copy()
    for k, crossing in enumerate(crossings):
        near = np.abs(time - crossing) <= reach
        if np.count_nonzero(near) >= 3:
            slope, offset = np.polyfit(time[near] - crossing, deviation[near], 1)
            shift = -offset / slope if slope != 0 else 0.0
            refined[k] = crossing + shift if abs(shift) < reach else crossing
    return refined


def _half_cycle_amplitude(time: np.ndarray, deviation: np.ndarray, start: float, end: float) -> float:
    """|a| of the least-squares fit a·sin(π(t − start)/(end − start)) to the samples between the crossings."""
    inside = (time > start) & (time < end)
    shape = np.sin(np.pi * (time[inside] - start) / (end - start))
    weight = float(shape @ shape)
    return abs(float(deviation[inside] @ shape) / weight) if weight > 0 else 0.0


def _ring_half_cycles(durations: np.ndarray, amplitudes: np.ndarray, floor: float) -> int:
    """How many leading half-cycles belong to the ring: amplitude above ``floor``, and the period they start
    (with the next half-cycle) within 25 % of the typical one. Periods, not half-periods, are compared: an
    offset of the settled level makes the half-cycles alternately long and short."""
    if durations.size < 2:
        return 0
    periods = durations[:-1] + durations[1:]
    periods = np.append(periods, periods[-1])
    typical = np.median(periods[:3])
    good = (np.abs(periods - typical) <= _SAME_PERIOD * typical) & (amplitudes > floor)
    return int(np.argmin(good)) if not good.all() else int(good.size)
