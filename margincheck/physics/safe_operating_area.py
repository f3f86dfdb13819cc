"""The forward-bias safe operating area at the real case temperature, and single-pulse avalanche energy.

The SOA boundary of a MOSFET or HEMT for a pulse of width t_p is, at each drain-source voltage V, the least of

    I_DM                              the pulsed current rating                                   (1)
    V / R_ds(on)(T_j,max)             the on-resistance line                                      (2)
    (T_j,max − T_c) / (V·Z_th(t_p))   the thermal line: the power that heats the junction from
                                      T_c to T_j,max in the pulse                                  (3)

and it ends at V(BR)DSS. Datasheet charts draw (1)-(3) at T_c = 25 °C; at a hotter case the thermal line (3)
falls in proportion to T_j,max − T_c, which is how a chart's points are carried to the real case temperature
here (the whole chart is scaled, the conservative reading).

A switch that turns off an inductive current I into breakdown clamps at V_BR while the inductor discharges
against V_BR − V_DD, so the current falls linearly in t_av = L·I/(V_BR − V_DD) and the device absorbs

    E_AS = ½·L·I²·V_BR/(V_BR − V_DD)                                                               (4)

(the unclamped inductive switching test circuit). The rated single-pulse avalanche energy applies from its
stated starting junction temperature and falls to zero at T_j,max; linear derating between them is common
practice:

    E_allowed = E_AS,rated·(T_j,max − T_j,start)/(T_j,max − T_j,rated)                              (5)

References
----------
.. [1] B. J. Baliga, *Fundamentals of Power Semiconductor Devices*, Springer, 2008, ch. 6 (safe operating
   area of power MOSFETs) - from memory.
.. [2] JEDEC JESD24, *Power MOSFETs* (unclamped inductive switching test, single-pulse avalanche energy)
   - from memory; the energy balance (4) is checked against a scipy integration of the clamped circuit.
"""

from __future__ import annotations

from enum import IntEnum

import numpy as np

__all__ = ["Boundary", "allowed_avalanche_energy", "avalanche_energy", "boundary_current",
           "scaled_chart_current", "thermal_line_current"]


class Boundary(IntEnum):
    """Which part of the SOA boundary governs at a point (index order of ``boundary_current``)."""

    CURRENT = 0
    ON_RESISTANCE = 1
    THERMAL = 2
    CHART = 3

    @property
    def label(self) -> str:
        """How the report names this part of the boundary."""
        return {0: "the pulsed current rating I_DM", 1: "the R_ds(on) line at T_j,max",
                2: "the thermal line (T_j,max - T_c)/Z_th", 3: "the datasheet SOA chart"}[int(self)]


def thermal_line_current(voltage, junction_limit, case_temperature, impedance):
    """Boundary current of the thermal line, Eq. (3) [A]: V [V], T_j,max and T_c [K], Z_th(t_p) [K/W].

    Examples
    --------
    >>> round(float(thermal_line_current(400.0, 448.15, 363.15, 0.05)), 6)  # 85 K / 0.05 K/W = 1700 W
    4.25
    """
    power = (junction_limit - case_temperature) / impedance  # Eq. (3)
    return np.maximum(power, 0.0) / voltage


def scaled_chart_current(voltage, chart_voltages, chart_currents, chart_case, junction_limit, case_temperature):
    """Datasheet SOA curve points interpolated log-log at V and carried to the real case temperature [A].

    The chart's current is scaled by (T_j,max − T_c)/(T_j,max − T_c,chart) when the case is hotter than the
    chart's, and never scaled up. Outside the chart's voltage range the result is NaN (the chart says nothing
    there).
    """
    voltage = np.asarray(voltage, dtype=float)
    log_current = np.interp(np.log(voltage), np.log(chart_voltages), np.log(chart_currents),
                            left=np.nan, right=np.nan)
    scale = np.clip((junction_limit - case_temperature) / (junction_limit - chart_case), 0.0, 1.0)
    return np.exp(log_current) * scale


def boundary_current(voltage, pulse_current, hot_on_resistance, thermal_current, chart_current=None):
    """The SOA boundary current at V, Eqs. (1)-(3) and the chart where it applies, and which part governs.

    ``hot_on_resistance`` None leaves the on-resistance line out, as a NaN part is.

    Returns
    -------
    (current [A], governing ``Boundary`` index) per element; a missing part (NaN) is left out.
    """
    voltage = np.asarray(voltage, dtype=float)
    ohmic = np.full(voltage.shape, np.nan) if hot_on_resistance is None else voltage / hot_on_resistance
    parts = np.stack(np.broadcast_arrays(
        np.asarray(pulse_current, dtype=float), ohmic,
        np.asarray(thermal_current, dtype=float),
        np.full(voltage.shape, np.nan) if chart_current is None else np.asarray(chart_current, dtype=float)))
    candidates = np.where(np.isnan(parts), np.inf, parts)
    governing = np.argmin(candidates, axis=0)
    return np.take_along_axis(candidates, governing[None], axis=0)[0], governing


def avalanche_energy(inductance, current, breakdown_voltage, supply_voltage):
    """Energy absorbed in breakdown by an unclamped inductive turn-off, Eq. (4) [J].

    L [H], I [A], V_BR [V], V_DD [V]; NaN where V_BR ≤ V_DD (the current would not fall).

    Examples
    --------
    >>> round(float(avalanche_energy(1e-3, 10.0, 100.0, 50.0)), 6)  # ½·1 mH·100 A²·2
    0.1
    """
    with np.errstate(divide="ignore", invalid="ignore"):
        headroom = np.asarray(breakdown_voltage, dtype=float) - supply_voltage
        energy = 0.5 * inductance * np.square(current) * breakdown_voltage / headroom  # Eq. (4)
    return np.where(headroom > 0, energy, np.nan)


def allowed_avalanche_energy(rated_energy, rated_temperature, junction_limit, start_temperature):
    """The rated single-pulse avalanche energy derated linearly to zero at T_j,max, Eq. (5) [J].

    Examples
    --------
    >>> round(float(allowed_avalanche_energy(0.1, 298.15, 448.15, 373.15)), 6)  # halfway: half the rating
    0.05
    """
    fraction = (junction_limit - np.asarray(start_temperature, dtype=float)) / (junction_limit - rated_temperature)
    return rated_energy * np.clip(fraction, 0.0, 1.0)  # Eq. (5)
