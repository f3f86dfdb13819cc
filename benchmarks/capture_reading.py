"""Time and peak memory of reading a large capture, against a bare ``np.load`` of the same data plus one pass.

Writes a capture of N samples x 4 columns (time, v_ds, i_d, v_gs; default 10 M samples) as CSV and as .npy into
a temporary folder, then runs, in a fresh subprocess each and interleaved round by round:

- baseline:  ``np.load(capture.npy)`` (the whole array in memory) and one pass over it (a column sum);
- csv:       ``read_capture(capture.csv)``;
- npy:       ``read_capture(capture.npy)``.

Each subprocess reports its wall time for the work (imports excluded) and its peak resident memory
(``resource.getrusage(RUSAGE_SELF).ru_maxrss``, imports included). Printed: the median of each side and the
ratios to the baseline. Run by hand: ``PYTHONPATH=. python benchmarks/capture_reading.py [N] [ROUNDS]``.
"""

from __future__ import annotations

import json
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import numpy as np

_ROWS_PER_WRITE = 500_000

_SIDES = {
    "baseline": """
import numpy as np
start = time.perf_counter()
array = np.load(PATH)
array.sum(axis=0)
""",
    "csv": """
from margincheck.captures.reading import read_capture
start = time.perf_counter()
read_capture(PATH)
""",
    "npy": """
from margincheck.captures.reading import read_capture
start = time.perf_counter()
read_capture(PATH)
""",
}

_REPORT = """
elapsed = time.perf_counter() - start
print(json.dumps({"seconds": elapsed, "peak_mib": resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024}))
"""


def _columns(start: int, stop: int) -> np.ndarray:
    """A double-pulse-like block: a 400 ps time base around the trigger, a ringing v_ds, a ramp of i_d."""
    index = np.arange(start, stop, dtype=np.float64)
    t = (index - 1_000_000) * 400e-12
    v_ds = 48.0 * (t > 0) + 6.0 * np.exp(-np.abs(t) / 200e-9) * np.sin(2e8 * t)
    i_d = 20.0 + 1e5 * np.abs(t)
    v_gs = np.where(t > 0, -3.0, 15.0)
    return np.column_stack([t, v_ds, i_d, v_gs])


def write_files(folder: Path, samples: int) -> tuple[Path, Path]:
    """The same capture as CSV (9 significant digits) and as a float64 .npy of shape (samples, 4)."""
    csv_path, npy_path = folder / "capture.csv", folder / "capture.npy"
    table = np.lib.format.open_memmap(npy_path, mode="w+", dtype=np.float64, shape=(samples, 4))
    with open(csv_path, "w", encoding="utf-8") as stream:
        stream.write("time,v_ds,i_d,v_gs\n")
        for start in range(0, samples, _ROWS_PER_WRITE):
            block = _columns(start, min(start + _ROWS_PER_WRITE, samples))
            np.savetxt(stream, block, fmt="%.9g", delimiter=",")
            table[start:start + len(block)] = block
    table.flush()
    del table
    return csv_path, npy_path


def _run(side: str, path: Path) -> dict:
    script = "import json, resource, time\nPATH = " + repr(str(path)) + _SIDES[side] + _REPORT
    result = subprocess.run([sys.executable, "-c", script], capture_output=True, text=True, check=True)
    return json.loads(result.stdout)


def main() -> None:
    samples = int(sys.argv[1]) if len(sys.argv) > 1 else 10_000_000
    rounds = int(sys.argv[2]) if len(sys.argv) > 2 else 3
    with tempfile.TemporaryDirectory() as folder:
        began = time.perf_counter()
        csv_path, npy_path = write_files(Path(folder), samples)
        print(f"{samples} samples x 4 columns written in {time.perf_counter() - began:.0f} s: "
              f"CSV {csv_path.stat().st_size / 2**20:.0f} MiB, .npy {npy_path.stat().st_size / 2**20:.0f} MiB")
        paths = {"baseline": npy_path, "csv": csv_path, "npy": npy_path}
        results: dict[str, list[dict]] = {side: [] for side in _SIDES}
        for _ in range(rounds):
            for side in _SIDES:
                results[side].append(_run(side, paths[side]))
    medians = {side: {key: statistics.median(run[key] for run in runs) for key in ("seconds", "peak_mib")}
               for side, runs in results.items()}
    base = medians["baseline"]
    for side, median in medians.items():
        print(f"{side:<9} {median['seconds']:8.2f} s  {median['peak_mib']:8.0f} MiB peak   "
              f"ratio to baseline: time {median['seconds'] / base['seconds']:6.2f}  "
              f"memory {median['peak_mib'] / base['peak_mib']:5.2f}")


if __name__ == "__main__":
    main()
