"""First-order gate-drive model of the drain-current transition of a MOSFET or GaN HEMT.

The gate loop is a series circuit: the driver step ``V_drv`` through the total gate resistance ``R_g`` charges
the input capacitance ``C_iss``, and the drain current flows through the common-source inductance ``L_s``
that both loops share. In the active region the channel current follows the gate voltage,
``i_d = g_fs·(v_gs − V_th)``. Kirchhoff's voltage law around the gate loop gives

    V_drv = R_g·C_iss·dv_gs/dt + v_gs + L_s·di_d/dt,   di_d/dt = g_fs·dv_gs/dt                     (1)

so ``v_gs`` relaxes exponentially towards ``V_drv`` with the time constant

    τ = R_g·C_iss + g_fs·L_s                                                                       (2)

and the current slew rate is ``di_d/dt = g_fs·(V_drv − v_gs)/τ``, largest where ``v_gs`` is furthest from
``V_drv``: at the plateau ``V_pl = V_th + I/g_fs`` at the start of the turn-off current fall, at ``V_th`` at
the start of the turn-on current rise. ``L_s`` is negative feedback: it slows both edges.

All functions take floats or numpy arrays in SI units and broadcast. Where an edge cannot happen in the
model (the off-level does not reach below the threshold, or the on-level does not reach the plateau) they
return NaN, never a number that looks valid.

References
----------
.. [1] N. Mohan, T. M. Undeland, W. P. Robbins, *Power Electronics: Converters, Applications, and Design*,
   3rd ed., Wiley, 2003, ch. 22 (MOSFET switching waveforms with an inductive load; exponential gate
   charging of C_gs + C_gd through R_g) - from memory.
.. [2] B. J. Baliga, *Fundamentals of Power Semiconductor Devices*, Springer, 2008, ch. 6 (power MOSFET
   turn-on and turn-off transients with a gate resistance) - from memory.
.. [3] Y. Xiao, H. Shah, T. P. Chow, R. J. Gutmann, "Analytical modeling and experimental evaluation of
   interconnect parasitic inductance on MOSFET switching characteristics", Proc. IEEE APEC 2004, pp. 516-521
   (common-source inductance as feedback into the gate loop) - from memory.

The closed forms are checked in the tests against a numerical solution of the gate-loop ODE (1) with
``scipy.integrate.solve_ivp``.
"""

from __future__ import annotations

import numpy as np

__all__ = [
    "gate_loop_time_constant",
    "miller_plateau_voltage",
    "turn_off_di_dt",
    "turn_on_di_dt",
]


def gate_loop_time_constant(gate_resistance, c_iss, transconductance, common_source_inductance):
    """Time constant of the gate loop during the current transition [s].

    Parameters
    ----------
    gate_resistance : float or ndarray
        Total gate-loop resistance R_g: external + internal (+ driver output) [ohm].
    c_iss : float or ndarray
        Input capacitance C_iss [F].
    transconductance : float or ndarray
        Forward transconductance g_fs [S].
    common_source_inductance : float or ndarray
        Inductance shared by the gate loop and the power loop, L_s [H].

    Returns
    -------
    float or ndarray
        τ = R_g·C_iss + g_fs·L_s [s], Eq. (2) of the module notes.
    """
    return gate_resistance * c_iss + transconductance * common_source_inductance  # Eq. (2)


def miller_plateau_voltage(v_gs_th, transconductance, drain_current):
    """Gate-source voltage at which the channel carries the load current, V_pl = V_th + I/g_fs [V].

    Parameters
    ----------
    v_gs_th : float or ndarray
        Gate threshold voltage V_th [V].
    transconductance : float or ndarray
        Forward transconductance g_fs [S].
    drain_current : float or ndarray
        Load current being switched, I [A].
    """
    return v_gs_th + drain_current / transconductance


def turn_off_di_dt(v_gs_th, v_drive_off, drain_current, transconductance, gate_resistance, c_iss,
                   common_source_inductance):
    """Largest current slew rate |di/dt| at turn-off [A/s], reached at the start of the current fall.

    Parameters
    ----------
    v_gs_th : float or ndarray
        Gate threshold voltage V_th [V].
    v_drive_off : float or ndarray
        Gate-drive off-level V_off [V] (0 V or negative).
    drain_current : float or ndarray
        Current being turned off, I [A].
    transconductance : float or ndarray
        Forward transconductance g_fs [S].
    gate_resistance : float or ndarray
        Total turn-off gate-loop resistance R_g [ohm].
    c_iss : float or ndarray
        Input capacitance C_iss [F].
    common_source_inductance : float or ndarray
        Common-source inductance L_s [H].

    Returns
    -------
    float or ndarray
        |di/dt|_off,max = (g_fs·(V_th − V_off) + I)/τ [A/s]; NaN where V_off ≥ V_th (no turn-off).

    Notes
    -----
    From Eq. (1) with ``V_drv = V_off`` evaluated at ``v_gs = V_pl``:
    ``g_fs·(V_pl − V_off)/τ = (g_fs·(V_th − V_off) + I)/τ``.
    """
    tau = gate_loop_time_constant(gate_resistance, c_iss, transconductance, common_source_inductance)
    rate = (transconductance * (v_gs_th - v_drive_off) + drain_current) / tau  # Eq. (1) at v_gs = V_pl
    return np.where(np.asarray(v_drive_off) < v_gs_th, rate, np.nan)[()]


def turn_on_di_dt(v_gs_th, v_drive_on, transconductance, gate_resistance, c_iss, common_source_inductance):
    """Largest current slew rate di/dt at turn-on [A/s], reached as v_gs crosses the threshold.

    Parameters
    ----------
    v_gs_th : float or ndarray
        Gate threshold voltage V_th [V].
    v_drive_on : float or ndarray
        Gate-drive on-level V_on [V].
    transconductance, gate_resistance, c_iss, common_source_inductance : float or ndarray
        As for :func:`turn_off_di_dt` (R_g is the turn-on resistance) [S], [ohm], [F], [H].

    Returns
    -------
    float or ndarray
        di/dt_on,max = g_fs·(V_on − V_th)/τ [A/s]; NaN where V_on ≤ V_th.
    """
    tau = gate_loop_time_constant(gate_resistance, c_iss, transconductance, common_source_inductance)
    rate = transconductance * (v_drive_on - v_gs_th) / tau  # Eq. (1) at v_gs = V_th
    return np.where(np.asarray(v_drive_on) > v_gs_th, rate, np.nan)[()]
