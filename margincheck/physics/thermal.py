"""Junction temperature: transient thermal impedance of a Foster network, on-resistance against temperature,
and the steady junction temperature with its conduction-loss feedback (or thermal runaway).

A Foster network is the datasheet's fitted form of the junction-to-case transient thermal impedance: n
parallel R_i‖C_i cells in series, each with time constant τ_i = R_i·C_i. For a power step P from t = 0,

    Z_th(t) = Σ R_i·(1 − exp(−t/τ_i))                                                             (1)

and for a periodic train of rectangular pulses (width t_p, period T) in its periodic steady state, the peak
junction rise per watt of pulse power, at the end of a pulse, is exactly

    Z_th,p(t_p, T) = Σ R_i·(1 − exp(−t_p/τ_i)) / (1 − exp(−T/τ_i))                               (2)

(each cell is a first-order system; summing the geometric series of its pulse responses gives (2)).

The on-resistance rises with temperature, so the conduction loss feeds back on the junction temperature:

    R_ds(on)(T) = R_0·exp(k·(T − T_0))                                                            (3)
    T_j = T_ref + R_th·(I_rms²·R_ds(on)(T_j) + P_sw)                                               (4)

with k the logarithmic temperature coefficient (d ln R/dT), fitted through two datasheet points or given.
Equation (4) has a solution only while the loss grows slower than the heat path can carry it away; beyond
that there is no equilibrium (thermal runaway).

An IGBT conducts with the on-state line v_CE = V_CE0 + r_CE·i, so P_cond = V_CE0·I_avg + r_CE·I_rms² [3]. With
one datasheet point V_CE(sat) at I_ref, and I_avg ≤ I_rms for a current of one sign, the loss is largest at one
end of the lines through that point (0 ≤ V_CE0 ≤ V_CE(sat): P is linear in V_CE0):

    P_cond ≤ V_CE(sat)·max(I_rms, I_rms²/I_ref)                                                  (5)
    V_CE(sat)(T) = V_CE(sat)(T_0) + k_V·(T − T_0)                                                 (6)
    T_j = T_ref + R_th·(P_cond(T_ref) + P_sw) / (1 − R_th·dP_cond/dT)                             (7)

(7) solves (4) exactly for a loss linear in T; no equilibrium (runaway) where R_th·dP_cond/dT ≥ 1.

References
----------
.. [1] JEDEC JESD51-14, *Transient Dual Interface Test Method for the Measurement of the Thermal Resistance
   Junction to Case*, 2010 (Foster and Cauer RC networks for Z_th) - from memory.
.. [2] B. J. Baliga, *Fundamentals of Power Semiconductor Devices*, Springer, 2008, ch. 6 (on-resistance
   rising with temperature through the mobility) - from memory.
.. [3] N. Mohan, T. M. Undeland, W. P. Robbins, *Power Electronics*, 3rd ed., Wiley, 2003, ch. 29 (heat
   sinks and thermal management; T_j = T_c + P·R_th,jc; ch. 22: the IGBT's on-state line) - from memory.
Equations (1) and (2) are checked against a direct simulation of the network's ODE with scipy's solve_ivp,
and (4) against a hand-computed example (tests/physics/test_thermal.py).
"""

from __future__ import annotations

import numpy as np

__all__ = ["foster_impedance", "igbt_conduction_loss", "junction_temperature", "junction_temperature_linear_loss",
           "log_temperature_coefficient", "on_resistance", "periodic_pulse_impedance", "saturation_voltage"]

_BISECTION_STEPS = 80  # halves the bracket to far below 1 µK for any bracket under 10^6 K
_FAR_ABOVE = 1e6  # K: no junction equilibrium beyond this is physical; the search stops there


