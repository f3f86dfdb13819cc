"""An independent double-pulse circuit, solved with scipy's Radau, and its samples as a scope would take them.

Written apart from margincheck (which it never imports). The circuit, in SI units:

- a DC bus ``bus_voltage`` feeds the commutation loop: inductance ``loop_inductance`` (of which
  ``common_source_inductance`` is shared with the gate loop) and series resistance ``loop_resistance``;
- the device under test (low side): a channel in parallel with C_oss (constant) in series with its ESR
  ``oss_resistance``; the channel current is g·softplus(v_gs,die − V_th)·tanh(v_ds/(i_sat·R_on)), a
  transconductance device with a linear region;
- the opposite (high-side) device is a diode, i = I_s·(exp(−v_o/(n·V_T)) − 1), with capacitance C_d and a
  resistance ``idle_resistance`` across it (which damps the L-C_d ring after turn-on and carries V_bus/R while
  the diode blocks);
- the load inductor ``load_inductance`` across the diode (a state, so its current rises during each pulse);
- the gate, in one of two modes (``gate_drive``):

  * ``"prescribed"`` (the default): the die gate voltage is given (piecewise linear ramps, no Miller plateau);
    this checks the power loop (commutation, the C_oss ring, the turn-on dip, the drop of L_s·di/dt on the
    measured gate), not the gate loop;
  * ``"driven"``: a driver steps between ``v_on`` and ``v_off`` at the ramps' instants, through R_g
    (``r_g_on`` while the driver is at v_on, ``r_g_off`` while at v_off; external + internal resistance), into
    the die's C_gs (gate to die source) and C_gd (gate to the internal drain node v_c, where C_oss sits). In this
    mode ``c_oss`` is C_ds alone (the output capacitance with the gate held is C_ds + C_gd). C_gd is constant
    (``c_gd``) or, with ``c_gd_low`` set, a smoothed two-value step in v_dg = v_c − v_gs,die:
    C_gd = C_low + (C_high − C_low)·½·(1 − tanh((v_dg − V_knee)/w)), high below the knee, low above (a Miller
    plateau whose length depends on voltage); its charge Q_gd(v_dg) = ∫₀^v_dg C_gd dv is in closed form.

- ``source_connection``: ``"shared"`` (the default) returns the gate loop through the common-source inductance
  L_s, ``"kelvin"`` does not (k = 1 or 0 below). The measured (pin) gate voltage is v_gs,die + k·L_s·di_d/dt.

States: i_d (the loop current, equal to the drain current), v_c (C_oss voltage), v_o (diode voltage, cathode
positive) and i_load; with a driven gate also v_gs,die and the gate charge q_g = ∫i_g dt. Kirchhoff:
V_bus = L·di_d/dt + R·i_d + v_o + v_ds; C_d·dv_o/dt = i_f(v_o) + i_d − i_load − v_o/R_idle;
L_load·di_load/dt = v_o; v_ds = v_c + R_oss·(i_d − i_ch(v_ds)), solved by Newton's method at every evaluation.
Prescribed gate: C_oss·dv_c/dt = i_d − i_ch. Driven gate (di_d/dt is explicit in the states, from the first
equation):

- gate loop:  i_g = (v_drv(t) − v_gs − k·L_s·di_d/dt)/R_g (the gate current's own flow through L_s neglected:
  L_s·di_g/dt is small beside L_s·di_d/dt, i_g being ~1 A against a drain di/dt of amperes per nanosecond);
- gate node:  i_g + i_gd = C_gs·dv_gs/dt,  i_gd = C_gd·d(v_c − v_gs)/dt;
- drain node: i_d − i_ch = C_ds·dv_c/dt + i_gd (i_d − i_ch is the current through R_oss);

a 2×2 linear system in (dv_gs/dt, dv_c/dt), solved by Cramer's rule at every evaluation.

The ring after turn-off is the series R-L-C of L, R + R_oss and C_oss (the diode conducts the load current, its
dynamic resistance n·V_T/I a few mΩ): ζ = ((R + R_oss)/2)·√(C_oss/L), f_n = 1/(2π√(L·C_oss)).
"""

from __future__ import annotations

from dataclasses import dataclass, field
from functools import partial

