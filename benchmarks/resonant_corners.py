"""Cost of the resonant turn-off overshoot for 1,024 corners against one corner, measured in one run.

Run by hand: ``python benchmarks/resonant_corners.py``. The vectorised solver integrates every corner at once,
so the batch should cost far less than 1,024 single calls (the issue's aim: at most 5 times one corner).
"""

from __future__ import annotations

import statistics
import time

import numpy as np

from margincheck.physics.capacitance import capacitance_at
from margincheck.physics.turn_off import resonant_turn_off_peak

TABLE_V = np.array([0.0, 50.0, 200.0, 800.0, 1000.0])
TABLE_C = np.array([2.5e-9, 5e-10, 2.3e-10, 1.5e-10, 1.4e-10])  # an illustrative SiC-like C_oss curve


def _curve(scale):
    def capacitance(voltage):
        voltage = np.asarray(voltage, dtype=float)
        factor = scale[..., None] if voltage.ndim > np.ndim(scale) else scale
        return capacitance_at(voltage, TABLE_V, TABLE_C) * factor
    return capacitance


def evaluate(corners: int) -> float:
    """Seconds for one resonant evaluation over ``corners`` corners spread over a tolerance box."""
    generator = np.random.default_rng(1)
    spread = lambda nominal, tolerance: nominal * (1 + tolerance * generator.uniform(-1, 1, corners))  # noqa: E731
    scale = spread(1.0, 0.1)
    start = time.perf_counter()
    resonant_turn_off_peak(spread(850.0, 0.05), spread(7e-9, 0.2), 0.0, spread(60.0, 0.1), spread(2.7, 0.3),
                           -4.12, spread(10.0, 0.2), spread(13.0, 0.1), 2.8e-9, 0.5e-9,
                           lambda v: np.full_like(np.asarray(v, dtype=float), 9e-12), _curve(scale), _curve(scale))
    return time.perf_counter() - start


def main() -> None:
    evaluate(1)  # warm-up
    single = statistics.median(evaluate(1) for _ in range(7))
    batch = statistics.median(evaluate(1024) for _ in range(7))
    print(f"1 corner      median {single * 1000:8.1f} ms")
    print(f"1024 corners  median {batch * 1000:8.1f} ms")
    print(f"ratio 1024/1: {batch / single:.2f}")


if __name__ == "__main__":
    main()
