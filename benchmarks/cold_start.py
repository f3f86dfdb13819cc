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


def median_seconds(command: list[str], runs: int) -> float:
    """Median wall time of ``runs`` runs of ``command`` (output discarded), after one warm-up run."""
    subprocess.run(command, stdout=subprocess.DEVNULL, check=False)
    times = []
    for _ in range(runs):
        start = time.perf_counter()
        subprocess.run(command, stdout=subprocess.DEVNULL, check=False)
        times.append(time.perf_counter() - start)
    return statistics.median(times)


def main() -> None:
    runs = int(sys.argv[1]) if len(sys.argv) > 1 else 15
    medians = {name: median_seconds(command, runs) for name, command in COMMANDS.items()}
    for name, seconds in medians.items():
        print(f"{name:<18} median {seconds * 1000:7.1f} ms over {runs} runs")
    print(f"ratio check/imports: {medians['margincheck check'] / medians['imports only']:.2f}")


if __name__ == "__main__":
    main()
