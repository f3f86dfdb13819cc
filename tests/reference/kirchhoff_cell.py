r"""Independent reference of the half-bridge commutation cell, written from Kirchhoff's laws.

The cell is lumped. Nodes: bus + (B), the opposite device's die drain (P), the switch node (D, the die drain
of the device under test, DUT), the DUT's die source (S), the opposite device's die source (S_o) and bus − (N,
the potential reference). Elements:

* the ideal DC source :math:`V_{bus}` from N to B;
* :math:`R_s` and then :math:`L' = L_{loop} - L_s - L_{so}` from B to P, optionally with :math:`R_p` in
  parallel with :math:`L'` only (:math:`R_p = \infty`: absent);
* the opposite device from P (drain) to S_o (die source), its source lead :math:`L_{so}` from S_o to D;
* the load, a constant current source :math:`I` from P to D (it bypasses :math:`L_{so}`);
* the DUT from D (drain) to S (die source), its source lead :math:`L_s` from S to N;
* the gate loops: the DUT's driver (:math:`V_{drv}`) from N (shared source) or from S (Kelvin source)
  through :math:`R_g` and :math:`L_g` to the gate; the opposite's driver (:math:`V_{off,o}`) from D (shared)
  or from S_o (Kelvin) through :math:`R_{g,o}` and :math:`L_{g,o}` to its gate.

Element laws (each device with its own parameters):

.. math::

    C_{gs} &= C_{iss} - C_{rss}(V_{bus}), \quad C_{gd}(v) = C_{rss}(v), \quad C_{ds}(v) = C_{oss}(v) -
              C_{rss}(v) \;(+\,C_x \text{ for the DUT}),\\
    i_{ch} &= i_{sat}\tanh\!\left(\frac{v_{ds}}{R_{on}\, i_{sat}}\right),\quad
              i_{sat} = g_{fs}\max(v_{gs} - V_{th}, 0) \quad (i_{ch} = 0 \text{ where } i_{sat} = 0),\\
    i_D &= \max(-v_{ds} - V_F, 0)/R_D \quad \text{(body diode, source to drain)}.

A capacitance curve is a list of points :math:`(v_k, C_k)`: :math:`\ln C` is linear in :math:`v` between
points, the end values hold beyond the ends (so :math:`C_{gd}` holds its 0 V value at negative drain–gate
voltage). Charges :math:`Q(v) = \int_0^v C\,dw` and Q–V energies :math:`W(v) = \int_0^v w\,C(w)\,dw` are exact
on each exponential piece (:func:`_phi1`, :func:`_phi2`).

The opposite device's diode may carry charge (P. O. Lauritzen, C. L. Ma, "A simple diode model with reverse
recovery", IEEE Trans. Power Electron. 6(2), 1991, pp. 188–191), with a piecewise-linear junction:

.. math::

    q_E = (\tau + T_M)\,\frac{\max(-v_o - V_F, 0)}{R_D}, \quad i_{D,o} = \frac{q_E - q_M}{T_M}, \quad
    \frac{dq_M}{dt} = \frac{q_E - q_M}{T_M} - \frac{q_M}{\tau}.

Branch currents. With :math:`s = 1` for a shared source and 0 for Kelvin (and :math:`s_o` likewise), the DUT
drain current is the loop current :math:`i_L`, the opposite's drain current is :math:`i_L - I`, the DUT's
source lead carries :math:`i_L + s\,i_g` and the opposite's source lead :math:`i_L - I + s_o\,i_{go}`.

**State vector** :math:`x = (v_{gs}, v_{ds}, i_g, v_{go}, v_o, i_{go}, [i_L], [i_{ind}], [q_M])`. :math:`i_L` is a
state unless :math:`R_p` is finite and :math:`L_s + L_{so} = 0`; then the loop holds no inductance in series
with :math:`L' \parallel R_p` and :math:`i_L = (V_{bus} - v_o - v_{ds} + R_p\,i_{ind})/(R_s + R_p)` (KVL).
:math:`i_{ind}` (the current of :math:`L'`) is a state where :math:`R_p` is finite, :math:`q_M` where the
opposite diode has recovery.

**Capacitive rows** (KCL at G and D of the DUT; at G_o and P of the opposite):

.. math::

    \begin{pmatrix} C_{gs} + C_{gd} & -C_{gd} \\ -C_{gd} & C_{gd} + C_{ds} + C_x \end{pmatrix}
    \begin{pmatrix} \dot v_{gs} \\ \dot v_{ds} \end{pmatrix} =
    \begin{pmatrix} i_g \\ i_L - i_{ch} + i_D \end{pmatrix}, \qquad
    \begin{pmatrix} C_{gs,o} + C_{gd,o} & -C_{gd,o} \\ -C_{gd,o} & C_{gd,o} + C_{ds,o} \end{pmatrix}
    \begin{pmatrix} \dot v_{go} \\ \dot v_o \end{pmatrix} =
    \begin{pmatrix} i_{go} \\ i_L - I - i_{ch,o} + i_{D,o} \end{pmatrix},

with :math:`C_{gd}` at :math:`v_{ds} - v_{gs}` and :math:`C_{ds}` at :math:`v_{ds}` (likewise for the opposite).

**Inductive rows** (KVL of the two gate loops and of the power loop), unknowns :math:`(\dot i_g, \dot i_{go},
\dot i_L)`:

.. math::

    \begin{pmatrix} L_g + sL_s & 0 & sL_s \\ 0 & L_{g,o} + s_oL_{so} & s_oL_{so} \\
                    sL_s & s_oL_{so} & L_{eff} \end{pmatrix}
    \begin{pmatrix} \dot i_g \\ \dot i_{go} \\ \dot i_L \end{pmatrix} =
    \begin{pmatrix} V_{drv} - R_g i_g - v_{gs} \\ V_{off,o} - R_{g,o} i_{go} - v_{go} \\
                    V_{bus} - R_s i_L - v_{R_p} - v_o - v_{ds} \end{pmatrix},

where :math:`L_{eff} = L_{loop}` and :math:`v_{R_p} = 0` without :math:`R_p`, and :math:`L_{eff} = L_s + L_{so}`,
:math:`v_{R_p} = R_p (i_L - i_{ind})` with it, together with :math:`L'\,\dot i_{ind} = R_p (i_L - i_{ind})`.
Without a loop state the last row and column are dropped (:math:`L_s = L_{so} = 0` there). The matrix is
constant and symmetric positive definite (it is the Hessian of the magnetic energy), so its inverse is formed
once; the two 2×2 capacitive blocks are solved by Cramer's rule at every evaluation.

Events: the right-hand side has kinks where a diode junction changes state (:math:`-v_{ds} - V_F = 0`,
:math:`-v_o - V_F = 0`) and where a channel reaches threshold (:math:`v_{gs} = V_{th}`). Each is a terminal
``solve_ivp`` event; the integration restarts from the located state, with that event's direction reversed
(the next crossing must go the other way), so no Radau step straddles a kink.

Numerics: ``solve_ivp(method="Radau")`` with ``rtol = 1e-8`` and ``atol = 1e-10`` times a scale per state
(:math:`V_{bus}` for the drain voltages, the driver levels for the gate voltages, I for the loop currents,
:math:`\Delta V_{drv}/R_g` for the gate currents, :math:`\tau I` for :math:`q_M`); the largest step is 1/20 of the
shortest ring period :math:`2\pi\sqrt{LC}` of the underdamped loops (and at most 1/400 of the simulated time).
The waveforms are sampled at 4 equally spaced points in every Radau step on its dense output; the running
energy integrals use 4-point Gauss–Legendre quadrature on every sample interval of that dense output (the powers
at the nodes from the same element laws, the stored energies from the closed-form Q–V integrals).
"""

