"""The whole turn-off transient of a switch in a leg: voltage rise, then the current fall with the loop ring.

Voltage rise (Miller plateau). The node capacitance C_node(v) = C_oss(v) + C_oss,opp(V_bus − v) of both
devices is charged by the load current I minus the channel current, at the rate

    dv/dt = min[(V_pl − V_off)/(R_g·C_rss(v)),  I/C_node(v)]                                        (1)

(the smaller of the gate-limited and the load-limited rate; margincheck.physics.switching). The loop
inductance carries the switch-branch current i_L = I − C_oss,opp·dv/dt. When v reaches V_bus the opposite
diode takes over; i_L is continuous, the channel carries i_ch0 = I − C_node(V_bus)·dv/dt, that is the gate
sits at v_gs0 = V_th + i_ch0/g_fs, and falls with the gate-loop time constant τ = R_g·C_iss + g_fs·L_s:

    i_ch(t) = g_fs·(V_off + (v_gs0 − V_off)·exp(−t/τ) − V_th), clipped at 0                           (2)

while the loop rings (margincheck.physics.ringing, Eq. (1)), starting at v = V_bus, so that the output
capacitance keeps its charging current C_oss·dv/dt and the voltage runs on past the bus. A fast gate
whose edge is load-limited ends the voltage rise with the channel already off: the ring is then the abrupt
step I·√(L/C). The rise itself is integrated in voltage, t_rv = ∫0^V_bus dv/(dv/dt).
"""

from __future__ import annotations

from typing import Callable

import numpy as np

from margincheck.physics.ringing import resonant_peak_voltage
from margincheck.physics.switching import (
    gate_limited_turn_off_dv_dt,
    gate_loop_time_constant,
    load_limited_dv_dt,
)

__all__ = ["resonant_turn_off_peak", "voltage_rise"]

_MAX_STEPS = 20_000  # RK4 steps per corner: the step budget of the ring solver

Capacitance = Callable[[np.ndarray], np.ndarray]
_RISE_POINTS = 64


def voltage_rise(bus_voltage, drain_current, gate_limited: Callable[[np.ndarray], np.ndarray] | None,
                 c_oss: Capacitance, c_oss_opposite: Capacitance):
    """Highest dv/dt over the voltage rise [V/s], its duration t_rv [s], and dv/dt when v reaches V_bus [V/s].

    ``gate_limited`` gives the gate-limited rate [V/s] on a grid of voltages (one row per corner), e.g.
    :func:`margincheck.physics.switching.gate_limited_turn_off_dv_dt` with C_rss(v); the capacitances are
    callables C(v) [F], Eq. (1). Without ``gate_limited`` the gate does not limit the rise (the conservative,
    fastest case).
    """
    bus = np.asarray(bus_voltage, dtype=float)
    grid = bus[..., None] * np.linspace(0.0, 1.0, _RISE_POINTS)
    node = c_oss(grid) + c_oss_opposite(bus[..., None] - grid)
    with np.errstate(divide="ignore"):
        load_limited = load_limited_dv_dt(np.asarray(drain_current)[..., None], node)
    rate = load_limited if gate_limited is None else np.minimum(gate_limited(grid), load_limited)  # Eq. (1)
    duration = np.trapezoid(1.0 / rate, grid, axis=-1)
    return rate.max(axis=-1), duration, rate[..., -1]


def resonant_turn_off_peak(bus_voltage, loop_inductance, loop_resistance, drain_current, v_gs_th, v_drive_off,
                           transconductance, gate_resistance, c_iss, common_source_inductance,
                           c_rss: Capacitance | None, c_oss: Capacitance, c_oss_opposite: Capacitance,
                           steps_per_period: int = 60):
    """Peak drain-source voltage of the turn-off transient, every corner at once [V].

    Parameters
    ----------
    bus_voltage, loop_inductance, loop_resistance, drain_current : float or ndarray
        V_bus [V], L_loop [H], R_loop [ohm], I [A].
    v_gs_th, v_drive_off, transconductance, gate_resistance, c_iss, common_source_inductance : float or ndarray
        The gate-drive model's V_th [V], V_off [V], g_fs [S], R_g [ohm], C_iss [F], L_s [H].
    c_rss, c_oss, c_oss_opposite : callable
        C(v) [F] of this device's reverse transfer and output capacitance, and of the opposite device's output
        capacitance (a callable returning zeros when there is none).
    steps_per_period : int
        RK4 steps per ring period 2π√(L·C_oss(V_bus)); the number of steps follows the longest corner
        (between 100 and 20,000). A corner whose current fall would need more is out of the model's range
        and gives NaN (the fixed-step solver would be unstable there).
    """
    bus, inductance, current, threshold, off, gfs, resistance, tau = np.broadcast_arrays(*(
        np.asarray(value, dtype=float) for value in (
            bus_voltage, loop_inductance, drain_current, v_gs_th, v_drive_off, transconductance, gate_resistance,
            gate_loop_time_constant(gate_resistance, c_iss, transconductance, common_source_inductance))))
    gate_limited = None if c_rss is None else (lambda grid: gate_limited_turn_off_dv_dt(
        threshold[..., None], off[..., None], current[..., None], gfs[..., None], resistance[..., None], c_rss(grid)))
    _, _, rate_at_bus = voltage_rise(bus, current, gate_limited, c_oss, c_oss_opposite)
    opposite_at_zero = c_oss_opposite(np.zeros_like(bus))
    node_at_bus = c_oss(bus) + opposite_at_zero
    start_gate = threshold + np.maximum(current - node_at_bus * rate_at_bus, 0.0) / gfs
    # The loop inductance carries the switch-branch current, which is continuous as the diode takes over:
    # the load current less what was charging the opposite device's output capacitance.
    start_current = current - opposite_at_zero * rate_at_bus

    def channel_current(time):
        gate = off + (start_gate - off) * np.exp(-time / tau)  # Eq. (2)
        return np.maximum(gfs * (gate - threshold), 0.0)

    with np.errstate(divide="ignore", invalid="ignore"):
        fall = np.where(start_gate > threshold, tau * np.log((start_gate - off) / (threshold - off)), 0.0)
    ring_period = 2.0 * np.pi * np.sqrt(inductance * c_oss(bus))
    duration = fall + 1.25 * ring_period
    with np.errstate(divide="ignore", invalid="ignore"):
        needed = duration / ring_period * steps_per_period
    resolvable = np.isfinite(needed) & (needed <= _MAX_STEPS)
    steps = int(np.clip(np.ceil(np.max(needed, where=resolvable, initial=0.0)), 100, _MAX_STEPS))
    with np.errstate(over="ignore", invalid="ignore", divide="ignore"):
        peak = resonant_peak_voltage(bus, inductance, loop_resistance, start_current, channel_current, c_oss,
                                     np.where(resolvable, duration, 0.0), steps)
    return np.where(resolvable, peak, np.nan)
