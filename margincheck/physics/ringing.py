"""Resonant transients: the commutation loop ringing with the output capacitance, and the gate loop ringing.

Commutation loop at turn-off. Once the opposite diode takes the load current, the loop inductance L (with
its resistance R) carries the current i_L into the switch, whose output capacitance C(v) takes what the
channel current i_ch no longer does:

    C(v)·dv/dt = i_L − i_ch(t),    L·di_L/dt = V_bus − v − R·i_L                                   (1)

starting at v = V_bus, i_L = I. For a constant C, R = 0 and a channel current falling linearly from I to 0
in t_f, (1) is x'' + ω²x = (I/t_f)/C with x = v − V_bus, so x = (L·I/t_f)(1 − cos ωt) during the fall and a
free oscillation of amplitude 2·(L·I/t_f)·sin(ω·t_f/2) after it. The peak overshoot is therefore

    ΔV = 2·(L·I/t_f)·sin(ω·t_f/2)   for ω·t_f ≤ π,     ΔV = 2·L·I/t_f   beyond,                     (2)

up to twice the first-order L·di/dt, and I·√(L/C) in the limit of an abrupt step (t_f → 0).

Gate loop. The driver step through R_g and the gate-loop inductance L_g into C_iss is a series RLC circuit;
its step response overshoots by the fraction exp(−ζπ/√(1−ζ²)), ζ = (R/2)·√(C/L), when ζ < 1.        (3)

References
----------
.. [1] W. H. Hayt, J. E. Kemmerly, S. M. Durbin, *Engineering Circuit Analysis*, 8th ed., McGraw-Hill, 2012,
   ch. 9 (the source-free and driven series RLC circuit; resonant frequency 1/(2π√(LC))) - from memory.
.. [2] K. Ogata, *Modern Control Engineering*, 5th ed., Prentice Hall, 2010, sec. 5-3 (maximum overshoot of
   a second-order step response, M_p = exp(−ζπ/√(1−ζ²))) - from memory.
Eq. (2) is derived above; the tests check it, and the solver, against ``scipy.integrate.solve_ivp``.
"""

from __future__ import annotations

from typing import Callable

import numpy as np

__all__ = [
    "gate_ringing_peak",
    "ramp_ring_overshoot",
    "resonant_peak_voltage",
    "ring_frequency",
    "step_overshoot_fraction",
]


def ring_frequency(inductance, capacitance):
    """Undamped resonant frequency f = 1/(2π√(L·C)) [Hz] of an inductance [H] with a capacitance [F].

    Examples
    --------
    >>> round(float(ring_frequency(18.1e-9, 560e-12)) / 1e6, 1)  # design.md section 8 anchor: ~50 MHz
    50.0
    """
    return 1.0 / (2.0 * np.pi * np.sqrt(inductance * capacitance))


def ramp_ring_overshoot(loop_inductance, capacitance, current, fall_time):
    """Undamped overshoot above the bus of a loop whose switch current falls linearly to zero [V].

    Parameters
    ----------
    loop_inductance : float or ndarray
        Commutation-loop inductance L [H].
    capacitance : float or ndarray
        Output capacitance C (constant) [F].
    current : float or ndarray
        Current turned off, I [A].
    fall_time : float or ndarray
        Duration t_f of the linear fall [s]; 0 gives the abrupt-step limit I·√(L/C).

    Returns
    -------
    float or ndarray
        ΔV of Eq. (2) [V].
    """
    omega = 1.0 / np.sqrt(loop_inductance * capacitance)
    fall_time = np.asarray(fall_time, dtype=float)
    theta = omega * fall_time
    with np.errstate(divide="ignore", invalid="ignore"):
        ramp = loop_inductance * current / fall_time
        ringing = np.where(theta <= np.pi, 2.0 * ramp * np.sin(theta / 2.0), 2.0 * ramp)  # Eq. (2)
    return np.where(theta > 0.0, ringing, current * np.sqrt(loop_inductance / capacitance))[()]


