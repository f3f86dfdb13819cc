"""All rules of a design with 12 toleranced inputs against the same design exact: wall time and peak memory.

Run by hand from the repository root: ``PYTHONPATH=. python benchmarks/toleranced_design.py [runs]``. The
toleranced design is written into a temporary folder from examples/pump-drive-leg.yaml, with g_fs ±20 %,
C_iss ±10 % and the four gate resistances ±1 % besides what the example already tolerates (the design of
issue 12, "Worst case at scale"). Each check runs in a fresh process (no
simulation is remembered between them, and the peak resident memory is that of one check alone); the two
designs alternate, and the medians are compared (the processor time too, which a machine loaded by other work
disturbs less than the wall time). Aims of issue 12: at most 3x the time and 2x the memory.
"""

from __future__ import annotations

import json
import resource
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

EXAMPLE = Path(__file__).resolve().parent.parent / "examples" / "pump-drive-leg.yaml"
TOLERANCES = {
    "transconductance: 20 S": "transconductance: {nominal: 20 S, tolerance: 20 %}",
    "c_iss: 2.5 nF": "c_iss: {nominal: 2.5 nF, tolerance: 10 %}",
    "r_on: 5 ohm, r_off: 2 ohm": "r_on: {nominal: 5 ohm, tolerance: 1 %}, r_off: {nominal: 2 ohm, tolerance: 1 %}",
    "r_on: 10 ohm, r_off: 10 ohm": "r_on: {nominal: 10 ohm, tolerance: 1 %}, r_off: {nominal: 10 ohm, tolerance: 1 %}",
}


def toleranced(text: str) -> str:
    """The example with the tolerances of TOLERANCES (each replacement must apply exactly once)."""
    for exact, widened in TOLERANCES.items():
        if text.count(exact) != 1:
            raise SystemExit(f"{EXAMPLE}: expected one '{exact}'")
        text = text.replace(exact, widened)
    return text


def _one_check(path: str) -> None:
    """In the child: check the design, print the seconds of the check (wall and processor) and the peak
    resident memory [MiB]."""
    from margincheck.checking import check_file

    start, cpu = time.perf_counter(), time.process_time()
    report = check_file(Path(path))
    seconds, cpu = time.perf_counter() - start, time.process_time() - cpu
    peak = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024   # KiB on Linux
    print(json.dumps({"seconds": seconds, "cpu": cpu, "peak": peak, "findings": len(report.findings)}))


def _measure(path: Path) -> dict:
    result = subprocess.run([sys.executable, __file__, "--one", str(path)], capture_output=True, text=True,
                            check=True)
    return json.loads(result.stdout.strip().splitlines()[-1])


def main() -> None:
    runs = int(sys.argv[1]) if len(sys.argv) > 1 else 3
    with tempfile.TemporaryDirectory() as folder:
        designs = {"exact": Path(folder) / "exact.yaml", "toleranced": Path(folder) / "toleranced.yaml"}
        text = EXAMPLE.read_text(encoding="utf-8")
        designs["exact"].write_text(text, encoding="utf-8")
        designs["toleranced"].write_text(toleranced(text), encoding="utf-8")
        samples: dict[str, list[dict]] = {name: [] for name in designs}
        for _ in range(runs):
            for name, path in designs.items():
                samples[name].append(_measure(path))
    medians = {name: {key: statistics.median(sample[key] for sample in runs_of) for key in ("seconds", "cpu", "peak")}
               for name, runs_of in samples.items()}
    for name, median in medians.items():
        print(f"{name:<11} median {median['seconds']:7.2f} s ({median['cpu']:.2f} s processor), "
              f"peak {median['peak']:6.1f} MiB over {runs} runs ({samples[name][0]['findings']} findings)")
    print(f"time ratio toleranced/exact:   {medians['toleranced']['seconds'] / medians['exact']['seconds']:5.2f}x")
    print(f"processor time ratio:          {medians['toleranced']['cpu'] / medians['exact']['cpu']:5.2f}x")
    print(f"memory ratio toleranced/exact: {medians['toleranced']['peak'] / medians['exact']['peak']:5.2f}x")


if __name__ == "__main__":
    if len(sys.argv) == 3 and sys.argv[1] == "--one":
        _one_check(sys.argv[2])
    else:
        main()
