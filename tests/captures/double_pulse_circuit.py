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
- the gate at the die is prescribed (piecewise linear ramps, no Miller plateau): this circuit checks the power
  loop (commutation, the C_oss ring, the turn-on dip, the drop of L_s·di/dt on the measured gate), not the gate
  loop. The measured gate voltage is v_gs,die + L_s·di_d/dt (measured at the package pins).

States: i_d (the loop current, equal to the drain current), v_c (C_oss voltage), v_o (diode voltage, cathode
positive) and i_load. Kirchhoff: V_bus = L·di_d/dt + R·i_d + v_o + v_ds; C_oss·dv_c/dt = i_d − i_ch;
C_d·dv_o/dt = i_f(v_o) + i_d − i_load − v_o/R_idle; L_load·di_load/dt = v_o;
v_ds = v_c + R_oss·(i_d − i_ch(v_ds)), solved by Newton's method at every evaluation.

The ring after turn-off is the series R-L-C of L, R + R_oss and C_oss (the diode conducts the load current, its
dynamic resistance n·V_T/I a few mΩ): ζ = ((R + R_oss)/2)·√(C_oss/L), f_n = 1/(2π√(L·C_oss)).
"""

from __future__ import annotations

from dataclasses import dataclass, field

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

    def derivatives(self, t: float, y: np.ndarray) -> np.ndarray:
        i_d, v_c, v_o, i_load = y
        v_ds, i_ch = self.v_ds(v_c, i_d, self.gate(t))
        forward = self.saturation_current * np.expm1(min(-v_o / self.emission_voltage, 60.0))
        return np.array([
            (self.bus_voltage - self.loop_resistance * i_d - v_o - v_ds) / self.loop_inductance,
            (i_d - i_ch) / self.c_oss,
            (forward + i_d - i_load - v_o / self.idle_resistance) / self.diode_capacitance,
            v_o / self.load_inductance,
        ])


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
    """Solve the circuit from the first pulse's on-state and sample the clean waveforms uniformly."""
    i_d, v_o = circuit.start_current, circuit.bus_voltage
    for _ in range(20):              # the on-state: i_d = i_load + v_o/R_idle, v_o = V_bus − (R + R_on)·i_d
        i_d = circuit.start_current + v_o / circuit.idle_resistance
        v_o = circuit.bus_voltage - (circuit.loop_resistance + circuit.r_on) * i_d
    v_c = circuit.bus_voltage - circuit.loop_resistance * i_d - v_o
    start = np.array([i_d, v_c, v_o, circuit.start_current])
    breaks = sorted({0.0, circuit.end_time, *[instant for instant, _ in circuit.ramps]})
    time = np.arange(0.0, circuit.end_time, sample_interval)
    states = []
    for begin, end in zip(breaks[:-1], breaks[1:]):
        solution = solve_ivp(circuit.derivatives, (begin, end), start, method="Radau", rtol=1e-8,
                             atol=[1e-6, 1e-6, 1e-6, 1e-6], max_step=0.5e-9, dense_output=True)
        assert solution.success, solution.message
        inside = (time >= begin) & (time < end)
        states.append(solution.sol(time[inside]))
        start = solution.y[:, -1]
    i_d, v_c, v_o, _ = np.concatenate(states, axis=1)
    v_ds = np.empty_like(time)
    die_gate = np.array([circuit.gate(t) for t in time])
    di_dt = np.empty_like(time)
    for k, t in enumerate(time):
        y = np.array([i_d[k], v_c[k], v_o[k], 0.0])
        v_ds[k] = circuit.v_ds(v_c[k], i_d[k], die_gate[k])[0]
        di_dt[k] = circuit.derivatives(t, y)[0]
    v_gs = die_gate + circuit.common_source_inductance * di_dt
    v_gs_idle = np.full_like(time, circuit.v_off)
    return Solution(circuit, time, v_ds, i_d, v_gs, v_gs_idle,
                    {"die_gate": die_gate, "di_dt": di_dt, "v_o": v_o})


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
