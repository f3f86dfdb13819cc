"""How long a decaying ring stays above a voltage level: the pulse length a transient rating is judged by.

After its first crest the drain-source ring of the commutation loop is the free response of a second-order
circuit (the loop inductance with the node capacitance, damped by the loop resistance). Its deviation from
the bus, x(t) = v(t) − V_bus, with damping ratio ζ = 1/(2Q) and damped angular frequency ω_d = 2π·f_ring, is

    x(t) = C·exp(−σ·t)·cos(ω_d·t + φ),   σ = ζ·ω_d/√(1 − ζ²)                                       (1)

measured from the crest (t = 0, dx/dt = 0), where tan φ = −σ/ω_d, so cos φ = √(1 − ζ²) and the crest height is
A_0 = C·√(1 − ζ²). As |cos| ≤ 1, x(t) ≤ C·exp(−σ·t), and the ring is above the level V_bus + ΔV only while

    t < (1/σ)·ln(A_0 / (√(1 − ζ²)·ΔV))                                                             (2)

after the crest. Before the crest the ring rises to it from the bus in a quarter of its period, so the time
spent above the level is at most a quarter period plus (2): an upper bound on the duration of the excursion
(the last instant above the level less the first).

References
----------
.. [1] K. Ogata, *Modern Control Engineering*, 5th ed., Prentice Hall, 2010, sec. 5-3 (the underdamped
   second-order response, its envelope curves exp(−ζ·ω_n·t)/√(1 − ζ²) and damped frequency
   ω_d = ω_n·√(1 − ζ²)) - from memory. Checked against scipy.integrate.solve_ivp on the circuit (tests).
"""

from __future__ import annotations

import numpy as np

__all__ = ["time_above_level"]


def time_above_level(peak_voltage, bus_voltage, level, ring_frequency, ring_quality):
    """Upper bound on how long the turn-off ring stays above ``level`` [s].

    Parameters
    ----------
    peak_voltage : float or ndarray
        First crest of the ring, V_pk [V].
    bus_voltage : float or ndarray
        The voltage the ring settles to, V_bus [V].
    level : float or ndarray
        The voltage whose exceedance is timed [V].
    ring_frequency : float or ndarray
        Damped ring frequency f_ring, from crest to crest [Hz].
    ring_quality : float or ndarray
        Quality factor of the ring Q = 1/(2ζ) (inf: not decaying) [-].

    Returns
    -------
    float or ndarray
        0 where the peak does not exceed the level; inf where the bus itself is at or above it or the ring does
        not decay; NaN where the ring is not known (no frequency or quality factor) [s].

    Notes
    -----
    T/4 + (1/σ)·ln(A_0/(√(1 − ζ²)·ΔV)) with A_0 = V_pk − V_bus, ΔV = level − V_bus, T = 1/f_ring and σ of
    Eq. (1) of the module docstring; Eq. (2) bounds the decay after the crest.

    Examples
    --------
    >>> float(time_above_level(120.0, 100.0, 90.0, 1e8, 5.0))               # the bus above the level
    inf
    >>> float(time_above_level(95.0, 60.0, 100.0, 1e8, 5.0))                # the peak below the level
    0.0
    """
    peak, bus, level = (np.asarray(value, dtype=float) for value in (peak_voltage, bus_voltage, level))
    frequency, quality = np.asarray(ring_frequency, dtype=float), np.asarray(ring_quality, dtype=float)
    with np.errstate(divide="ignore", invalid="ignore"):
        zeta = 0.5 / quality
        damped = np.sqrt(1.0 - zeta ** 2)
        sigma = zeta * 2.0 * np.pi * frequency / damped                         # Eq. (1)
        after_crest = np.log((peak - bus) / (damped * (level - bus))) / sigma   # Eq. (2)
        duration = 0.25 / frequency + np.maximum(after_crest, 0.0)
    duration = np.where(np.isfinite(quality) | np.isnan(quality), duration, np.inf)
    duration = np.where(bus >= level, np.inf, duration)
    result = np.where(peak <= level, 0.0, duration)
    return result if result.ndim else float(result)