from __future__ import annotations

import math
from bisect import bisect_right
from dataclasses import dataclass

import numpy as np
from scipy.integrate import solve_ivp

__all__ = ["Device", "Cell", "simulate", "measure"]

#: Relative tolerance of the Radau integration.
RTOL = 1e-8
#: Absolute tolerance of each state as a fraction of that state's scale (see ``_CellModel.scales``).
ATOL_FRACTION = 1e-10
#: Largest step as a fraction of the shortest underdamped ring period of the cell.
STEP_FRACTION = 1.0 / 20.0
#: Largest step as a fraction of the simulated time (when nothing rings).
MIN_STEPS = 400
#: Output samples per Radau step (equally spaced on the step's collocation polynomial).
SAMPLES_PER_STEP = 4
#: Gauss–Legendre points per sample interval of the running integrals.
GAUSS_POINTS = 4
#: Upper bound on event restarts (a chattering guard).
MAX_SEGMENTS = 5000

EDGES = ("turn_off", "turn_on")


@dataclass(frozen=True)
class Device:
    """One power device of the cell, in SI units.

    Attributes
    ----------
    v_th, g_fs, r_on : float
        Threshold [V], transconductance [S] and on-resistance knee [Ω] of
        :math:`i_{ch} = i_{sat}\\tanh(v_{ds}/(R_{on} i_{sat}))`, :math:`i_{sat} = g_{fs}\\max(v_{gs} - V_{th}, 0)`.
    c_iss : float
        Input capacitance [F]; :math:`C_{gs} = C_{iss} - C_{rss}(V_{bus})`.
    c_rss, c_oss : tuple
        Capacitance curves ``(voltages, capacitances)`` [V], [F], voltages ascending from 0 V.
    r_gate, l_gate : float
        Total gate-loop resistance [Ω] (external, internal and driver output) and inductance [H].
    v_on, v_off : float
        Driver on and off levels [V].
    l_source : float
        Source-lead (common-source) inductance [H].
    kelvin : bool
        True: the driver returns on a Kelvin source at the die; False: through the source lead.
    v_f, r_diode : float
        Body diode knee [V] and slope resistance [Ω].
    tau, t_m : float or None
        Lifetime and transit time [s] of the Lauritzen–Ma recovery (read for the opposite device only);
        None: the plain piecewise-linear diode.
    """

    v_th: float
    g_fs: float
    r_on: float
    c_iss: float
    c_rss: tuple[tuple[float, ...], tuple[float, ...]]
    c_oss: tuple[tuple[float, ...], tuple[float, ...]]
    r_gate: float
    l_gate: float
    v_on: float
    v_off: float
    l_source: float
    kelvin: bool
    v_f: float
    r_diode: float
    tau: float | None = None
    t_m: float | None = None


@dataclass(frozen=True)
class Cell:
    """The commutation cell: bus [V], load current [A], loop inductance [H] and resistance [Ω], the two devices,
    the optional damping resistance in parallel with :math:`L'` [Ω] (``inf``: absent) and the extra switch-node
    capacitance in parallel with the DUT's :math:`C_{ds}` [F]."""

    bus_voltage: float
    load_current: float
    loop_inductance: float
    loop_resistance: float
    dut: Device
    opposite: Device
    damping_resistance: float = math.inf
    node_capacitance: float = 0.0


# --- exact integrals of an exponential piece -------------------------------------------------------------------


def _phi1(x):
    r""":math:`\varphi_1(x) = \int_0^1 e^{xs}\,ds = (e^x - 1)/x`, with :math:`\varphi_1(0) = 1`."""
    x = np.asarray(x, dtype=float)
    small = np.abs(x) < 1e-8
    safe = np.where(small, 1.0, x)
    return np.where(small, 1.0 + 0.5 * x, np.expm1(safe) / safe)


def _phi2(x):
    r""":math:`\varphi_2(x) = \int_0^1 s\,e^{xs}\,ds = (x e^x - e^x + 1)/x^2`, with :math:`\varphi_2(0) = 1/2`.

    Near 0 the series :math:`1/2 + x/3 + x^2/8 + x^3/30` (truncation below :math:`x^4/144`) avoids cancellation.
    """
    x = np.asarray(x, dtype=float)
    small = np.abs(x) < 1e-3
    safe = np.where(small, 1.0, x)
    exact = (safe * np.exp(safe) - np.expm1(safe)) / safe**2
    series = 0.5 + x / 3.0 + x**2 / 8.0 + x**3 / 30.0
    return np.where(small, series, exact)


