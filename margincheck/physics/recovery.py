"""Reverse recovery of the opposite diode at turn-on, and the voltage spike it drives across that device.

Triangular recovery: the diode current falls through zero at the rate a = di/dt set by the turning-on switch,
reaches −I_rrm after t_a = I_rrm/a, and returns to zero in t_b = S·t_a (S, the softness factor). The recovered
charge is Q_rr = ½·I_rrm·(t_a + t_b), so

    I_rrm = √(2·Q_rr·a/(1 + S)),    |di_rr/dt| = I_rrm/t_b = a/S                                       (1)

and the snap-off of the recovery current through the loop inductance puts

    V_pk = V_bus + L_loop·a/S                                                                        (2)

across the recovering device.

References
----------
.. [1] N. Mohan, T. M. Undeland, W. P. Robbins, *Power Electronics*, 3rd ed., Wiley, 2003, sec. 20-2 (diode
   reverse recovery, Q_rr = ½·I_rr·t_rr with a linear current) - from memory.
.. [2] B. W. Williams, *Power Electronics: Devices, Drivers, Applications, and Passive Components*, 2006,
   ch. 4 (recovery softness factor S = t_b/t_a) - from memory.
"""

from __future__ import annotations

import numpy as np

__all__ = ["peak_recovery_current", "recovery_peak_voltage"]


def peak_recovery_current(recovery_charge, di_dt, softness):
    """I_rrm of Eq. (1) [A] for Q_rr [C], the commutation rate a [A/s] and the softness S (t_b/t_a)."""
    return np.sqrt(2.0 * recovery_charge * np.abs(di_dt) / (1.0 + softness))


def recovery_peak_voltage(bus_voltage, loop_inductance, di_dt, softness):
    """V_pk of Eq. (2) [V]: V_bus [V], L_loop [H], the commutation rate a [A/s], the softness S (> 0)."""
    return bus_voltage + loop_inductance * np.abs(di_dt) / softness
