"""Voltage-dependent device capacitances (C_oss, C_rss) from datasheet curve points.

A curve read off a datasheet is a list of (v_ds, C) points. Between points the capacitance is interpolated
linearly in log C against v_ds (datasheet capacitance plots are drawn on a logarithmic capacitance axis), and it
is held at the end values beyond the table. A single value is a flat curve.

References
----------
.. [1] R. W. Erickson, D. Maksimović, *Fundamentals of Power Electronics*, 3rd ed., Springer, 2020, ch. 4
   (switching loss of a nonlinear output capacitance, E = ∫ v·C(v) dv) - from memory. The integrals
   Q(V) = ∫0^V C(v) dv and E(V) = ∫0^V v·C(v) dv are the definitions of the charge and energy of a
   capacitor whose capacitance depends on voltage.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

__all__ = ["LogLinearCurve", "capacitance_at", "charge_at"]


def capacitance_at(voltage, table_voltage, table_capacitance):
    """C(v) from curve points, log-linear between points and constant beyond them [F].

    Parameters
    ----------
    voltage : float or ndarray
        Drain-source voltage(s) at which C is wanted [V].
    table_voltage : sequence of float
        Curve voltages, ascending [V].
    table_capacitance : sequence of float
        Capacitances at those voltages [F], all positive.

    Examples
    --------
    >>> round(float(capacitance_at(50.0, [0.0, 100.0], [1e-9, 1e-11])) * 1e12, 6)  # geometric mean
    100.0
    """
    return LogLinearCurve.of(table_voltage, table_capacitance).capacitance(voltage)


def charge_at(voltage, table_voltage, table_capacitance):
    """Q(v) = ∫0^v C(w) dw of the log-linear curve of :func:`capacitance_at`, integrated exactly [C].

    Between two points C(w) = C_k·exp(b_k·(w − v_k)), b_k = ln(C_k+1/C_k)/(v_k+1 − v_k), whose integral is
    C_k·(exp(b_k·Δ) − 1)/b_k; beyond the table the end value is held, so Q grows linearly there (and is
    negative, C_0·v, below 0 V). dQ/dv is exactly :func:`capacitance_at`, so a simulation that integrates
    charges conserves them.

    Examples
    --------
    >>> round(float(charge_at(100.0, [0.0], [1e-10])) * 1e9, 9)  # a flat 100 pF curve: Q = C·V
    10.0
    """
    return LogLinearCurve.of(table_voltage, table_capacitance).charge(voltage)


def _segment_charge(start_capacitance, log_slope, width):
    """∫0^width C0·exp(b·w) dw = C0·(exp(b·width) − 1)/b, written so that b → 0 gives C0·width."""
    exponent = log_slope * width
    small = np.abs(exponent) < 1e-9
    with np.errstate(divide="ignore", invalid="ignore"):
        curved = start_capacitance * np.expm1(exponent) / np.where(small, 1.0, log_slope)
    return np.where(small, start_capacitance * width * (1.0 + 0.5 * exponent), curved)


@dataclass(frozen=True)
class LogLinearCurve:
    """The curve of :func:`capacitance_at` with its logarithms, slopes and charges at the points taken once
    (a simulation reads the same curve at every step)."""

    voltages: np.ndarray
    capacitances: np.ndarray
    log_capacitances: np.ndarray
    log_slopes: np.ndarray
    charges: np.ndarray   # Q at each point [C]

    @classmethod
    def of(cls, table_voltage, table_capacitance) -> LogLinearCurve:
        """The curve through the points (``table_voltage`` ascending [V], ``table_capacitance`` [F] > 0)."""
        voltages = np.asarray(table_voltage, dtype=float)
        capacitances = np.asarray(table_capacitance, dtype=float)
        logs = np.log(capacitances)
        widths = np.diff(voltages)
        slopes = np.diff(logs) / widths
        charges = capacitances[0] * voltages[0] + np.concatenate(
            [[0.0], np.cumsum(_segment_charge(capacitances[:-1], slopes, widths))])
        return cls(voltages, capacitances, logs, slopes, charges)

    def capacitance(self, voltage):
        """C(v) [F]."""
        return np.exp(np.interp(voltage, self.voltages, self.log_capacitances))

    def charge(self, voltage):
        """Q(v) = ∫0^v C [C]."""
        voltages, capacitances = self.voltages, self.capacitances
        voltage = np.asarray(voltage, dtype=float)
        first, last = capacitances[0], capacitances[-1]
        below = first * (voltage - voltages[0]) + first * voltages[0]
        if voltages.size == 1:
            return below
        index = np.clip(np.searchsorted(voltages, voltage, side="right") - 1, 0, voltages.size - 2)
        inside = self.charges[index] + _segment_charge(capacitances[index], self.log_slopes[index],
                                                       voltage - voltages[index])
        above = self.charges[-1] + last * (voltage - voltages[-1])
        return np.where(voltage < voltages[0], below, np.where(voltage > voltages[-1], above, inside))