def _ramp(x):
    """:math:`\\max(x, 0)` of a float or an array."""
    return max(x, 0.0) if isinstance(x, float) else np.maximum(x, 0.0)


class _Curve:
    r"""A capacitance curve :math:`C(v)` with :math:`\ln C` linear between points and the ends held.

    On the piece :math:`v_k \le v < v_{k+1}`, :math:`C = C_k e^{\alpha_k (v - v_k)}` with
    :math:`\alpha_k = \ln(C_{k+1}/C_k)/(v_{k+1} - v_k)` (:math:`\alpha = 0` beyond the last point), and with
    :math:`d = v - v_k`

    .. math::

        Q(v) = Q_k + C_k\,d\,\varphi_1(\alpha_k d), \qquad
        W(v) = W_k + v_k C_k\,d\,\varphi_1(\alpha_k d) + C_k\,d^2\varphi_2(\alpha_k d),

    :math:`Q = C_0 v`, :math:`W = C_0 v^2/2` below the first point.
    """

    def __init__(self, points, name: str):
        volts, caps = (np.asarray(part, dtype=float) for part in points)
        if volts.ndim != 1 or volts.shape != caps.shape or volts.size == 0:
            raise ValueError(f"{name}: voltages and capacitances must be two equally long, non-empty lists")
        if not (np.all(np.isfinite(volts)) and np.all(np.isfinite(caps)) and np.all(caps > 0)):
            raise ValueError(f"{name}: points must be finite with positive capacitances")
        if volts[0] < 0 or np.any(np.diff(volts) <= 0):
            raise ValueError(f"{name}: voltages must ascend strictly from 0 V or above")
        self.volts, self.caps = volts, caps
        steps = np.diff(volts)
        self.alpha = np.append(np.log(caps[1:] / caps[:-1]) / steps, 0.0)
        self._points = (volts.tolist(), caps.tolist(), self.alpha.tolist())  # for the scalar path
        piece_q = caps[:-1] * steps * _phi1(self.alpha[:-1] * steps)
        piece_w = volts[:-1] * piece_q + caps[:-1] * steps**2 * _phi2(self.alpha[:-1] * steps)
        self.q_knots = caps[0] * volts[0] + np.concatenate(([0.0], np.cumsum(piece_q)))
        self.w_knots = 0.5 * caps[0] * volts[0] ** 2 + np.concatenate(([0.0], np.cumsum(piece_w)))

    def _locate(self, v):
        v = np.asarray(v, dtype=float)
        k = np.clip(np.searchsorted(self.volts, v, side="right") - 1, 0, self.volts.size - 1)
        below = v < self.volts[0]
        d = np.where(below, 0.0, v - self.volts[k])
        return v, k, d, below

    def capacitance(self, v):
        """:math:`C(v)` [F] (a float for a float, an array otherwise)."""
        if isinstance(v, float):
            volts, caps, alpha = self._points
            k = max(bisect_right(volts, v) - 1, 0)
            return caps[k] * math.exp(alpha[k] * max(v - volts[k], 0.0))
        _, k, d, _ = self._locate(v)
        return self.caps[k] * np.exp(self.alpha[k] * d)

    def charge(self, v):
        r""":math:`Q(v) = \int_0^v C(w)\,dw` [C]."""
        v, k, d, below = self._locate(v)
        inside = self.q_knots[k] + self.caps[k] * d * _phi1(self.alpha[k] * d)
        return np.where(below, self.caps[0] * v, inside)

    def energy(self, v):
        r""":math:`W(v) = \int_0^v w\,C(w)\,dw = \int v\,dQ` [J]."""
        v, k, d, below = self._locate(v)
        x = self.alpha[k] * d
        inside = self.w_knots[k] + self.volts[k] * self.caps[k] * d * _phi1(x) + self.caps[k] * d**2 * _phi2(x)
        return np.where(below, 0.5 * self.caps[0] * v**2, inside)


# --- one device --------------------------------------------------------------------------------------------------


