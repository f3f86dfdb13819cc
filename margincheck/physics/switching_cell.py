"""The double-pulse / half-bridge commutation cell as one circuit, simulated for a turn-off or a turn-on edge of
the switch under test, every corner at once.

Circuit (lumped; nodes B bus +, P opposite die drain, D switch node = die drain of the switch under test,
S its die source, N bus −)::

    V_bus ─ R_s ─ L' (∥ R_p) ─ P ─┬─ opposite device: C_gs,o, C_gd,o(v), C_ds,o(v), channel, diode (recovery)
                                  │  die source S_o ─ L_s,o ─ D
                load I (P → D) ───┤
                                  D ─ switch under test: C_gs, C_gd(v), C_ds(v) + C_x, channel, body diode
                                      die source S ─ L_s ─ N

with L' = L_loop − L_s − L_s,o (the common-source inductances are part of the commutation loop). Kirchhoff's
laws, one row per node or loop, in charge/flux form d/dt q(x) = f(x, t):

    gate G:     d/dt[C_gs·v_gs − Q_gd(v_ds − v_gs)]               = i_g                                (1)
    drain D:    d/dt[Q_ds(v_ds) + C_x·v_ds + Q_gd(v_ds − v_gs)]   = i_L − i_ch(v_gs, v_ds) + i_bd(v_ds)  (2)
    gate loop:  d/dt[L_g·i_g + k·L_s·(i_L + i_g)]                 = V_drv(t) − R_g·i_g − v_gs            (3)
    (the same three rows for the opposite device, its drain current i_L − I, its driver at V_off,o)      (4-6)
    power loop: d/dt[L'·i_ind + L_s,o·(i_L + k_o·i_go) + L_s·(i_L + k·i_g)] = V_bus − R_s·i_L − v_o − v_ds (7)
    damping:    d/dt[L'·i_ind/R_p]                                 = i_L − i_ind                         (8)
    recovery:   d/dt q_M                                            = (q_E − q_M)/T_M − q_M/τ            (9)
    IGBT tail:  d/dt[τ_t·i_t]                                       = w(Δ)·Δ,  Δ = α/(1 − α)·i_ch − i_t  (10)

k = 1 for a shared source (the gate loop returns through L_s, which also carries the drain current) and 0 for
a Kelvin source. The channel is a transconductance current source with an on-resistance knee,
i_ch = i_sat·tanh(v_ds/(R_on·i_sat)), i_sat = g_fs·(v_gs − V_th)⁺; the diodes are piecewise linear (forward
drop V_F, slope 1/R_D) with the corner rounded over 20 mV, so that no event handling is needed; the opposite
diode's reverse recovery is the charge-control model of Lauritzen and Ma with a piecewise-linear junction,
i_D = (q_E − q_M)/T_M, q_E = (τ + T_M)·(−v_o − V_F)⁺/R_D. A measured quality factor of the ring enters as R_p,
a resistance across L': it damps the ring at its frequency and carries no DC current, so unlike a series
resistance it does not subtract R·I from the peak at full current.

An IGBT (tail fraction α > 0) is a MOS channel driving a bipolar transistor: its collector current is the
channel's i_ch, which carries the share (1 − α) of the device's transconductance, plus the bipolar current
i_t, α/(1 − α)·i_ch in steady state (so the device still passes I = g_fs·(v_ge − V_th)). When the channel
turns off the bipolar current cannot follow: it is carried by the stored charge of the drift region, which
recombines with the tail time constant τ_t [4], so after the gate falls below threshold
i_t = α·I·exp(−t/τ_t) flows collector-emitter while v_ce is at the bus (row (10), w = 1 when Δ < 0). The
charge's build-up at turn-on is not modelled: there w = 100 (i_t follows the channel within τ_t/100), so that
the turn-on edge keeps the device's full transconductance. The tail adds V_bus·α·I·τ_t (less what falls
outside the energy window) to E_off and slows the end of the current fall by the share α.

References
----------
.. [1] P. O. Lauritzen, C. L. Ma, "A simple diode model with reverse recovery", IEEE Trans. Power Electron.
   6(2), 1991, pp. 188-191 (charge-control diode, Eq. (9)) - from memory.
.. [2] N. Mohan, T. M. Undeland, W. P. Robbins, *Power Electronics*, 3rd ed., Wiley, 2003, ch. 22 (the MOSFET
   as a transconductance with C_gs, C_gd(v), C_ds(v)) - from memory.
.. [3] J. Lemmon, M. Mazzola, J. Gafford, C. Parker, "Stability considerations for silicon carbide field-effect
   transistors", IEEE Trans. Power Electron. 28(10), 2013, p. 4453 (common-source inductance and C_gd
   feedback make the cell an oscillator during the current transition).
.. [4] B. J. Baliga, *Fundamentals of Power Semiconductor Devices*, Springer, 2008, ch. 9 (IGBT turn-off: the
   collector current falls abruptly by the channel's share, then decays with the high-level lifetime of the
   drift region's stored charge) - from memory.
The model is checked in the tests against closed-form limits, energy and charge balances, and a Radau
solution (scipy) of the same circuit written apart from this module.
"""

