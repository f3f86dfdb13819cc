"""The time a decaying turn-off ring stays above a level, against the ring of a series RLC circuit integrated with
scipy.integrate.solve_ivp (an independent numerical solution of the same circuit: the loop inductance charging
the node capacitance from the bus after the current is cut)."""

import numpy as np
import pytest
from scipy.integrate import solve_ivp

from margincheck.physics.ring_duration import time_above_level

pytestmark = pytest.mark.reference

BUS, CURRENT, INDUCTANCE, CAPACITANCE = 400.0, 30.0, 10e-9, 200e-12


def _ring(resistance: float) -> tuple[np.ndarray, np.ndarray, float, float]:
    """v(t) of the node after an abrupt turn-off, with the ring's damped frequency and quality factor from the
    circuit values: ω_n = 1/√(LC), ζ = (R/2)·√(C/L), f_d = ω_n·√(1 − ζ²)/2π, Q = 1/(2ζ)."""
    def rates(_, state):
        current, voltage = state
        return [(BUS - voltage - resistance * current) / INDUCTANCE, current / CAPACITANCE]

    omega = 1.0 / np.sqrt(INDUCTANCE * CAPACITANCE)
    zeta = 0.5 * resistance * np.sqrt(CAPACITANCE / INDUCTANCE)
    time = np.linspace(0.0, 60 * 2 * np.pi / omega, 400_001)
    solution = solve_ivp(rates, (0.0, time[-1]), [CURRENT, BUS], t_eval=time, rtol=1e-10, atol=1e-12)
    return solution.t, solution.y[1], omega * np.sqrt(1 - zeta ** 2) / (2 * np.pi), 0.5 / zeta


@pytest.mark.parametrize("resistance", [0.3, 1.0, 2.5])
@pytest.mark.parametrize("fraction", [0.2, 0.5, 0.9])
def test_the_bound_holds_and_is_within_one_period(resistance, fraction):
    """Levels 20 %, 50 % and 90 % of the way from the bus to the peak, rings with Q of about 24, 7 and 3: the
    span from the first to the last sample above the level is at most the bound, and the bound exceeds it by less
    than one ring period (the envelope passes the level up to a period after the last crest above it)."""
    time, voltage, frequency, quality = _ring(resistance)
    peak = voltage.max()
    level = BUS + fraction * (peak - BUS)
    above = time[voltage > level]
    span = above[-1] - above[0]
    bound = time_above_level(peak, BUS, level, frequency, quality)
    assert span <= bound
    assert bound - span < 1.0 / frequency


def test_limits_of_the_bound():
    # the peak at the level: no time above; the bus above the level: never back below; no decay: unbounded
    assert time_above_level(500.0, 400.0, 500.0, 1e8, 5.0) == 0.0
    assert time_above_level(500.0, 450.0, 440.0, 1e8, 5.0) == np.inf
    assert time_above_level(500.0, 400.0, 450.0, 1e8, np.inf) == np.inf
    assert np.isnan(time_above_level(500.0, 400.0, 450.0, np.nan, np.nan))


def test_arrays_and_monotone_in_the_quality_factor():
    qualities = np.array([2.0, 5.0, 10.0, 40.0])
    durations = time_above_level(500.0, 400.0, 450.0, 1e8, qualities)
    assert durations.shape == (4,)
    assert np.all(np.diff(durations) > 0)   # less damping: a longer ring