class _DeviceModel:
    """The element laws of one device: capacitances, charges, energies, channel and plain diode."""

    def __init__(self, device: Device, bus_voltage: float, node_capacitance: float, name: str):
        self.device = device
        self.rss = _Curve(device.c_rss, f"{name}.c_rss")
        self.oss = _Curve(device.c_oss, f"{name}.c_oss")
        self.c_gs = float(device.c_iss - self.rss.capacitance(bus_voltage))
        self.c_x = float(node_capacitance)
        if not self.c_gs > 0:
            raise ValueError(f"{name}: c_iss must exceed c_rss at the bus voltage (C_gs > 0)")
        grid = np.union1d(np.union1d(self.rss.volts, self.oss.volts), [0.0])
        # ln C_oss - ln C_rss is linear between knots of the union grid, so positive knots mean positive C_ds.
        if np.any(self.oss.capacitance(grid) <= self.rss.capacitance(grid)):
            raise ValueError(f"{name}: c_oss must exceed c_rss everywhere (C_ds > 0)")
        for label in ("g_fs", "r_gate", "l_gate", "l_source", "v_f"):
            if not getattr(device, label) >= 0:
                raise ValueError(f"{name}.{label} must be non-negative")
        for label in ("r_on", "r_diode", "l_gate"):
            if not getattr(device, label) > 0:
                raise ValueError(f"{name}.{label} must be positive")

    def c_gd(self, v_dg):
        """Gate–drain capacitance at the drain–gate voltage (its 0 V value below 0 V)."""
        return self.rss.capacitance(v_dg)

    def c_ds(self, v_ds):
        """Drain–source capacitance :math:`C_{oss} - C_{rss}` plus the node capacitance."""
        return self.oss.capacitance(v_ds) - self.rss.capacitance(v_ds) + self.c_x

    def gate_charge(self, v_gs, v_ds):
        r"""Charge delivered into the gate node: :math:`C_{gs} v_{gs} - Q_{rss}(v_{ds} - v_{gs})`."""
        return self.c_gs * v_gs - self.rss.charge(v_ds - v_gs)

    def stored_energy(self, v_gs, v_ds):
        r""":math:`\tfrac12 C_{gs} v_{gs}^2 + W_{rss}(v_{ds} - v_{gs}) + W_{oss}(v_{ds}) - W_{rss}(v_{ds})
        + \tfrac12 C_x v_{ds}^2`."""
        return (
            0.5 * self.c_gs * v_gs**2
            + self.rss.energy(v_ds - v_gs)
            + self.oss.energy(v_ds)
            - self.rss.energy(v_ds)
            + 0.5 * self.c_x * v_ds**2
        )

    def saturation_current(self, v_gs):
        """:math:`i_{sat} = g_{fs}\\max(v_{gs} - V_{th}, 0)`."""
        return self.device.g_fs * _ramp(v_gs - self.device.v_th)

    def channel(self, v_gs, v_ds):
        """:math:`i_{ch} = i_{sat}\\tanh(v_{ds}/(R_{on} i_{sat}))`, 0 where :math:`i_{sat} = 0`."""
        i_sat = self.saturation_current(v_gs)
        if isinstance(i_sat, float):
            return i_sat * math.tanh(v_ds / (self.device.r_on * i_sat)) if i_sat > 0 else 0.0
        on = i_sat > 0
        with np.errstate(over="ignore", divide="ignore", invalid="ignore"):
            argument = np.asarray(v_ds, dtype=float) / np.where(on, self.device.r_on * i_sat, 1.0)
        return np.where(on, i_sat * np.tanh(np.where(on, argument, 0.0)), 0.0)

    def diode(self, v_ds):
        """:math:`i_D = \\max(-v_{ds} - V_F, 0)/R_D`, forward (source to drain) positive."""
        return _ramp(-v_ds - self.device.v_f) / self.device.r_diode

    def voltage_rates(self, v_gs, v_ds, i_gate, i_drain_net):
        r"""Solve the KCL pair for :math:`(\dot v_{gs}, \dot v_{ds})` by Cramer's rule.

        :math:`(C_{gs} + C_{gd})\dot v_{gs} - C_{gd}\dot v_{ds} = i_g` and
        :math:`-C_{gd}\dot v_{gs} + (C_{gd} + C_{ds})\dot v_{ds} = i_{net}`, where :math:`i_{net}` is the drain
        current less the channel current plus the diode current.
        """
        c_gd = self.c_gd(v_ds - v_gs)
        c_ds = self.c_ds(v_ds)
        det = self.c_gs * c_gd + self.c_gs * c_ds + c_gd * c_ds
        dv_gs = ((c_gd + c_ds) * i_gate + c_gd * i_drain_net) / det
        dv_ds = (c_gd * i_gate + (self.c_gs + c_gd) * i_drain_net) / det
        return dv_gs, dv_ds

    def drain_voltage_at(self, v_gs, current):
        """On-state :math:`v_{ds}` solving :math:`i_{ch}(v_{gs}, v_{ds}) = I`:
        :math:`v_{ds} = R_{on} i_{sat}\\,\\mathrm{artanh}(I/i_{sat})`."""
        i_sat = self.saturation_current(float(v_gs))
        if not i_sat > current:
            raise ValueError("g_fs·(V_on − V_th) must exceed the load current for an on-state DC point")
        return self.device.r_on * i_sat * math.atanh(current / i_sat)


# --- the cell ----------------------------------------------------------------------------------------------------


class _Event:
    """A terminal ``solve_ivp`` event on one state combination, with an adjustable direction."""

    def __init__(self, name: str, function, direction: float):
        self.name = name
        self.function = function
        self.terminal = True
        self.direction = direction

    def __call__(self, _t, x):
        return float(self.function(x))