from __future__ import annotations

import dataclasses
import functools
from dataclasses import dataclass

import numpy as np

from margincheck.physics.capacitance import LogLinearCurve
from margincheck.physics.implicit_integrator import Trajectory, integrate

__all__ = ["Cell", "CellDevice", "CurveTable", "EDGES", "STATES", "cell_at", "simulate_edge"]

#: State vector: DUT gate, drain, gate current; opposite gate, drain, gate current; inductor and loop current;
#: the opposite diode's stored charge; the IGBT tail current of the switch under test.
STATES = ("v_gs", "v_ds", "i_g", "v_go", "v_o", "i_go", "i_ind", "i_L", "q_M", "i_tail")
V_GS, V_DS, I_G, V_GO, V_O, I_GO, I_IND, I_L, Q_M, I_TAIL = range(len(STATES))
EDGES = ("turn_off", "turn_on")
_ROUNDING = 0.02  # V: the corner of the channel's and diodes' (·)⁺
_TAIL_BUILD_UP = 100.0  # w of row (10) while the bipolar current rises: it follows the channel within τ_t/100
_TAIL_ROUNDING = 1e-3  # the corner of w, as a fraction of the load current


@dataclass(frozen=True)
class CurveTable:
    """A capacitance curve: points (voltages [V], capacitances [F]) times a scale per corner."""

    voltages: tuple[float, ...]
    values: tuple[float, ...]
    scale: np.ndarray

    @classmethod
    def constant(cls, capacitance) -> CurveTable:
        """A flat curve of ``capacitance`` [F] (per corner)."""
        return cls((0.0,), (1.0,), np.asarray(capacitance, dtype=float))

    def capacitance(self, voltage):
        """C(v) [F]."""
        if len(self.voltages) == 1:
            return self.values[0] * self.scale + 0.0 * voltage
        return _log_linear(self.voltages, self.values).capacitance(voltage) * self.scale

    def charge(self, voltage):
        """Q(v) = ∫0^v C [C]."""
        if len(self.voltages) == 1:
            return self.values[0] * self.scale * voltage
        return _log_linear(self.voltages, self.values).charge(voltage) * self.scale


#: The curves of a design, their logarithms taken once (CurveTable holds its points as hashable tuples).
_log_linear = functools.lru_cache(maxsize=64)(LogLinearCurve.of)


@dataclass(frozen=True)
class CellDevice:
    """One device of the cell, every field an array over corners (or a scalar) in SI units.

    ``shared`` is 1 for a gate loop returning through the common-source inductance, 0 for a Kelvin source.
    ``recovery_lifetime`` τ and ``recovery_transit`` T_M [s] set the diode's recovery (None: no stored charge).
    ``tail_fraction`` α and ``tail_time`` τ_t [s] make the device an IGBT with a turn-off tail (None: none);
    ``g_fs`` is then the whole device's transconductance, of which the channel carries the share 1 − α.
    """

    v_th: np.ndarray
    g_fs: np.ndarray
    r_on: np.ndarray
    c_iss: np.ndarray
    c_rss: CurveTable
    c_oss: CurveTable
    r_gate: np.ndarray
    l_gate: np.ndarray
    v_on: np.ndarray
    v_off: np.ndarray
    l_source: np.ndarray
    shared: np.ndarray
    v_f: np.ndarray
    r_diode: np.ndarray
    recovery_lifetime: np.ndarray | None = None
    recovery_transit: np.ndarray | None = None
    tail_fraction: np.ndarray | None = None
    tail_time: np.ndarray | None = None