def foster_impedance(time, resistances, time_constants):
    """Z_th(t) of a Foster network, Eq. (1) [K/W]: t [s] (any shape), R_i [K/W], τ_i [s].

    Examples
    --------
    >>> round(float(foster_impedance(1.0, [0.2, 0.3], [1.0, 1e-3])), 6)  # 0.2·(1 − e^-1) + 0.3
    0.426424
    """
    time = np.asarray(time, dtype=float)[..., None]
    resistances, time_constants = np.asarray(resistances, dtype=float), np.asarray(time_constants, dtype=float)
    return np.sum(resistances * -np.expm1(-time / time_constants), axis=-1)  # Eq. (1)


def periodic_pulse_impedance(pulse_width, period, resistances, time_constants):
    """Peak Z_th,p(t_p, T) of a periodic pulse train in its periodic steady state, Eq. (2) [K/W].

    ``period`` = inf gives the single pulse, Eq. (1). A duty cycle D is ``period = t_p/D``.

    Examples
    --------
    >>> z = periodic_pulse_impedance(1e-3, 2e-3, [1.0], [1e-3])  # (1 − e^-1)/(1 − e^-2)
    >>> round(float(z), 6)
    0.731059
    """
    pulse_width = np.asarray(pulse_width, dtype=float)[..., None]
    period = np.asarray(period, dtype=float)[..., None]
    resistances, time_constants = np.asarray(resistances, dtype=float), np.asarray(time_constants, dtype=float)
    rise = -np.expm1(-pulse_width / time_constants)
    accumulation = -np.expm1(-period / time_constants)  # 1 for a single pulse (T = inf)
    return np.sum(resistances * rise / accumulation, axis=-1)  # Eq. (2)


def log_temperature_coefficient(cold_resistance, cold_temperature, hot_resistance, hot_temperature):
    """k = ln(R_hot/R_0)/(T_hot − T_0) of Eq. (3) [1/K], from two datasheet points.

    Examples
    --------
    >>> round(float(log_temperature_coefficient(0.040, 298.15, 0.080, 423.15)) * 125, 6)  # doubles over 125 K
    0.693147
    """
    return np.log(hot_resistance / cold_resistance) / (hot_temperature - cold_temperature)


def on_resistance(temperature, reference_resistance, reference_temperature, coefficient):
    """R_ds(on)(T) of Eq. (3) [ohm]: T, T_0 [K], R_0 [ohm], k [1/K]."""
    return reference_resistance * np.exp(coefficient * (temperature - reference_temperature))  # Eq. (3)