class _CellModel:
    """The ODE :math:`M\\dot x = f(x)` of the cell for one edge (see the module docstring)."""

    def __init__(self, cell: Cell, edge: str):
        _check_cell(cell, edge)
        self.cell, self.edge = cell, edge
        self.dut = _DeviceModel(cell.dut, cell.bus_voltage, cell.node_capacitance, "dut")
        self.opp = _DeviceModel(cell.opposite, cell.bus_voltage, 0.0, "opposite")
        d, o = cell.dut, cell.opposite
        self.s, self.s_o = (0.0 if d.kelvin else 1.0), (0.0 if o.kelvin else 1.0)
        self.l_prime = cell.loop_inductance - d.l_source - o.l_source
        if self.l_prime < 0:
            raise ValueError("loop_inductance must be at least the two source-lead inductances")
        self.damped = math.isfinite(cell.damping_resistance) and self.l_prime > 0
        self.loop_state = (not self.damped) or (d.l_source + o.l_source > 0)
        self.recovery = o.tau is not None
        self.v_drive = d.v_off if edge == "turn_off" else d.v_on
        names = ["v_gs", "v_ds", "i_g", "v_go", "v_o", "i_go"]
        names += ["i_l"] if self.loop_state else []
        names += ["i_ind"] if self.damped else []
        names += ["q_m"] if self.recovery else []
        self.names = names
        self.index = {name: k for k, name in enumerate(names)}
        self.inverse_inductance = np.linalg.inv(self.inductance_matrix()).tolist()

    # structure -----------------------------------------------------------------------------------------------
    def inductance_matrix(self) -> np.ndarray:
        """The constant, symmetric inductance matrix of the unknowns :math:`(\\dot i_g, \\dot i_{go}, [\\dot i_L])`."""
        d, o = self.cell.dut, self.cell.opposite
        l_s, l_so = self.s * d.l_source, self.s_o * o.l_source
        matrix = [[d.l_gate + l_s, 0.0], [0.0, o.l_gate + l_so]]
        if not self.loop_state:
            return np.array(matrix)
        l_eff = d.l_source + o.l_source if self.damped else self.cell.loop_inductance
        return np.array([matrix[0] + [l_s], matrix[1] + [l_so], [l_s, l_so, l_eff]])

    def loop_current(self, x):
        """:math:`i_L`: a state, or from KVL :math:`(V_{bus} - v_o - v_{ds} + R_p i_{ind})/(R_s + R_p)`."""
        if self.loop_state:
            return x[self.index["i_l"]]
        c, k = self.cell, self.index
        r_p = c.damping_resistance
        return (c.bus_voltage - x[k["v_o"]] - x[k["v_ds"]] + r_p * x[k["i_ind"]]) / (c.loop_resistance + r_p)

    def inductor_current(self, x):
        """:math:`i_{ind}`, the current of :math:`L'` (= :math:`i_L` without :math:`R_p`)."""
        return x[self.index["i_ind"]] if self.damped else self.loop_current(x)

    def opposite_diode(self, x):
        """Opposite diode current: plain, or :math:`(q_E - q_M)/T_M` with recovery."""
        v_o = x[self.index["v_o"]]
        if not self.recovery:
            return self.opp.diode(v_o)
        o = self.cell.opposite
        q_e = (o.tau + o.t_m) * self.opp.diode(v_o)
        return (q_e - x[self.index["q_m"]]) / o.t_m

    # evaluation ----------------------------------------------------------------------------------------------
    def evaluate(self, x) -> dict:
        """All branch quantities and the state derivative ``dx`` at the state(s) ``x`` (shape (n,) or (n, m)).

        One state is evaluated on Python floats (the integrator's path), several on arrays (its Jacobian, the
        samples and the quadrature points); the same expressions serve both.
        """
        c, k = self.cell, self.index
        x = np.asarray(x, dtype=float)
        x = x.tolist() if x.ndim == 1 else list(x)
        q = {name: x[k[name]] for name in ("v_gs", "v_ds", "i_g", "v_go", "v_o", "i_go")}
        q["i_l"], q["i_ind"] = self.loop_current(x), self.inductor_current(x)
        if self.recovery:
            q["q_m"] = x[k["q_m"]]
        q["i_ch"], q["i_diode"] = self.dut.channel(q["v_gs"], q["v_ds"]), self.dut.diode(q["v_ds"])
        q["i_ch_o"], q["i_diode_o"] = self.opp.channel(q["v_go"], q["v_o"]), self.opposite_diode(x)
        rates = [0.0] * len(self.names)
        rates[k["v_gs"]], rates[k["v_ds"]] = self.dut.voltage_rates(
            q["v_gs"], q["v_ds"], q["i_g"], q["i_l"] - q["i_ch"] + q["i_diode"]
        )
        rates[k["v_go"]], rates[k["v_o"]] = self.opp.voltage_rates(
            q["v_go"], q["v_o"], q["i_go"], q["i_l"] - c.load_current - q["i_ch_o"] + q["i_diode_o"]
        )
        self._current_rates(q, rates)
        q["dx"] = np.array(rates)
        q["di_l"] = rates[k["i_l"]] if self.loop_state else 0.0 * q["i_l"]
        return q

    def _current_rates(self, q, rates):
        """Fill the inductive rows (gate loops and power loop), :math:`\\dot i_{ind}` and :math:`\\dot q_M`."""
        c, k, d, o = self.cell, self.index, self.cell.dut, self.cell.opposite
        v_rp = c.damping_resistance * (q["i_l"] - q["i_ind"]) if self.damped else 0.0
        forcing = [
            self.v_drive - d.r_gate * q["i_g"] - q["v_gs"],
            o.v_off - o.r_gate * q["i_go"] - q["v_go"],
        ]
        if self.loop_state:
            forcing.append(c.bus_voltage - c.loop_resistance * q["i_l"] - v_rp - q["v_o"] - q["v_ds"])
        solved = [sum(m * f for m, f in zip(row, forcing)) for row in self.inverse_inductance]
        rates[k["i_g"]], rates[k["i_go"]] = solved[0], solved[1]
        if self.loop_state:
            rates[k["i_l"]] = solved[2]
        if self.damped:
            rates[k["i_ind"]] = v_rp / self.l_prime
        if self.recovery:
            # dq_M/dt = (q_E - q_M)/T_M - q_M/tau = i_D,o - q_M/tau
            rates[k["q_m"]] = q["i_diode_o"] - q["q_m"] / o.tau

    def rhs(self, _t, x):
        """:math:`\\dot x = M^{-1} f(x)` for ``solve_ivp`` (vectorised; a single column takes the float path)."""
        x = np.asarray(x, dtype=float)
        if x.ndim == 2 and x.shape[1] == 1:
            return self.evaluate(x[:, 0])["dx"][:, None]
        return self.evaluate(x)["dx"]

    # energies --------------------------------------------------------------------------------------------------
    def powers(self, x) -> dict:
        """Instantaneous powers [W] (sources delivering, elements absorbing) and gate currents [A], keyed by the
        name of their running integral in :func:`simulate`. The load, a current source from P to D, delivers
        :math:`I (v_D - v_P)` with :math:`v_P - v_D = v_o + L_{so}\\,d(i_L + s_o i_{go})/dt`."""
        c, d, o = self.cell, self.cell.dut, self.cell.opposite
        q = self.evaluate(x)
        i_l, i_g, i_go = q["i_l"], q["i_g"], q["i_go"]
        di_lso = q["di_l"] + self.s_o * q["dx"][self.index["i_go"]]
        v_p_minus_v_d = q["v_o"] + o.l_source * di_lso
        return {
            "v_source_bus": c.bus_voltage * i_l,
            "e_driver": self.v_drive * i_g,
            "e_driver_o": o.v_off * i_go,
            "e_load": -c.load_current * v_p_minus_v_d,
            "e_loop_resistance": c.loop_resistance * i_l**2,
            "e_damping": (c.damping_resistance * (i_l - q["i_ind"]) ** 2) if self.damped else 0.0 * i_l,
            "e_channel": q["v_ds"] * q["i_ch"],
            "e_channel_o": q["v_o"] * q["i_ch_o"],
            "e_diode": -q["v_ds"] * q["i_diode"],
            "e_diode_o": -q["v_o"] * q["i_diode_o"],
            "e_gate_resistor": d.r_gate * i_g**2,
            "e_gate_resistor_o": o.r_gate * i_go**2,
            "e_dut": q["v_ds"] * i_l,
            "e_opposite": q["v_o"] * (i_l - c.load_current),
            "q_gate": i_g,
            "q_gate_o": i_go,
        }

    def stored(self, x) -> tuple:
        """Stored magnetic and electric (Q–V) energies [J]:
        :math:`\\tfrac12 L' i_{ind}^2 + \\tfrac12 L_s (i_L + s i_g)^2 + \\tfrac12 L_{so}(i_L - I + s_o i_{go})^2
        + \\tfrac12 L_g i_g^2 + \\tfrac12 L_{g,o} i_{go}^2` and the capacitor energies of both devices."""
        c, d, o, k = self.cell, self.cell.dut, self.cell.opposite, self.index
        i_l, i_g, i_go = self.loop_current(x), x[k["i_g"]], x[k["i_go"]]
        magnetic = (
            0.5 * self.l_prime * self.inductor_current(x) ** 2
            + 0.5 * d.l_source * (i_l + self.s * i_g) ** 2
            + 0.5 * o.l_source * (i_l - c.load_current + self.s_o * i_go) ** 2
            + 0.5 * d.l_gate * i_g**2
            + 0.5 * o.l_gate * i_go**2
        )
        electric = self.dut.stored_energy(x[k["v_gs"]], x[k["v_ds"]]) + self.opp.stored_energy(
            x[k["v_go"]], x[k["v_o"]]
        )
        return magnetic, electric

    # set-up ------------------------------------------------------------------------------------------------
    def initial_state(self) -> np.ndarray:
        """The DC steady state before the driver step (see :func:`simulate`)."""
        c, d, o, k = self.cell, self.cell.dut, self.cell.opposite, self.index
        if float(self.opp.saturation_current(o.v_off)) > 0:
            raise ValueError("the opposite device's v_off must hold its channel off (v_off ≤ v_th)")
        x = np.zeros(len(self.names))
        x[k["v_go"]] = o.v_off
        if self.edge == "turn_off":
            v_ds = self.dut.drain_voltage_at(d.v_on, c.load_current)
            x[k["v_gs"]], x[k["v_ds"]] = d.v_on, v_ds
            x[k["v_o"]] = c.bus_voltage - c.loop_resistance * c.load_current - v_ds
            i_l = c.load_current
        else:
            if float(self.dut.saturation_current(d.v_off)) > 0:
                raise ValueError("the DUT's v_off must hold its channel off (v_off ≤ v_th) before turn-on")
            v_o = -o.v_f - c.load_current * o.r_diode
            x[k["v_gs"]], x[k["v_o"]], x[k["v_ds"]] = d.v_off, v_o, c.bus_voltage - v_o
            i_l = 0.0
            if self.recovery:
                x[k["q_m"]] = o.tau * c.load_current
        if self.loop_state:
            x[k["i_l"]] = i_l
        if self.damped:
            x[k["i_ind"]] = i_l
        return x

    def scales(self) -> np.ndarray:
        """A magnitude per state (volts, amperes, coulombs) for the absolute tolerances."""
        c, d, o = self.cell, self.cell.dut, self.cell.opposite
        current = max(abs(c.load_current), 1e-3)
        swing = max(abs(d.v_on - d.v_off), 1.0)
        by_name = {
            "v_gs": max(abs(d.v_on), abs(d.v_off), 1.0),
            "v_go": max(abs(o.v_on), abs(o.v_off), 1.0),
            "v_ds": max(c.bus_voltage, 1.0),
            "v_o": max(c.bus_voltage, 1.0),
            "i_g": swing / max(d.r_gate, 1e-3),
            "i_go": swing / max(o.r_gate, 1e-3),
            "i_l": current,
            "i_ind": current,
            "q_m": (o.tau or 0.0) * current,
        }
        return np.array([by_name[name] for name in self.names])

    def max_step(self, t_end: float) -> float:
        """:data:`STEP_FRACTION` of the shortest ring period :math:`2\\pi\\sqrt{LC}` of the underdamped loops
        (:math:`\\zeta = \\tfrac R2\\sqrt{C/L} < 1`): the power loop with the smallest output capacitance of
        either device, each gate loop with :math:`C_{gs}` plus the smallest :math:`C_{rss}`."""
        c, d, o = self.cell, self.cell.dut, self.cell.opposite
        c_out = min(float(np.min(self.dut.oss.caps)) + c.node_capacitance, float(np.min(self.opp.oss.caps)))
        loops = [(c.loop_inductance, c_out, c.loop_resistance)]
        if self.damped and d.l_source + o.l_source > 0:
            loops.append((d.l_source + o.l_source, c_out, c.loop_resistance))
        for model, dev, share in ((self.dut, d, self.s), (self.opp, o, self.s_o)):
            c_in = model.c_gs + float(np.min(model.rss.caps))
            loops.append((dev.l_gate + share * dev.l_source, c_in, dev.r_gate))
        periods = [2 * math.pi * math.sqrt(l_ * c_) for l_, c_, r_ in loops if 0.5 * r_ * math.sqrt(c_ / l_) < 1]
        return min([t_end / MIN_STEPS] + [STEP_FRACTION * p for p in periods])

    def events(self, x0) -> list:
        """Terminal events at the diode junction knees and the channel thresholds, each aimed at its next
        crossing (:math:`-\\operatorname{sign} g(x_0)`)."""
        d, o, k = self.cell.dut, self.cell.opposite, self.index
        functions = [
            ("diode_dut", lambda x: -x[k["v_ds"]] - d.v_f),
            ("diode_opposite", lambda x: -x[k["v_o"]] - o.v_f),
        ]
        if d.g_fs > 0:
            functions.append(("threshold_dut", lambda x: x[k["v_gs"]] - d.v_th))
        if o.g_fs > 0:
            functions.append(("threshold_opposite", lambda x: x[k["v_go"]] - o.v_th))
        return [_Event(name, f, -float(np.sign(f(x0)))) for name, f in functions]


