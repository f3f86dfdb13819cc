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

import numpy as np

__all__ = ["capacitance_at", "stored_output_energy"]

_GRID_POINTS = 400


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
    return np.exp(np.interp(voltage, table_voltage, np.log(table_capacitance)))


def _grid(voltage, points: int = _GRID_POINTS):
    """Integration grid from 0 to ``voltage`` (broadcast over arrays: the grid is the last axis)."""
    return np.asarray(voltage, dtype=float)[..., None] * np.linspace(0.0, 1.0, points)


def stored_output_energy(voltage, table_voltage, table_capacitance):
    """E_oss(V) = ∫0^V v·C(v) dv: the energy the output capacitance holds at V [J]."""
    grid = _grid(voltage)
    return np.trapezoid(grid * capacitance_at(grid, table_voltage, table_capacitance), grid, axis=-1)