def junction_temperature(reference_temperature, thermal_resistance, rms_current, on_resistance_0,
                         on_resistance_temperature, coefficient, switching_loss):
    """The lowest solution T_j of Eq. (4) [K], or +inf where none exists (thermal runaway).

    Parameters (all broadcast; SI units)
    ----------
    reference_temperature : T_ref, the case (or heat-sink) temperature [K]
    thermal_resistance : R_th from the junction to T_ref [K/W]
    rms_current : I_rms [A]
    on_resistance_0, on_resistance_temperature, coefficient : R_0 [ohm] at T_0 [K] and k [1/K] of Eq. (3)
    switching_loss : P_sw = f_sw·(E_on + E_off) [W], taken as independent of T_j

    Notes
    -----
    With g(T) = T_ref + R_th·(I²·R(T) + P_sw) − T, g(T_ref) > 0, and for k > 0 g is convex with its minimum
    where R_th·I²·k·R(T*) = 1. An equilibrium exists iff g(T*) ≤ 0; the physical (stable) one is the root
    below T*, found by bisection on [T_ref, T*] (T* capped 10^6 K above T_ref, where a vanishing k puts it).
    For k ≤ 0 g falls without bound and the root is bracketed by [T_ref, T_ref + R_th·(I²·R(T_ref) + P_sw)].
    Vectorised over corners.

    Examples
    --------
    >>> float(junction_temperature(363.15, 0.5, 20.0, 0.040, 298.15, 0.0, 12.0)) - 273.15  # 90 + 0.5·28
    104.0
    """
    t_ref, r_th, current, r_0, t_0, k, p_sw = np.broadcast_arrays(*(np.asarray(value, dtype=float) for value in (
        reference_temperature, thermal_resistance, rms_current, on_resistance_0, on_resistance_temperature,
        coefficient, switching_loss)))

    def excess(temperature):
        loss = current**2 * on_resistance(temperature, r_0, t_0, k) + p_sw
        return t_ref + r_th * loss - temperature

    conduction_gain = r_th * current**2 * k  # R_th·I²·k: with R(T), the slope of the loss term
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        turning_point = np.where(conduction_gain > 0, t_0 + np.log(1.0 / (conduction_gain * r_0)) / k, np.inf)
        # A vanishing k puts the turning point out of reach: bracket below _FAR_ABOVE kelvin above T_ref.
        # ... and below the temperature where exp(k·(T − T_0)) would overflow (a subnormal I²·k does that).
        far = np.minimum(t_ref + _FAR_ABOVE, np.maximum(t_0 + 700.0 / np.where(k > 0, k, 1.0), t_ref))
        upper = np.where(conduction_gain > 0, np.clip(turning_point, t_ref, far),
                         t_ref + np.maximum(excess(t_ref), 0))
        runaway = (conduction_gain > 0) & ((turning_point <= t_ref) | ~(excess(upper) <= 0))
    low, high = t_ref.copy(), np.where(runaway, t_ref, upper)
    for _ in range(_BISECTION_STEPS):
        middle = 0.5 * (low + high)
        with np.errstate(over="ignore"):
            above = excess(middle) > 0
        low, high = np.where(above, middle, low), np.where(above, high, middle)
    return np.where(runaway, np.inf, 0.5 * (low + high))


def saturation_voltage(temperature, reference_voltage, reference_temperature, coefficient):
    """V_CE(sat)(T) of Eq. (6) [V]: T, T_0 [K], V_CE(sat)(T_0) [V], k_V [V/K]."""
    return reference_voltage + coefficient * (temperature - reference_temperature)  # Eq. (6)


def igbt_conduction_loss(rms_current, saturation, reference_current):
    """The largest IGBT conduction loss of Eq. (5) [W]: I_rms [A], V_CE(sat) [V] at I_ref [A].

    >>> float(igbt_conduction_loss(20.0, 1.8, 50.0))  # below I_ref: the flat line, 1.8 V x 20 A
    36.0
    """
    rms_current = np.asarray(rms_current, dtype=float)
    return saturation * np.maximum(rms_current, rms_current**2 / reference_current)  # Eq. (5)


def junction_temperature_linear_loss(reference_temperature, thermal_resistance, loss_at_reference, loss_slope,
                                     switching_loss):
    """T_j of Eq. (7) for a conduction loss linear in T [K], or +inf where none exists (thermal runaway).

    Parameters (all broadcast; SI units)
    ----------
    reference_temperature : T_ref [K]
    thermal_resistance : R_th [K/W]
    loss_at_reference : P_cond(T_ref) [W]
    loss_slope : dP_cond/dT [W/K] (negative for a loss that falls with temperature)
    switching_loss : P_sw [W], independent of T_j

    Examples
    --------
    >>> float(junction_temperature_linear_loss(363.15, 0.5, 36.0, 0.0, 12.0)) - 273.15  # 90 + 0.5·48
    114.0
    """
    t_ref, r_th, loss, slope, p_sw = np.broadcast_arrays(*(np.asarray(value, dtype=float) for value in (
        reference_temperature, thermal_resistance, loss_at_reference, loss_slope, switching_loss)))
    feedback = 1.0 - r_th * slope
    with np.errstate(divide="ignore", invalid="ignore"):
        return np.where(feedback > 0, t_ref + r_th * (loss + p_sw) / feedback, np.inf)  # Eq. (7)