def _check_cell(cell: Cell, edge: str) -> None:
    if edge not in EDGES:
        raise ValueError(f"edge must be one of {EDGES}, not {edge!r}")
    if not (cell.bus_voltage > 0 and cell.load_current >= 0 and cell.loop_inductance > 0):
        raise ValueError("bus_voltage and loop_inductance must be positive, load_current non-negative")
    if not (cell.loop_resistance >= 0 and cell.damping_resistance > 0 and cell.node_capacitance >= 0):
        raise ValueError("loop_resistance and node_capacitance must be non-negative, damping_resistance positive")
    o = cell.opposite
    if (o.tau is None) != (o.t_m is None):
        raise ValueError("opposite.tau and opposite.t_m must be given together")
    if o.tau is not None and not (o.tau > 0 and o.t_m > 0):
        raise ValueError("opposite.tau and opposite.t_m must be positive")


# --- integration -------------------------------------------------------------------------------------------------


def _integrate(model: _CellModel, t_end: float) -> list:
    """Integrate from 0 to ``t_end`` with Radau, restarting at every event.

    Returns the list of ``solve_ivp`` results, one per segment between events.
    """
    x = model.initial_state()
    events = model.events(x)
    atol = ATOL_FRACTION * model.scales()
    max_step = model.max_step(t_end)
    t0, segments, skip = 0.0, [], None
    while t0 < t_end:
        if len(segments) >= MAX_SEGMENTS:
            raise RuntimeError("too many event restarts (chattering)")
        active = [event for event in events if event is not skip]
        result = solve_ivp(
            model.rhs, (t0, t_end), x, method="Radau", rtol=RTOL, atol=atol, max_step=max_step,
            events=active, dense_output=True, vectorized=True,
        )
        if result.status < 0:
            raise RuntimeError(f"Radau failed at t = {result.t[-1]:.6g} s: {result.message}")
        segments.append(result)
        t_stop, x = float(result.t[-1]), result.y[:, -1]
        skip = _turn_events(active, result, t_stop, t0) if result.status == 1 else None
        t0 = t_stop
    return segments


