"""Benchmark 4: the headroom of a two-switch design, its wall time and number of rule evaluations, against one
plain check of the same design, measured in one run.

Run by hand from the repository root: ``PYTHONPATH=. python benchmarks/headroom.py [design] [runs]`` (default:
examples/pump-drive-leg.yaml, one run). Each measurement runs in a fresh process, so that no cell simulation is
reused from an earlier one (the cell runs are cached per process); the check and the headroom are interleaved,
so that drifting machine load hits both alike. Medians are printed.
"""

from __future__ import annotations

import multiprocessing
import statistics
import sys
import time
from pathlib import Path

from margincheck.design import load_design
from margincheck.headroom import find_headroom
from margincheck.rules import RULES, evaluate_design

DEFAULT_DESIGN = Path(__file__).resolve().parent.parent / "examples" / "pump-drive-leg.yaml"


def _check(path: Path) -> tuple[float, int, int]:
    """Seconds, designs evaluated and rule evaluations of one check."""
    design = load_design(path)
    start = time.perf_counter()
    evaluate_design(design)
    elapsed = time.perf_counter() - start
    return elapsed, 1, sum(1 for key in design.memo if key[0] in RULES)


def _headroom(path: Path) -> tuple[float, int, int]:
    """Seconds, designs evaluated and rule evaluations of one headroom search."""
    design = load_design(path)
    start = time.perf_counter()
    headroom = find_headroom(design)
    elapsed = time.perf_counter() - start
    return elapsed, headroom.points, headroom.rule_evaluations


def main() -> None:
    path = Path(sys.argv[1]) if len(sys.argv) > 1 else DEFAULT_DESIGN
    runs = int(sys.argv[2]) if len(sys.argv) > 2 else 1
    results: dict[str, list[tuple[float, int, int]]] = {"check": [], "headroom": []}
    with multiprocessing.get_context("spawn").Pool(1, maxtasksperchild=1) as pool:
        for _ in range(runs):
            results["check"].append(pool.apply(_check, (path,)))
            results["headroom"].append(pool.apply(_headroom, (path,)))
    print(f"design: {path.name}, {runs} run(s), each in a fresh process; medians")
    for side, rows in results.items():
        seconds = statistics.median(row[0] for row in rows)
        print(f"  {side:<9} {seconds:8.2f} s  {rows[-1][1]:4d} designs  {rows[-1][2]:5d} rule evaluations")
    ratio = statistics.median(heavy[0] / light[0] for light, heavy in zip(results["check"], results["headroom"]))
    print(f"  headroom / check: {ratio:.0f}x the time of one check")


if __name__ == "__main__":
    main()