def _channel_share(device: CellDevice):
    """The share of the device's transconductance the MOS channel carries: 1 − α for an IGBT, else 1."""
    return 1.0 if device.tail_fraction is None else 1.0 - device.tail_fraction


@dataclass(frozen=True)
class Cell:
    """The commutation cell: bus, load current, loop, the switch under test and the opposite device."""

    bus_voltage: np.ndarray
    load_current: np.ndarray
    loop_inductance: np.ndarray
    loop_resistance: np.ndarray
    dut: CellDevice
    opposite: CellDevice
    damping_conductance: np.ndarray = 0.0   # 1/R_p [S]; 0: no damping across L'
    node_capacitance: np.ndarray = 0.0      # C_x across the switch under test [F]

    @property
    def series_inductance(self) -> np.ndarray:
        """L' = L_loop − L_s − L_s,o [H]."""
        return self.loop_inductance - self.dut.l_source - self.opposite.l_source


def cell_at(value, index, corners: int):
    """``value`` (a Cell, a CellDevice, a CurveTable, or an array or scalar over ``corners`` corners) at the
    corners ``index`` (a slice or an index array) only; scalars are spread over the corners first."""
    if isinstance(value, CurveTable):
        return dataclasses.replace(value, scale=cell_at(value.scale, index, corners))
    if isinstance(value, (Cell, CellDevice)):
        return dataclasses.replace(value, **{item.name: cell_at(getattr(value, item.name), index, corners)
                                            for item in dataclasses.fields(value)})
    if value is None:
        return None
    return np.broadcast_to(np.asarray(value, dtype=float), (corners,))[index]


def _positive(value):
    """(value)⁺ rounded over _ROUNDING volts, and its derivative."""
    scaled = value / _ROUNDING
    return _ROUNDING * np.logaddexp(0.0, scaled), 0.5 * (1.0 + np.tanh(0.5 * scaled))


def channel_current(device: CellDevice, v_gs, v_ds):
    """i_ch = i_sat·tanh(v_ds/(R_on·i_sat)), i_sat = g_fs·(v_gs − V_th)⁺ [A], with ∂/∂v_gs and ∂/∂v_ds."""
    overdrive, d_overdrive = _positive(v_gs - device.v_th)
    g_fs = device.g_fs * _channel_share(device)
    saturation = g_fs * overdrive
    ratio = np.clip(v_ds / (device.r_on * np.maximum(saturation, 1e-30)), -40.0, 40.0)
    tanh = np.tanh(ratio)
    sech2 = 1.0 - tanh ** 2
    return (saturation * tanh, g_fs * d_overdrive * (tanh - ratio * sech2), sech2 / device.r_on)


def _diode_forward(device: CellDevice, v_ds):
    """Forward current of the body diode (source to drain) [A] and its derivative with respect to v_ds."""
    drop, slope = _positive(-v_ds - device.v_f)
    return drop / device.r_diode, -slope / device.r_diode