def _turn_events(active: list, result, t_stop: float, t_start: float):
    """Reverse the direction of the events that stopped the segment; return an event to leave out of the next
    segment (one that fired without progress from an undirected start), or None."""
    skip = None
    for event, roots in zip(active, result.t_events):
        if roots.size and roots[-1] == t_stop:
            if event.direction != 0:
                event.direction = -event.direction
            else:
                before = event(t_start, result.sol(result.t[-2])) if result.t.size > 1 else 0.0
                event.direction = float(np.sign(before))
                if event.direction == 0 and t_stop == t_start:
                    skip = event
    return skip


def _segment_samples(result, last: bool) -> np.ndarray:
    """:data:`SAMPLES_PER_STEP` equally spaced points in each Radau step (the end point only for the last)."""
    ts = result.t[np.append(True, np.diff(result.t) > 0)]
    fractions = np.arange(SAMPLES_PER_STEP) / SAMPLES_PER_STEP
    points = (ts[:-1, None] + np.diff(ts)[:, None] * fractions).ravel()
    return np.append(points, ts[-1]) if last else points


def _running_integrals(model: _CellModel, result, samples: np.ndarray) -> dict:
    """Integrals of every power over the sample intervals of one segment, by Gauss–Legendre quadrature on the
    segment's dense output (each interval lies inside one Radau step, where the output is a polynomial)."""
    nodes, weights = np.polynomial.legendre.leggauss(GAUSS_POINTS)
    left, width = samples[:-1], np.diff(samples)
    times = (left[:, None] + 0.5 * width[:, None] * (nodes + 1.0)).ravel()
    powers = model.powers(result.sol(times))
    return {
        name: (np.broadcast_to(value, times.shape).reshape(left.size, GAUSS_POINTS) @ weights) * 0.5 * width
        for name, value in powers.items()
    }


def simulate(cell: Cell, edge: str, t_end: float) -> dict:
    """Simulate one switching edge of the cell from its DC steady state.

    Parameters
    ----------
    cell : Cell
    edge : {"turn_off", "turn_on"}
        ``turn_off``: at t = 0 the DUT's driver steps from ``v_on`` to ``v_off``; the initial state is the DUT
        on carrying I (:math:`v_{gs} = V_{on}`, :math:`i_{ch}(V_{on}, v_{ds}) = I`, :math:`i_L = I`), the opposite
        off (:math:`v_o = V_{bus} - R_s I - v_{ds}`, :math:`v_{go} = V_{off,o}`). ``turn_on``: the driver steps
        from ``v_off`` to ``v_on``; initially the DUT is off, :math:`i_L = 0`, the opposite diode carries I
        (:math:`v_o = -V_F - I R_D`, :math:`v_{ds} = V_{bus} - v_o`, :math:`q_M = \\tau I`).
    t_end : float
        Simulated time [s].

    Returns
    -------
    dict of numpy arrays on one time grid
        ``t``, ``v_ds``, ``i_d`` (= :math:`i_L`), ``v_gs``, ``i_g``, ``i_ch``, ``v_o``, ``v_go``, ``i_go``,
        ``i_ch_o``, ``i_diode`` (DUT), ``i_diode_o`` (opposite, forward positive), ``i_ind``; the running
        integrals from 0: ``v_source_bus`` (:math:`\\int V_{bus} i_L dt`, the DC source's energy), ``e_dut``
        (:math:`\\int v_{ds} i_L dt`), ``e_opposite`` (:math:`\\int v_o (i_L - I) dt`), ``e_driver``,
        ``e_driver_o`` (drivers' energies), ``e_load`` (energy delivered by the load source,
        :math:`\\int I (v_D - v_P) dt`), the dissipations ``e_loop_resistance``, ``e_damping``, ``e_channel``,
        ``e_channel_o``, ``e_diode``, ``e_diode_o``, ``e_gate_resistor``, ``e_gate_resistor_o``, the gate charges
        ``q_gate``, ``q_gate_o`` (:math:`\\int i_g dt`); and the stored energies ``w_inductors``,
        ``w_capacitors``.

    Raises
    ------
    ValueError
        For an invalid cell, or no DC on-state (:math:`g_{fs}(V_{on} - V_{th}) \\le I`) before turn-off.
    """
    if not (t_end > 0 and math.isfinite(t_end)):
        raise ValueError("t_end must be positive and finite")
    model = _CellModel(cell, edge)
    segments = _integrate(model, float(t_end))
    times, states, integrals = [], [], []
    for number, result in enumerate(segments):
        samples = _segment_samples(result, last=number == len(segments) - 1)
        if samples.size == 0:
            continue
        times.append(samples)
        states.append(result.sol(samples))
        closing = np.append(samples, result.t[-1]) if number < len(segments) - 1 else samples
        integrals.append(_running_integrals(model, result, closing))
    return _assemble(model, np.concatenate(times), np.concatenate(states, axis=1), integrals)


