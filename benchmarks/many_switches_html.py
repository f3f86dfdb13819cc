"""By hand: the cost of an HTML report (with its SOA chart) for a design of many identical switches.

Writes the solar example with its device file and N switches (default 400, in legs of two) into a temporary
folder, runs ``margincheck check --report html:...`` in a child process, and prints the wall time, the
child's peak resident memory and the report's size. One run, no repetitions: a rough figure, not a test.

    python benchmarks/many_switches_html.py [N]
"""

from __future__ import annotations

import copy
import resource
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import yaml

from margincheck.loading import load_document

EXAMPLES = Path(__file__).resolve().parent.parent / "examples"


def _design(count: int) -> dict:
    design = load_document(EXAMPLES / "solar-string-sic-leg.yaml").data
    template = design["switches"][0]
    switches = []
    for index in range(count):
        switch = copy.deepcopy(template)
        switch["ref"], switch["leg"] = f"Q{index + 1}", f"L{index // 2 + 1}"
        switches.append(switch)
    design["switches"] = switches
    return design


def main() -> None:
    count = int(sys.argv[1]) if len(sys.argv) > 1 else 400
    with tempfile.TemporaryDirectory() as folder:
        root = Path(folder)
        (root / "devices").mkdir()
        (root / "devices" / "demo-sic1200.yaml").write_bytes((EXAMPLES / "devices" / "demo-sic1200.yaml").read_bytes())
        (root / "many.yaml").write_text(yaml.safe_dump(_design(count), sort_keys=False), encoding="utf-8")
        started = time.perf_counter()
        completed = subprocess.run([sys.executable, "-m", "margincheck", "check", str(root / "many.yaml"),
                                    "--report", f"html:{root / 'many.html'}", "--output", str(root / "many.txt")],
                                   capture_output=True, text=True, check=False)
        elapsed = time.perf_counter() - started
        peak_mib = resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss / 1024  # kilobytes on Linux
        size = (root / "many.html").stat().st_size if (root / "many.html").exists() else 0
        print(f"{count} switches: exit {completed.returncode}, {elapsed:.1f} s, peak RSS {peak_mib:.0f} MiB, "
              f"HTML {size / 2**20:.1f} MiB")
        if completed.stderr:
            print(completed.stderr[-2000:])


if __name__ == "__main__":
    main()
