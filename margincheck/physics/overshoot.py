"""Voltage across the switch at turn-off from the commutation-loop inductance (first order).

When the switch interrupts a current that falls at the rate di/dt, the commutation-loop inductance L_loop
drives the voltage ``L_loop·|di/dt|`` (Faraday's law of induction) on top of the bus voltage across the switch
that turns off, so the first-order turn-off peak is

    V_pk = V_bus + L_loop·|di/dt|                                                                  (1)

This ignores the resonance of L_loop with the output capacitance, whose undamped response to an abrupt
di/dt step can reach up to twice ``L_loop·|di/dt|``; it is an estimate to be confirmed by measurement.

References
----------
.. [1] N. Mohan, T. M. Undeland, W. P. Robbins, *Power Electronics: Converters, Applications, and Design*,
   3rd ed., Wiley, 2003, ch. 22 (stray inductance and the turn-off overvoltage of a switch) - from memory.
.. [2] R. W. Erickson, D. Maksimović, *Fundamentals of Power Electronics*, 3rd ed., Springer, 2020,
   ch. 2 (the inductor relation v = L·di/dt) - from memory.
"""

from __future__ import annotations

__all__ = ["inductive_overshoot", "turn_off_peak_voltage"]


def inductive_overshoot(loop_inductance, di_dt):
    """Voltage induced by the commutation loop during the current fall [V].

    Parameters
    ----------
    loop_inductance : float or ndarray
        Commutation-loop inductance L_loop [H].
    di_dt : float or ndarray
        Current slew rate; only its magnitude matters [A/s].

    Returns
    -------
    float or ndarray
        L_loop·|di/dt| [V].

    Examples
    --------
    >>> round(inductive_overshoot(25e-9, 6e9), 6)
    150.0
    """
    return loop_inductance * abs(di_dt)  # Faraday: v = L·di/dt


def turn_off_peak_voltage(bus_voltage, loop_inductance, di_dt):
    """First-order drain-source peak at turn-off, V_pk = V_bus + L_loop·|di/dt| [V].

    Parameters
    ----------
    bus_voltage : float or ndarray
        DC bus voltage across the commutation cell [V].
    loop_inductance : float or ndarray
        Commutation-loop inductance L_loop [H].
    di_dt : float or ndarray
        Turn-off current slew rate [A/s].

    Returns
    -------
    float or ndarray
        V_pk [V], Eq. (1) of the module notes.
    """
    return bus_voltage + inductive_overshoot(loop_inductance, di_dt)  # Eq. (1)