def _assemble(model: _CellModel, t: np.ndarray, x: np.ndarray, integrals: list) -> dict:
    """Waveforms at the samples and the running integrals (cumulative sums of the interval integrals)."""
    q = model.evaluate(x)
    waves = {"t": t, "i_d": q["i_l"]}
    for name in ("v_ds", "v_gs", "i_g", "v_o", "v_go", "i_go", "i_ch", "i_ch_o", "i_diode", "i_diode_o", "i_ind"):
        waves[name] = np.asarray(q[name], dtype=float) * np.ones_like(t)
    if model.recovery:
        waves["q_m"] = x[model.index["q_m"]]
    for name in integrals[0]:
        pieces = np.concatenate([part[name] for part in integrals])
        # the last segment closes on its own last sample, the others on their end (= the next one's first)
        waves[name] = np.concatenate(([0.0], np.cumsum(pieces)))[: t.size]
    waves["w_inductors"], waves["w_capacitors"] = model.stored(x)
    distinct = np.append(True, np.diff(t) > 0)  # drop repeated instants (tiny steps), for the slopes
    return {name: value[distinct] for name, value in waves.items()}


# --- figures -----------------------------------------------------------------------------------------------------


def _crossing(t, y, level, rising: bool, after: float = -math.inf) -> float:
    """First time at or after ``after`` where ``y`` crosses ``level`` in the given direction (linear
    interpolation between samples); nan if it never does."""
    below = y < level if rising else y > level
    k = np.flatnonzero(below[:-1] & ~below[1:])
    if k.size == 0:
        return math.nan
    times = t[k] + (level - y[k]) * (t[k + 1] - t[k]) / (y[k + 1] - y[k])
    times = times[times >= after]
    return float(times[0]) if times.size else math.nan


def _window_energy(waves: dict, start: float, stop: float) -> float:
    """:math:`\\int_{start}^{stop} v_{ds} i_d\\,dt` from the running integral ``e_dut`` (linear interpolation)."""
    if not (math.isfinite(start) and math.isfinite(stop)):
        return math.nan
    e = np.interp([start, stop], waves["t"], waves["e_dut"])
    return float(e[1] - e[0])


def measure(cell: Cell, edge: str, waves: dict) -> dict:
    """Figures of one edge by the textbook definitions (A. Volke, M. Hornkamp, *IGBT Modules*, 2nd ed., 2012,
    ch. 3): times between first crossings of 10 % and 90 % levels; E_off from :math:`v_{ds}` reaching 10 % of
    :math:`V_{bus}` until :math:`i_d` has fallen to 2 % of I; E_on from :math:`i_d` reaching 10 % of I until
    :math:`v_{ds}` has fallen to 2 % of :math:`V_{bus}` (the end crossing is the first one after the start).
    Slopes are ``numpy.gradient`` central differences on the samples. A level never crossed gives nan.

    Returns
    -------
    dict
        ``turn_off``: ``peak_v_ds``, ``min_v_gs``, ``max_v_go``, ``min_v_go``, ``di_dt_max`` (largest
        :math:`|di_d/dt|`), ``dv_dt_max`` (largest :math:`dv_{ds}/dt`), ``t_rv``, ``t_fi``, ``e_off``.
        ``turn_on``: ``peak_v_o``, ``max_v_gs``, ``max_v_go``, ``min_v_go``, ``di_dt_max``, ``dv_dt_max`` (largest
        :math:`|dv_{ds}/dt|`), ``t_ri``, ``t_fv``, ``e_on``, ``peak_reverse_current`` (:math:`\\max i_d - I`).
    """
    if edge not in EDGES:
        raise ValueError(f"edge must be one of {EDGES}, not {edge!r}")
    t, v, i = waves["t"], waves["v_ds"], waves["i_d"]
    bus, load = cell.bus_voltage, cell.load_current
    di_dt, dv_dt = np.gradient(i, t), np.gradient(v, t)
    common = {
        "max_v_go": float(np.max(waves["v_go"])),
        "min_v_go": float(np.min(waves["v_go"])),
        "di_dt_max": float(np.max(np.abs(di_dt))),
    }
    if edge == "turn_off":
        v10 = _crossing(t, v, 0.1 * bus, rising=True)
        i90 = _crossing(t, i, 0.9 * load, rising=False)
        return {
            "peak_v_ds": float(np.max(v)),
            "min_v_gs": float(np.min(waves["v_gs"])),
            **common,
            "dv_dt_max": float(np.max(dv_dt)),
            "t_rv": _crossing(t, v, 0.9 * bus, rising=True, after=v10) - v10,
            "t_fi": _crossing(t, i, 0.1 * load, rising=False, after=i90) - i90,
            "e_off": _window_energy(waves, v10, _crossing(t, i, 0.02 * load, rising=False, after=v10)),
        }
    i10 = _crossing(t, i, 0.1 * load, rising=True)
    v90 = _crossing(t, v, 0.9 * bus, rising=False)
    return {
        "peak_v_o": float(np.max(waves["v_o"])),
        "max_v_gs": float(np.max(waves["v_gs"])),
        **common,
        "dv_dt_max": float(np.max(np.abs(dv_dt))),
        "t_ri": _crossing(t, i, 0.9 * load, rising=True, after=i10) - i10,
        "t_fv": _crossing(t, v, 0.1 * bus, rising=False, after=v90) - v90,
        "e_on": _window_energy(waves, i10, _crossing(t, v, 0.02 * bus, rising=False, after=i10)),
        "peak_reverse_current": float(np.max(i) - load),
    }