class CellEquations:
    """Rows (1)-(9) of the module notes for one edge: q(x), ∂q/∂x, f(x, t), ∂f/∂x over every corner."""

    def __init__(self, cell: Cell, drive_level):
        self.cell = cell
        self.drive = np.asarray(drive_level, dtype=float)
        opposite = cell.opposite
        self.recovers = opposite.recovery_lifetime is not None
        self.tails = cell.dut.tail_fraction is not None
        self.c_gs = _gate_source(cell.dut, cell.bus_voltage)
        self.c_gs_o = _gate_source(opposite, cell.bus_voltage)

    def subset(self, corners: np.ndarray) -> CellEquations:
        """The same equations at the corners of the index array ``corners`` only."""
        size = np.broadcast(self.cell.bus_voltage, self.cell.load_current, self.cell.dut.v_th).shape[0]
        return CellEquations(cell_at(self.cell, corners, size), cell_at(self.drive, corners, size))

    def _capacitances(self, device: CellDevice, v_gs, v_ds):
        drain_gate = v_ds - v_gs
        c_gd = device.c_rss.capacitance(drain_gate)
        c_ds = np.maximum(device.c_oss.capacitance(v_ds) - device.c_rss.capacitance(v_ds), 0.0)
        q_ds = device.c_oss.charge(v_ds) - device.c_rss.charge(v_ds)
        return c_gd, device.c_rss.charge(drain_gate), c_ds, q_ds

    def charges(self, x):
        """q(x) and ∂q/∂x, rows (1)-(9)."""
        cell, dut, opp = self.cell, self.cell.dut, self.cell.opposite
        n = x.shape[0]
        q = np.empty_like(x)
        dq = np.zeros((n, len(STATES), len(STATES)))
        c_gd, q_gd, c_ds, q_ds = self._capacitances(dut, x[:, V_GS], x[:, V_DS])
        q[:, 0] = self.c_gs * x[:, V_GS] - q_gd
        dq[:, 0, V_GS], dq[:, 0, V_DS] = self.c_gs + c_gd, -c_gd
        q[:, 1] = q_ds + cell.node_capacitance * x[:, V_DS] + q_gd
        dq[:, 1, V_GS], dq[:, 1, V_DS] = -c_gd, c_ds + cell.node_capacitance + c_gd
        c_gd_o, q_gd_o, c_ds_o, q_ds_o = self._capacitances(opp, x[:, V_GO], x[:, V_O])
        q[:, 3] = self.c_gs_o * x[:, V_GO] - q_gd_o
        dq[:, 3, V_GO], dq[:, 3, V_O] = self.c_gs_o + c_gd_o, -c_gd_o
        q[:, 4] = q_ds_o + q_gd_o
        dq[:, 4, V_GO], dq[:, 4, V_O] = -c_gd_o, c_ds_o + c_gd_o
        self._fluxes(x, q, dq)
        if self.recovers:
            q[:, 8] = x[:, Q_M]
            dq[:, 8, Q_M] = 1.0
        else:
            q[:, 8] = 0.0
        tail_time = dut.tail_time if self.tails else 0.0
        q[:, 9] = tail_time * x[:, I_TAIL]
        dq[:, 9, I_TAIL] = tail_time
        return q, dq

    def _fluxes(self, x, q, dq):
        """Rows (3), (6), (7), (8): gate-loop, power-loop and damping flux linkages."""
        cell, dut, opp = self.cell, self.cell.dut, self.cell.opposite
        series = np.broadcast_to(cell.series_inductance, x.shape[:1])
        own, other = dut.shared * dut.l_source, opp.shared * opp.l_source
        q[:, 2] = dut.l_gate * x[:, I_G] + own * (x[:, I_L] + x[:, I_G])
        dq[:, 2, I_G], dq[:, 2, I_L] = dut.l_gate + own, own
        q[:, 5] = opp.l_gate * x[:, I_GO] + other * (x[:, I_L] + x[:, I_GO])
        dq[:, 5, I_GO], dq[:, 5, I_L] = opp.l_gate + other, other
        q[:, 6] = (series * x[:, I_IND] + opp.l_source * x[:, I_L] + other * x[:, I_GO]
                   + dut.l_source * x[:, I_L] + own * x[:, I_G])
        dq[:, 6, I_IND], dq[:, 6, I_L], dq[:, 6, I_GO], dq[:, 6, I_G] = (
            series, opp.l_source + dut.l_source, other, own)
        q[:, 7] = cell.damping_conductance * series * x[:, I_IND]
        dq[:, 7, I_IND] = cell.damping_conductance * series

    def opposite_diode(self, x):
        """Forward current of the opposite device's diode [A], with ∂/∂v_o and ∂/∂q_M."""
        opp = self.cell.opposite
        drop, slope = _positive(-x[:, V_O] - opp.v_f)
        if not self.recovers:
            return drop / opp.r_diode, -slope / opp.r_diode, np.zeros_like(drop)
        transit, lifetime = opp.recovery_transit, opp.recovery_lifetime
        junction = (lifetime + transit) / opp.r_diode
        return (junction * drop - x[:, Q_M]) / transit, -junction * slope / transit, -1.0 / transit

    def currents(self, x, time):
        """f(x, t) and ∂f/∂x, rows (1)-(9) (the driver holds its final level for t > 0)."""
        cell, dut, opp = self.cell, self.cell.dut, self.cell.opposite
        n = x.shape[0]
        f = np.empty_like(x)
        df = np.zeros((n, len(STATES), len(STATES)))
        f[:, 0], df[:, 0, I_G] = x[:, I_G], 1.0
        i_ch, dch_gs, dch_ds = channel_current(dut, x[:, V_GS], x[:, V_DS])
        i_bd, dbd = _diode_forward(dut, x[:, V_DS])
        f[:, 1] = x[:, I_L] - i_ch - x[:, I_TAIL] + i_bd
        df[:, 1, I_L], df[:, 1, V_GS], df[:, 1, V_DS], df[:, 1, I_TAIL] = 1.0, -dch_gs, -dch_ds + dbd, -1.0
        f[:, 2] = self.drive - dut.r_gate * x[:, I_G] - x[:, V_GS]
        df[:, 2, I_G], df[:, 2, V_GS] = -dut.r_gate, -1.0
        f[:, 3], df[:, 3, I_GO] = x[:, I_GO], 1.0
        i_cho, dcho_gs, dcho_ds = channel_current(opp, x[:, V_GO], x[:, V_O])
        i_d, dd_v, dd_q = self.opposite_diode(x)
        f[:, 4] = x[:, I_L] - cell.load_current - i_cho + i_d
        df[:, 4, I_L], df[:, 4, V_GO], df[:, 4, V_O], df[:, 4, Q_M] = 1.0, -dcho_gs, -dcho_ds + dd_v, dd_q
        f[:, 5] = opp.v_off - opp.r_gate * x[:, I_GO] - x[:, V_GO]
        df[:, 5, I_GO], df[:, 5, V_GO] = -opp.r_gate, -1.0
        f[:, 6] = cell.bus_voltage - cell.loop_resistance * x[:, I_L] - x[:, V_O] - x[:, V_DS]
        df[:, 6, I_L], df[:, 6, V_O], df[:, 6, V_DS] = -cell.loop_resistance, -1.0, -1.0
        f[:, 7], df[:, 7, I_L], df[:, 7, I_IND] = x[:, I_L] - x[:, I_IND], 1.0, -1.0
        self._recovery_row(x, f, df)
        self._tail_row(x, f, df, (i_ch, dch_gs, dch_ds))
        return f, df

    def _tail_row(self, x, f, df, channel):
        """Row (10): the IGBT's bipolar current (i_t = 0 for a device without a tail)."""
        if not self.tails:
            f[:, 9], df[:, 9, I_TAIL] = -x[:, I_TAIL], -1.0
            return
        fraction = self.cell.dut.tail_fraction
        gain = fraction / (1.0 - fraction)
        i_ch, dch_gs, dch_ds = channel
        difference = gain * i_ch - x[:, I_TAIL]
        rounding = _TAIL_ROUNDING * np.abs(self.cell.load_current) + 1e-9
        scaled = difference / rounding
        rising, d_rising = rounding * np.logaddexp(0.0, scaled), 0.5 * (1.0 + np.tanh(0.5 * scaled))
        f[:, 9] = difference + (_TAIL_BUILD_UP - 1.0) * rising
        slope = 1.0 + (_TAIL_BUILD_UP - 1.0) * d_rising   # ∂f/∂Δ
        df[:, 9, V_GS], df[:, 9, V_DS], df[:, 9, I_TAIL] = slope * gain * dch_gs, slope * gain * dch_ds, -slope

    def _recovery_row(self, x, f, df):
        """Row (9): the stored charge of the opposite diode (q_M = 0 when it has none): dq_M/dt = i_D − q_M/τ."""
        if not self.recovers:
            f[:, 8], df[:, 8, Q_M] = -x[:, Q_M], -1.0
            return
        lifetime = self.cell.opposite.recovery_lifetime
        i_d, dd_v, dd_q = self.opposite_diode(x)
        f[:, 8] = i_d - x[:, Q_M] / lifetime
        df[:, 8, V_O] = dd_v
        df[:, 8, Q_M] = dd_q - 1.0 / lifetime