import numpy as np
from scipy.integrate import solve_ivp


@dataclass(frozen=True)
class Circuit:
    bus_voltage: float = 400.0
    loop_inductance: float = 25e-9
    common_source_inductance: float = 1.5e-9
    loop_resistance: float = 0.02
    oss_resistance: float = 1.0
    c_oss: float = 100e-12
    diode_capacitance: float = 50e-12
    idle_resistance: float = 150.0
    saturation_current: float = 1e-12
    emission_voltage: float = 0.05        # n·V_T [V]
    load_inductance: float = 50e-6
    start_current: float = 20.0
    transconductance: float = 10.0
    v_gs_th: float = 4.0
    softplus_width: float = 0.2
    r_on: float = 0.05
    v_on: float = 15.0
    v_off: float = -3.0
    # gate at the die: (instant [s], ramp rate [V/s]) of the first turn-off, second turn-on, second turn-off
    ramps: tuple = ((0.3e-6, -0.05e9), (1.3e-6, 0.1e9), (1.8e-6, -0.05e9))
    end_time: float = 2.3e-6
    gate_drive: str = "prescribed"      # or "driven" (then the ramps' rates are unused, only their instants)
    source_connection: str = "shared"   # or "kelvin"
    r_g_on: float = 10.0                # gate resistance while the driver is at v_on [Ω]
    r_g_off: float = 10.0               # gate resistance while the driver is at v_off [Ω]
    c_gs: float = 2e-9
    c_gd: float = 100e-12               # C_gd, constant, or its high value (below the knee) with c_gd_low set
    c_gd_low: float | None = None       # C_gd above the knee [F]; None: C_gd constant
    c_gd_knee: float = 20.0             # v_dg of the step [V]
    c_gd_knee_width: float = 2.0        # w, the step's smoothing [V]

    def __post_init__(self):
        if self.gate_drive not in ("prescribed", "driven"):
            raise ValueError(f"gate_drive: {self.gate_drive!r} is neither 'prescribed' nor 'driven'")
        if self.source_connection not in ("shared", "kelvin"):
            raise ValueError(f"source_connection: {self.source_connection!r} is neither 'shared' nor 'kelvin'")

    @property
    def gate_loop_inductance(self) -> float:
        """k·L_s: the common-source inductance the gate loop shares (0 for a Kelvin source) [H]."""
        return self.common_source_inductance if self.source_connection == "shared" else 0.0

    @property
    def ring_damping_ratio(self) -> float:
        """ζ of the series R-L-C ring after turn-off."""
        return 0.5 * (self.loop_resistance + self.oss_resistance) * np.sqrt(self.c_oss / self.loop_inductance)

    def gate(self, t: float) -> float:
        """The prescribed die gate voltage [V]."""
        level = self.v_on
        for instant, rate in self.ramps:
            target = self.v_off if rate < 0 else self.v_on
            if t > instant:
                level = float(np.clip(level + rate * (t - instant), min(level, target), max(level, target)))
                level = target if abs(level - target) < 1e-12 else level
        return level

    def driver_on(self, t: float) -> bool:
        """Whether the driver is at v_on at ``t`` (it switches at each ramp's instant, toward the ramp's sign)."""
        on = True
        for instant, rate in self.ramps:
            if t >= instant:
                on = rate > 0
        return on

    def gate_drain_capacitance(self, v_dg: float) -> float:
        """C_gd(v_dg) [F]: constant, or the smoothed step from c_gd (below the knee) to c_gd_low (above)."""
        if self.c_gd_low is None:
            return self.c_gd
        below = 0.5 * (1.0 - np.tanh((v_dg - self.c_gd_knee) / self.c_gd_knee_width))
        return self.c_gd_low + (self.c_gd - self.c_gd_low) * below

    def gate_drain_charge(self, v_dg):
        """Q_gd(v_dg) = ∫₀^v_dg C_gd dv [C]; ½·(v − w·ln cosh((v − V_knee)/w)) integrates the step's ½·(1 − tanh).
        """
        if self.c_gd_low is None:
            return self.c_gd * v_dg
        width = self.c_gd_knee_width

        def log_cosh(v):
            x = (v - self.c_gd_knee) / width
            return np.logaddexp(x, -x) - np.log(2.0)

        below = 0.5 * (v_dg - width * (log_cosh(v_dg) - log_cosh(0.0)))
        return self.c_gd_low * v_dg + (self.c_gd - self.c_gd_low) * below

    def channel(self, v_gs: float, v_ds: float) -> tuple[float, float]:
        """Channel current [A] and its derivative in v_ds [S]."""
        x = (v_gs - self.v_gs_th) / self.softplus_width
        drive = self.softplus_width * (np.logaddexp(0.0, x))
        saturation = self.transconductance * drive
        if saturation <= 0.0:
            return 0.0, 0.0
        scale = saturation * self.r_on
        argument = np.clip(v_ds / scale, -50.0, 50.0)
        return saturation * np.tanh(argument), (1.0 - np.tanh(argument) ** 2) / self.r_on

    def v_ds(self, v_c: float, i_d: float, v_gs: float) -> tuple[float, float]:
        """Solve v_ds = v_c + R_oss·(i_d − i_ch(v_ds)); return v_ds and i_ch."""
        v = v_c
        for _ in range(30):
            i_ch, g = self.channel(v_gs, v)
            residual = v - v_c - self.oss_resistance * (i_d - i_ch)
            v -= residual / (1.0 + self.oss_resistance * g)
            if abs(residual) < 1e-9 * (1.0 + abs(v)):
                break
        return v, self.channel(v_gs, v)[0]

    def power_loop(self, i_d: float, v_o: float, i_load: float, v_ds: float) -> tuple[float, float, float]:
        """di_d/dt, dv_o/dt and di_load/dt from the power loop's Kirchhoff equations."""
        forward = self.saturation_current * np.expm1(min(-v_o / self.emission_voltage, 60.0))
        return ((self.bus_voltage - self.loop_resistance * i_d - v_o - v_ds) / self.loop_inductance,
                (forward + i_d - i_load - v_o / self.idle_resistance) / self.diode_capacitance,
                v_o / self.load_inductance)

    def gate_current(self, v_gs: float, di_d: float, on: bool) -> float:
        """i_g = (v_drv − v_gs,die − k·L_s·di_d/dt)/R_g [A] of the driven gate."""
        drive, resistance = (self.v_on, self.r_g_on) if on else (self.v_off, self.r_g_off)
        return (drive - v_gs - self.gate_loop_inductance * di_d) / resistance

    def derivatives(self, t: float, y: np.ndarray, on: bool | None = None) -> np.ndarray:
        """The states' derivatives; ``on`` (driven gate) is the driver's state, by default ``driver_on(t)``."""
        if self.gate_drive == "driven":
            return self._driven_derivatives(y, self.driver_on(t) if on is None else on)
        i_d, v_c, v_o, i_load = y
        v_ds, i_ch = self.v_ds(v_c, i_d, self.gate(t))
        di_d, dv_o, di_load = self.power_loop(i_d, v_o, i_load, v_ds)
        return np.array([di_d, (i_d - i_ch) / self.c_oss, dv_o, di_load])

    def _driven_derivatives(self, y: np.ndarray, on: bool) -> np.ndarray:
        """States i_d, v_c, v_o, i_load, v_gs,die, q_g: the gate and drain nodes solved together (Cramer)."""
        i_d, v_c, v_o, i_load, v_gs, _ = y
        v_ds, i_ch = self.v_ds(v_c, i_d, v_gs)
        di_d, dv_o, di_load = self.power_loop(i_d, v_o, i_load, v_ds)
        i_g = self.gate_current(v_gs, di_d, on)
        c_gd = self.gate_drain_capacitance(v_c - v_gs)
        # [[C_gs + C_gd, −C_gd], [−C_gd, C_ds + C_gd]]·[dv_gs, dv_c] = [i_g, i_d − i_ch]
        determinant = self.c_gs * self.c_oss + c_gd * (self.c_gs + self.c_oss)
        dv_gs = ((self.c_oss + c_gd) * i_g + c_gd * (i_d - i_ch)) / determinant
        dv_c = (c_gd * i_g + (self.c_gs + c_gd) * (i_d - i_ch)) / determinant
        return np.array([di_d, dv_c, dv_o, di_load, dv_gs, i_g])


