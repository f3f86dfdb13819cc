"""The worst-case evaluation with every corner at once against a Python loop over the same corners, one at a
time: the cell simulation of both edges (every figure the transient rules read) and the first-order turn-off
peak (the closed-form cross-check of turn-off-overshoot), for each switch of the 12-toleranced design of
benchmarks/toleranced_design.py.

Run by hand from the repository root: ``PYTHONPATH=. python benchmarks/vectorised_vs_loop.py [runs] [sample]
[switch ...]`` (the switches by ref; all by default).
The vectorised side evaluates all 769 corners of each switch; the loop, which costs the same for every corner
it visits, visits ``sample`` corners spread evenly over the grid (default 16), and its time per corner is
scaled to the whole grid. The two sides alternate within each run; medians are compared. Aim of issue 12: the
vectorised evaluation at least 50x faster than the loop.
"""

from __future__ import annotations

import statistics
import sys
import tempfile
import time
from pathlib import Path

import numpy as np

from benchmarks.toleranced_design import EXAMPLE, toleranced
from margincheck.design import load_design
from margincheck.intervals import search_grid
from margincheck.physics.cell_edges import measure_edges
from margincheck.physics.overshoot import turn_off_peak_voltage
from margincheck.physics.switching_cell import cell_at
from margincheck.rules.cell_model import INTERIOR, _cells, _searched_side, cell_inputs
from margincheck.rules.switching_model import EdgeModel


def _grids(design, refs: list[str]) -> dict:
    """Each switch's corner grid and the cells of both edges on it (as margincheck.rules.cell_model builds them)."""
    grids = {}
    for switch in (switch for switch in design.switches if not refs or switch.ref in refs):
        notes: list[str] = []
        inputs = cell_inputs(switch, design, notes)
        grid = search_grid({name: item.interval for name, item in inputs.items()},
                           {name: _searched_side(name, item) for name, item in inputs.items()}, INTERIOR)
        grids[switch.ref] = (switch, grid, _cells(switch, design, grid, notes))
    return grids


def _evaluate(switch, grid: dict, cells: dict, corners: int) -> None:
    """Everything at ``corners`` corners at once: the simulated figures and the first-order peak."""
    measure_edges(cells, corners)
    with np.errstate(all="ignore"):
        rate = EdgeModel(grid, switch).turn_off_di_dt(grid["turn_off_current"])
        turn_off_peak_voltage(grid["bus_voltage"], grid["loop_inductance"], rate)


def _vectorised(switch, grid: dict, cells: dict) -> float:
    corners = grid["bus_voltage"].size
    start = time.perf_counter()
    _evaluate(switch, grid, cells, corners)
    return time.perf_counter() - start


def _loop_per_corner(switch, grid: dict, cells: dict, sample: int) -> float:
    corners = grid["bus_voltage"].size
    visited = np.linspace(0, corners - 1, sample).astype(int)
    start = time.perf_counter()
    for index in visited:
        one = [index]
        _evaluate(switch, {name: values[one] for name, values in grid.items()},
                  {edge: cell_at(cell, one, corners) for edge, cell in cells.items()}, 1)
    return (time.perf_counter() - start) / sample


def main() -> None:
    runs = int(sys.argv[1]) if len(sys.argv) > 1 else 1
    sample = int(sys.argv[2]) if len(sys.argv) > 2 else 16
    with tempfile.TemporaryDirectory() as folder:
        path = Path(folder) / "toleranced.yaml"
        path.write_text(toleranced(EXAMPLE.read_text(encoding="utf-8")), encoding="utf-8")
        grids = _grids(load_design(path), sys.argv[3:])
    times: dict[str, dict[str, list[float]]] = {ref: {"vectorised": [], "loop": []} for ref in grids}
    for _ in range(runs):
        for ref, (switch, grid, cells) in grids.items():
            times[ref]["vectorised"].append(_vectorised(switch, grid, cells))
            times[ref]["loop"].append(_loop_per_corner(switch, grid, cells, sample) * grid["bus_voltage"].size)
    total = {side: sum(statistics.median(times[ref][side]) for ref in grids) for side in ("vectorised", "loop")}
    for ref, (_, grid, _) in grids.items():
        vectorised, loop = (statistics.median(times[ref][side]) for side in ("vectorised", "loop"))
        print(f"{ref}: {grid['bus_voltage'].size} corners, vectorised {vectorised:7.2f} s, loop {loop:8.1f} s "
              f"(from {sample} corners), {loop / vectorised:6.1f}x")
    print(f"all switches: vectorised {total['vectorised']:.2f} s, loop {total['loop']:.1f} s, "
          f"{total['loop'] / total['vectorised']:.1f}x (medians over {runs} runs)")


if __name__ == "__main__":
    main()