def _gate_source(device: CellDevice, bus_voltage):
    """C_gs = C_iss − C_rss(V_bus): C_iss is stated at a high drain voltage, where C_rss is small [F]."""
    return np.maximum(device.c_iss - device.c_rss.capacitance(bus_voltage), 0.05 * device.c_iss)


def on_state_voltage(device: CellDevice, v_gs, current):
    """v_ds at which the device carries ``current`` with the gate at ``v_gs`` [V] (an IGBT's channel its share
    1 − α, its bipolar current the rest); NaN where it cannot."""
    overdrive, _ = _positive(v_gs - device.v_th)
    saturation = device.g_fs * _channel_share(device) * overdrive
    current = current * _channel_share(device)  # an IGBT's channel carries the share 1 − α of it
    with np.errstate(divide="ignore", invalid="ignore"):
        fraction = current / saturation
        return np.where(fraction < 1.0, device.r_on * saturation * np.arctanh(np.minimum(fraction, 1.0 - 1e-15)),
                        np.nan)


def diode_forward_drop(device: CellDevice, current):
    """Voltage across the conducting diode for a forward ``current`` (its v_ds is minus this) [V]."""
    scaled = current * device.r_diode / _ROUNDING
    return device.v_f + _ROUNDING * np.where(scaled > 30.0, scaled, np.log(np.expm1(np.minimum(scaled, 30.0))))


