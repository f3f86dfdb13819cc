"""Cells for the physics tests: one device description turned into the production model's arrays.

The numbers are illustrative (a 650 V class MOSFET in a bench leg), not any real part.
"""

from __future__ import annotations

import numpy as np

from margincheck.physics.switching_cell import Cell, CellDevice, CurveTable

#: An illustrative device: scalars in SI units; capacitances as (voltages, values) tables.
DEVICE = {"v_th": 4.0, "g_fs": 20.0, "r_on": 0.1, "c_iss": 2.5e-9, "c_rss": ((0.0,), (8e-12,)),
          "c_oss": ((0.0,), (90e-12,)), "r_gate": 3.0, "l_gate": 2e-9, "v_on": 15.0, "v_off": -3.0,
          "l_source": 1e-9, "kelvin": True, "v_f": 0.9, "r_diode": 0.02, "tau": None, "t_m": None}
CELL = {"bus_voltage": 400.0, "load_current": 40.0, "loop_inductance": 30e-9, "loop_resistance": 0.0,
        "damping_resistance": np.inf, "node_capacitance": 0.0}


def device_arrays(values: dict, corners: int = 1) -> CellDevice:
    """The production model's device from a plain description (``DEVICE`` with overrides)."""
    def full(value):
        return np.full(corners, float(value))

    recovery = values["tau"] is not None
    return CellDevice(
        v_th=full(values["v_th"]), g_fs=full(values["g_fs"]), r_on=full(values["r_on"]), c_iss=full(values["c_iss"]),
        c_rss=CurveTable(tuple(values["c_rss"][0]), tuple(values["c_rss"][1]), full(1.0)),
        c_oss=CurveTable(tuple(values["c_oss"][0]), tuple(values["c_oss"][1]), full(1.0)),
        r_gate=full(values["r_gate"]), l_gate=full(values["l_gate"]), v_on=full(values["v_on"]),
        v_off=full(values["v_off"]), l_source=full(values["l_source"]), shared=full(0.0 if values["kelvin"] else 1.0),
        v_f=full(values["v_f"]), r_diode=full(values["r_diode"]),
        recovery_lifetime=full(values["tau"]) if recovery else None,
        recovery_transit=full(values["t_m"]) if recovery else None)


def cell_arrays(cell: dict, dut: dict, opposite: dict, corners: int = 1) -> Cell:
    """The production model's cell from plain descriptions."""
    damping = 0.0 if not np.isfinite(cell["damping_resistance"]) else 1.0 / cell["damping_resistance"]
    return Cell(bus_voltage=np.full(corners, cell["bus_voltage"]), load_current=np.full(corners, cell["load_current"]),
                loop_inductance=np.full(corners, cell["loop_inductance"]),
                loop_resistance=np.full(corners, cell["loop_resistance"]), dut=device_arrays(dut, corners),
                opposite=device_arrays(opposite, corners), damping_conductance=np.full(corners, damping),
                node_capacitance=np.full(corners, cell["node_capacitance"]))


def with_changes(base: dict, **changes) -> dict:
    """A copy of a description with some values changed."""
    return {**base, **changes}


__all__ = ["CELL", "DEVICE", "cell_arrays", "device_arrays", "with_changes"]
