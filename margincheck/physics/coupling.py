"""Gate disturbance of the idle switch of a leg when its partner switches (spurious turn-on).

When the partner turns on, the idle device's drain-source voltage rises at dv/dt. The Miller current
C_rss·dv/dt flows out through the idle device's gate resistance and raises its gate above the off-level by

    ΔV_Miller = R_g,off·C_rss·dv/dt,   bounded by the capacitive divider  ΔV ≤ ΔV_ds·C_rss/C_iss        (1)

(the whole swing coupled with no resistance to drain it). With a shared source lead, the change of current in
the idle device's source inductance adds L_s·|di/dt| to the gate loop                                 (2)

References
----------
.. [1] B. J. Baliga, *Fundamentals of Power Semiconductor Devices*, Springer, 2008, ch. 6 (dV/dt-induced
   turn-on of power MOSFETs through C_gd and the gate resistance) - from memory.
.. [2] N. Mohan, T. M. Undeland, W. P. Robbins, *Power Electronics*, 3rd ed., Wiley, 2003, ch. 22 - from memory.
"""

from __future__ import annotations

import numpy as np

__all__ = ["induced_gate_voltage"]


def induced_gate_voltage(gate_resistance, c_rss, c_iss, dv_dt, voltage_swing, common_source_inductance=0.0,
                         di_dt=0.0):
    """Rise of the idle device's gate above its off-level [V], Eqs. (1) and (2).

    Parameters
    ----------
    gate_resistance : float or ndarray
        Total off-state gate-loop resistance of the idle device R_g,off [ohm].
    c_rss, c_iss : float or ndarray
        Its reverse transfer and input capacitances [F].
    dv_dt : float or ndarray
        Rate of rise of its drain-source voltage [V/s].
    voltage_swing : float or ndarray
        Total drain-source swing ΔV_ds (the bus voltage) [V].
    common_source_inductance : float or ndarray
        Source inductance shared by its gate loop (0 for a Kelvin source taken as ideal) [H].
    di_dt : float or ndarray
        Rate of change of its current during the partner's edge [A/s].
    """
    miller = np.minimum(gate_resistance * c_rss * np.abs(dv_dt), voltage_swing * c_rss / c_iss)  # Eq. (1)
    return miller + common_source_inductance * np.abs(di_dt)  # Eq. (2)