def initial_state(cell: Cell, edge: str) -> np.ndarray:
    """The DC steady state before the edge: the switch under test on carrying I (turn-off), or off with the
    opposite diode carrying I (turn-on)."""
    dut, opp = cell.dut, cell.opposite
    current = np.asarray(cell.load_current, dtype=float)
    shape = np.broadcast(cell.bus_voltage, current, dut.v_th).shape
    x = np.zeros(shape + (len(STATES),))
    x[:, V_GO] = opp.v_off
    if edge == "turn_off":
        on_voltage = on_state_voltage(dut, dut.v_on, current)
        x[:, V_GS], x[:, V_DS] = dut.v_on, on_voltage
        x[:, V_O] = cell.bus_voltage - cell.loop_resistance * current - on_voltage
        x[:, I_IND], x[:, I_L] = current, current
        if dut.tail_fraction is not None:
            x[:, I_TAIL] = dut.tail_fraction * current
        return x
    drop = diode_forward_drop(opp, current)
    x[:, V_GS], x[:, V_O], x[:, V_DS] = dut.v_off, -drop, cell.bus_voltage + drop
    if opp.recovery_lifetime is not None:
        x[:, Q_M] = opp.recovery_lifetime * current
    return x


def _tolerances(cell: Cell, relative: float) -> np.ndarray:
    """Absolute error per state: a fraction of each state's natural scale (gate swing, bus, currents)."""
    dut, opp = cell.dut, cell.opposite
    swing = np.abs(dut.v_on - dut.v_off) + 1.0
    bus = np.asarray(cell.bus_voltage, dtype=float)
    current = np.asarray(cell.load_current, dtype=float) + 1e-3
    gate_current = swing / dut.r_gate
    charge = current * (opp.recovery_lifetime if opp.recovery_lifetime is not None else 1e-9)
    scales = np.broadcast_arrays(swing, bus, gate_current, swing, bus, gate_current, current, current, charge,
                                 current)
    return relative * np.stack(scales, axis=-1)


def simulate_edge(cell: Cell, edge: str, end_time, largest_step, relative_tolerance: float = 1e-4,
                  max_steps: int = 20_000) -> Trajectory:
    """Integrate the cell through one edge of the switch under test (``turn_off`` or ``turn_on``).

    Parameters
    ----------
    cell : Cell
        The circuit, every array over the same corners.
    edge : str
        ``turn_off``: the driver steps from V_on to V_off at t = 0; ``turn_on``: from V_off to V_on.
    end_time, largest_step : ndarray
        Per corner, the simulated time and the largest step (a fraction of the ring period) [s].
    relative_tolerance : float
        The integrator's local error per step, relative to each state's scale.

    Returns
    -------
    Trajectory
        Samples of every state (order :data:`STATES`). Corners whose start is not a valid state (the gate
        on-level cannot carry the current, or the loop inductance is smaller than the common-source
        inductances it contains) are not simulated and not completed.
    """
    start = initial_state(cell, edge)
    valid = np.isfinite(start).all(axis=1) & (cell.series_inductance >= 0.0)
    start = np.where(valid[:, None], start, initial_state_fallback(cell, edge))
    equations = CellEquations(cell, cell.dut.v_off if edge == "turn_off" else cell.dut.v_on)
    tolerance = _tolerances(cell, relative_tolerance)
    end_time = np.where(valid, end_time, 0.0)
    first = np.broadcast_to(np.asarray(largest_step, dtype=float) * 1e-4, valid.shape)
    trajectory = integrate(equations, start, end_time, first, np.broadcast_to(largest_step, valid.shape), tolerance,
                           relative_tolerance, max_steps)
    return Trajectory(trajectory.time, trajectory.state, trajectory.completed & valid)


def initial_state_fallback(cell: Cell, edge: str) -> np.ndarray:
    """A finite placeholder start for corners that have no valid one (they are not simulated)."""
    x = initial_state(cell, "turn_on")
    return np.where(np.isfinite(x), x, 0.0)
