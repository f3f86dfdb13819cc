"""Wall time of a batch of designs checked in parallel processes against one process, measured in one run.

Run by hand: ``PYTHONPATH=. python benchmarks/batch_parallel.py``. Copies the default example (and its device
file) eight times into a temporary folder and checks the folder with one worker and with one worker per CPU.
The two sides alternate within each round, so that drifting machine load hits both alike; medians are
compared. The ratio is bounded by the number of cores and by the cost of starting the worker processes.
"""

from __future__ import annotations

import os
import shutil
import statistics
import tempfile
import time
from pathlib import Path

from margincheck.batch import collect_designs, run_batch
from margincheck.loading import DEFAULT_LIMITS

EXAMPLES = Path(__file__).resolve().parent.parent / "examples"
COPIES = 8
ROUNDS = 3


def _folder(root: Path) -> Path:
    shutil.copytree(EXAMPLES / "devices", root / "devices")
    for number in range(COPIES):
        shutil.copy(EXAMPLES / "solar-string-sic-leg.yaml", root / f"leg-{number}.yaml")
    return root


def _seconds(designs: list[Path], workers: int) -> float:
    start = time.perf_counter()
    items = run_batch(designs, {"limits": DEFAULT_LIMITS}, workers=workers)
    assert all(item.report is not None for item in items)
    return time.perf_counter() - start


def main() -> None:
    with tempfile.TemporaryDirectory() as folder:
        designs, _ = collect_designs([_folder(Path(folder))])
        cpus = os.cpu_count() or 1
        times: dict[int, list[float]] = {1: [], cpus: []}
        for _ in range(ROUNDS):
            for workers in times:
                times[workers].append(_seconds(designs, workers))
        serial, parallel = statistics.median(times[1]), statistics.median(times[cpus])
    print(f"{len(designs)} designs, one worker:   median {serial * 1e3:7.1f} ms over {ROUNDS} runs")
    print(f"{len(designs)} designs, {cpus} workers:    median {parallel * 1e3:7.1f} ms over {ROUNDS} runs")
    print(f"ratio one worker/parallel: {serial / parallel:.2f}")


if __name__ == "__main__":
    main()