def resonant_peak_voltage(bus_voltage, loop_inductance, loop_resistance, current,
                          channel_current: Callable[[np.ndarray], np.ndarray],
                          capacitance: Callable[[np.ndarray], np.ndarray], duration, steps: int = 3000):
    """Peak switch voltage of the commutation loop, Eq. (1), integrated with fixed-step RK4 [V].

    All array arguments broadcast to one shape, one element per corner; every corner is integrated at once
    (each with its own step, ``duration / steps``).

    Parameters
    ----------
    bus_voltage, loop_inductance, loop_resistance, current : float or ndarray
        V_bus [V], L [H], R [ohm] and the load current I [A] that the loop carries at the start.
    channel_current : callable
        i_ch(t) [A] for an array of times [s] (one per corner).
    capacitance : callable
        C(v) [F] for an array of switch voltages [V].
    duration : float or ndarray
        Simulated time after the opposite diode takes over [s]; it should cover the current fall and one
        ring period.
    steps : int
        RK4 steps per corner.

    Returns
    -------
    ndarray
        The largest switch voltage over the interval [V]: the vertex of the parabola through the largest
        sample and its two neighbours, so that the answer does not depend on where the steps fall on the crest
        (a bare sample maximum is low by up to (1 − cos(π/n))·amplitude at n steps per period).
    """
    bus, inductance, resistance, load = np.broadcast_arrays(
        *(np.asarray(value, dtype=float) for value in (bus_voltage, loop_inductance, loop_resistance, current)))
    step = np.broadcast_to(np.asarray(duration, dtype=float), bus.shape) / steps

    def slope(time, voltage, loop_current):
        dv = (loop_current - channel_current(time)) / capacitance(voltage)      # Eq. (1), capacitor
        di = (bus - voltage - resistance * loop_current) / inductance           # Eq. (1), inductor
        return dv, di

    voltage, loop_current, time = bus.copy(), load.copy(), np.zeros_like(bus)
    peak, earlier = voltage.copy(), voltage.copy()
    for _ in range(steps):
        previous = voltage
        k1v, k1i = slope(time, voltage, loop_current)
        k2v, k2i = slope(time + step / 2, voltage + step / 2 * k1v, loop_current + step / 2 * k1i)
        k3v, k3i = slope(time + step / 2, voltage + step / 2 * k2v, loop_current + step / 2 * k2i)
        k4v, k4i = slope(time + step, voltage + step * k3v, loop_current + step * k3i)
        voltage = voltage + step / 6 * (k1v + 2 * k2v + 2 * k3v + k4v)
        loop_current = loop_current + step / 6 * (k1i + 2 * k2i + 2 * k3i + k4i)
        time = time + step
        crest = (previous >= earlier) & (previous >= voltage)
        np.maximum(peak, np.where(crest, _parabola_vertex(earlier, previous, voltage), voltage), out=peak)
        earlier = previous
    return peak


def _parabola_vertex(before, middle, after):
    """Largest value of the parabola through three equally spaced samples whose middle one is the largest."""
    curvature = before - 2.0 * middle + after
    with np.errstate(divide="ignore", invalid="ignore"):
        vertex = middle - (before - after) ** 2 / (8.0 * curvature)
    return np.where(curvature < 0, vertex, middle)


def step_overshoot_fraction(resistance, inductance, capacitance):
    """Overshoot of a series RLC step response as a fraction of the step, Eq. (3); 0 when not underdamped.

    Parameters
    ----------
    resistance, inductance, capacitance : float or ndarray
        R [ohm], L [H], C [F] of the loop.
    """
    zeta = resistance / 2.0 * np.sqrt(capacitance / inductance)
    underdamped = zeta < 1.0
    with np.errstate(invalid="ignore"):
        fraction = np.exp(-zeta * np.pi / np.sqrt(1.0 - np.where(underdamped, zeta, 0.0) ** 2))
    return np.where(underdamped, fraction, 0.0)[()]


def gate_ringing_peak(v_from, v_to, resistance, inductance, capacitance):
    """Extreme gate voltage when the driver steps from ``v_from`` to ``v_to`` through a series RLC [V].

    ``v_to + (v_to − v_from)·M_p``: above the on-level at turn-on, below the off-level at turn-off.
    """
    return v_to + (v_to - v_from) * step_overshoot_fraction(resistance, inductance, capacitance)