@dataclass
class Solution:
    circuit: Circuit
    time: np.ndarray
    v_ds: np.ndarray
    i_d: np.ndarray
    v_gs: np.ndarray           # measured at the pins: die + L_s·di/dt
    v_gs_idle: np.ndarray
    extra: dict = field(default_factory=dict)


def simulate(circuit: Circuit, sample_interval: float = 0.2e-9) -> Solution:
    """Solve the circuit from the first pulse's on-state and sample the clean waveforms uniformly.

    With a driven gate, ``extra`` also holds ``gate_current`` (i_g), ``gate_charge`` (q_g = ∫i_g dt from 0) and
    ``v_c`` (the voltage on C_ds and the drain end of C_gd)."""
    driven = circuit.gate_drive == "driven"
    i_d, v_o = circuit.start_current, circuit.bus_voltage
    for _ in range(20):              # the on-state: i_d = i_load + v_o/R_idle, v_o = V_bus − (R + R_on)·i_d
        i_d = circuit.start_current + v_o / circuit.idle_resistance
        v_o = circuit.bus_voltage - (circuit.loop_resistance + circuit.r_on) * i_d
    v_c = circuit.bus_voltage - circuit.loop_resistance * i_d - v_o
    start = np.array([i_d, v_c, v_o, circuit.start_current] + ([circuit.v_on, 0.0] if driven else []))
    tolerance = [1e-6] * 4 + ([1e-6, 1e-15] if driven else [])
    breaks = sorted({0.0, circuit.end_time, *[instant for instant, _ in circuit.ramps if instant < circuit.end_time]})
    time = np.arange(0.0, circuit.end_time, sample_interval)
    states = []
    for begin, end in zip(breaks[:-1], breaks[1:]):
        on = circuit.driver_on(begin)        # the driver's state through the segment (it switches at breaks)
        solution = solve_ivp(partial(circuit.derivatives, on=on), (begin, end), start, method="Radau",
                             rtol=1e-8, atol=tolerance, max_step=0.5e-9, dense_output=True)
        assert solution.success, solution.message
        inside = (time >= begin) & (time < end)
        states.append(solution.sol(time[inside]))
        start = solution.y[:, -1]
    states = np.concatenate(states, axis=1)
    rates = np.array([circuit.derivatives(t, y) for t, y in zip(time, states.T)]).T
    i_d, v_c, v_o = states[:3]
    die_gate = states[4] if driven else np.array([circuit.gate(t) for t in time])
    v_ds = np.array([circuit.v_ds(*point)[0] for point in zip(v_c, i_d, die_gate)])
    di_dt = rates[0]
    v_gs = die_gate + circuit.gate_loop_inductance * di_dt
    v_gs_idle = np.full_like(time, circuit.v_off)
    extra = {"die_gate": die_gate, "di_dt": di_dt, "v_o": v_o}
    if driven:
        extra.update(gate_current=rates[5], gate_charge=states[5], v_c=v_c)
    return Solution(circuit, time, v_ds, i_d, v_gs, v_gs_idle, extra)


def scope(solution: Solution, sample_interval: float = 0.4e-9, noise: float = 0.003, skew: float = 0.0,
          seed: int = 7) -> dict:
    """Sample like an 8-bit scope: uniform steps, Gaussian noise of ``noise`` × each channel's full scale,
    quantised to 256 codes over the full scale, the current probe late by ``skew`` [s]."""
    rng = np.random.default_rng(seed)
    time = np.arange(solution.time[0] + 5e-9, solution.time[-1] - 5e-9, sample_interval)
    ranges = {"v_ds": (-100.0, 700.0), "i_d": (-10.0, 40.0), "v_gs": (-10.0, 25.0), "v_gs_idle": (-10.0, 25.0)}
    channels = {}
    for name, (bottom, top) in ranges.items():
        delay = skew if name == "i_d" else 0.0
        clean = np.interp(time - delay, solution.time, getattr(solution, name))
        noisy = clean + rng.normal(0.0, noise * (top - bottom), time.size)
        step = (top - bottom) / 256.0
        channels[name] = np.clip(bottom + step * np.round((noisy - bottom) / step), bottom, top)
    channels["time"] = time
    return channels
