"""Cold start of `margincheck check` on the default example against importing its dependencies alone.

Run by hand: ``python benchmarks/cold_start.py [runs]``. Prints the median wall time of each command over
the runs and their ratio, all measured in this one run (the issue's aim: a ratio of at most 1.3).
"""

from __future__ import annotations

import statistics
import subprocess
import sys
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
EXAMPLE = ROOT / "examples" / "solar-string-sic-leg.yaml"
COMMANDS = {
    "imports only": [sys.executable, "-c", "import numpy, pint, yaml, jsonschema, rich"],
    "margincheck check": [sys.executable, "-m", "margincheck", "check", str(EXAMPLE)],
}


def wall_time(command: list[str]) -> float:
    """Wall time of one run of ``command``, output discarded."""
    start = time.perf_counter()
    subprocess.run(command, stdout=subprocess.DEVNULL, check=False)
    return time.perf_counter() - start


def main() -> None:
    runs = int(sys.argv[1]) if len(sys.argv) > 1 else 31
    for command in COMMANDS.values():  # warm the file cache and the bytecode caches
        wall_time(command)
    times: dict[str, list[float]] = {name: [] for name in COMMANDS}
    for _ in range(runs):  # interleaved, so that drifting machine load hits both commands alike
        for name, command in COMMANDS.items():
            times[name].append(wall_time(command))
    medians = {name: statistics.median(values) for name, values in times.items()}
    for name, seconds in medians.items():
        print(f"{name:<18} median {seconds * 1000:7.1f} ms over {runs} runs")
    print(f"ratio check/imports: {medians['margincheck check'] / medians['imports only']:.2f}")


if __name__ == "__main__":
    main()
