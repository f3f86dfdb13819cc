"""Monte Carlo throughput: 1,000,000 samples over the closed-form core rules of the pump-drive example against a
plain numpy expression of the same arithmetic, and the samples per second the cell-simulated rules reach.

Run by hand from the repository root: ``PYTHONPATH=. python benchmarks/monte_carlo.py [runs]``. The two sides of
the ratio are interleaved in one run, so that drifting machine load hits both alike; medians are printed.
Aim of the issue: within 20x of the plain numpy expression.
"""

from __future__ import annotations

import statistics
import sys
import time
from pathlib import Path

import numpy as np

from margincheck.design import load_design
from margincheck.montecarlo import monte_carlo
from margincheck.rules import RULES

SAMPLES = 1_000_000
DESIGN = Path(__file__).resolve().parent.parent / "examples" / "pump-drive-leg.yaml"
CLOSED_FORM = ("bus-voltage", "turn-off-current", "capacitor-voltage")


def _findings(design):
    return [RULES[rule].check(subject, design) for rule in CLOSED_FORM
            for subject in (design.capacitors if rule == "capacitor-voltage" else design.switches)]


def _ours(design, findings) -> float:
    start = time.perf_counter()
    monte_carlo(design, findings, SAMPLES, seed=1, simulated=0)
    return time.perf_counter() - start


def _plain_numpy() -> float:
    """The same arithmetic written directly: the bus uniform over 400 V ± 5 %, the margins of the bus-voltage rule
    (0.75 x 650 V) for both switches, of the turn-off current (40 A against 0.8 x 120 A) and of the capacitor
    (0.8 x 500 V), with the probability of violation and three percentiles of each."""
    start = time.perf_counter()
    bus = 380.0 + np.random.default_rng(1).random(SAMPLES) * 40.0
    current = np.full(SAMPLES, 40.0)
    for margins in ((487.5 - bus) / 487.5, (487.5 - bus) / 487.5, (96.0 - current) / 96.0,
                    (96.0 - current) / 96.0, (400.0 - bus) / 400.0):
        (margins < 0).mean()
        np.percentile(margins, (1.0, 50.0, 99.0), method="inverted_cdf")
    return time.perf_counter() - start


def _simulated_rate(design) -> float:
    findings = [RULES["turn-off-overshoot"].check(switch, design) for switch in design.switches]
    start = time.perf_counter()
    monte_carlo(design, findings, 200, seed=1, simulated=200)
    return 200 / (time.perf_counter() - start)


def main() -> None:
    runs = int(sys.argv[1]) if len(sys.argv) > 1 else 3
    design = load_design(DESIGN)
    findings = _findings(design)
    ours, plain = [], []
    for _ in range(runs):
        ours.append(_ours(design, findings))
        plain.append(_plain_numpy())
    median_ours, median_plain = statistics.median(ours), statistics.median(plain)
    print(f"closed-form core rules, {SAMPLES:,} samples: {median_ours:.2f} s ({SAMPLES / median_ours:,.0f} samples/s)")
    print(f"plain numpy expression of the same arithmetic: {median_plain:.3f} s")
    print(f"ratio: {median_ours / median_plain:.1f}x (aim <= 20x)")
    print(f"with the cell simulation (both switches, both edges, every rule): "
          f"{_simulated_rate(design):.1f} samples/s")


if __name__ == "__main__":
    main()
