"""The switching-cell simulation: 1,024 corners against one, and one corner against scipy's Radau on the same
circuit (the independent reference in tests/reference) at 1 % peak accuracy.

Run by hand from the repository root: ``PYTHONPATH=. python benchmarks/cell_corners.py [runs]``. The sides of
each ratio are interleaved in one run, so that drifting machine load hits both alike; medians are printed.
Aims of the issue: 1,024 corners at most 5x one corner; at least 20x faster per corner than Radau at 1,024
corners, and not slower at one corner.
"""

from __future__ import annotations

import dataclasses
import statistics
import sys
import time

import numpy as np

from margincheck.physics.cell_edges import measure_edges, simulated_time
from tests.physics.cell_builders import CELL, DEVICE, cell_arrays, with_changes
from tests.reference.kirchhoff_cell import Cell, Device, simulate

SHARED = with_changes(DEVICE, kelvin=False, l_source=5e-9, r_gate=6.0)
OPPOSITE = with_changes(DEVICE, r_gate=11.0, l_source=0.0, v_off=0.0)


def _cells(corners: int) -> dict:
    """Both edges over ``corners`` corners that differ in bus voltage and loop inductance."""
    cells = {edge: cell_arrays(CELL, SHARED, OPPOSITE, corners) for edge in ("turn_off", "turn_on")}
    spread = np.linspace(0.9, 1.1, corners)
    return {edge: dataclasses.replace(cell, bus_voltage=cell.bus_voltage * spread,
                                      loop_inductance=cell.loop_inductance * spread[::-1])
            for edge, cell in cells.items()}


def _ours(corners: int) -> float:
    cells = _cells(corners)
    start = time.perf_counter()
    measure_edges(cells, corners)
    return time.perf_counter() - start


def _radau() -> float:
    fields = {item.name for item in dataclasses.fields(Device)}
    cell = Cell(**CELL, dut=Device(**{k: v for k, v in SHARED.items() if k in fields}),
                opposite=Device(**{k: v for k, v in OPPOSITE.items() if k in fields}))
    ends = {edge: float(simulated_time(_cells(1)[edge], edge)[0]) for edge in ("turn_off", "turn_on")}
    start = time.perf_counter()
    for edge, end in ends.items():
        simulate(cell, edge, end)
    return time.perf_counter() - start


def main() -> None:
    runs = int(sys.argv[1]) if len(sys.argv) > 1 else 3
    times: dict[str, list[float]] = {"one corner": [], "1,024 corners": [], "Radau, one corner": []}
    for _ in range(runs):
        times["one corner"].append(_ours(1))
        times["1,024 corners"].append(_ours(1024))
        times["Radau, one corner"].append(_radau())
    medians = {name: statistics.median(values) for name, values in times.items()}
    for name, seconds in medians.items():
        print(f"{name:<20} median {seconds:8.3f} s over {runs} runs (both edges)")
    print(f"1,024 corners / one corner:                 {medians['1,024 corners'] / medians['one corner']:6.2f}x")
    print(f"Radau per corner / ours per corner (1):     {medians['Radau, one corner'] / medians['one corner']:6.2f}x")
    print(f"Radau per corner / ours per corner (1,024): "
          f"{medians['Radau, one corner'] / (medians['1,024 corners'] / 1024):6.1f}x")


if __name__ == "__main__":
    main()
