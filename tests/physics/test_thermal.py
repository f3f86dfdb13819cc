"""Thermal models against references outside the project.

- Foster Z_th and the periodic-pulse peak: a direct simulation of the RC network's ODE (each Foster cell
  C_i·dθ_i/dt = P(t) − θ_i/R_i, cells in series) with scipy.integrate.solve_ivp; the issue's bound is 1 %.
- The Z_th curve fit: recovers a known network within 2 % over four decades of time.
- Non-negative least squares: scipy.optimize.nnls (Lawson & Hanson's algorithm) on random problems.
- Junction temperature: a hand-computed example written out below, and thermal runaway.
"""

import math

import numpy as np
import pytest
from hypothesis import example, given, settings
from hypothesis import strategies as st
from scipy.integrate import solve_ivp
from scipy.optimize import nnls

from margincheck.physics.foster_fit import fit_foster, non_negative_least_squares
from margincheck.physics.thermal import (
    foster_impedance,
    junction_temperature,
    log_temperature_coefficient,
    on_resistance,
    periodic_pulse_impedance,
)

pytestmark = pytest.mark.reference

# An illustrative four-cell network spanning 5 us to 30 ms (a TO-247-sized device is of this order).
RESISTANCES = np.array([0.02, 0.08, 0.15, 0.20])
TIME_CONSTANTS = np.array([5e-6, 1e-4, 2e-3, 3e-2])


def _simulated_rise(power, end, pulse_edges=()):
    """Junction rise θ(t) = Σ θ_i of the network driven by ``power(t)``, integrated piecewise between the
    pulse edges so that the solver never steps across a discontinuity."""
    edges = [0.0, *sorted(edge for edge in pulse_edges if 0.0 < edge < end), end]
    state = np.zeros(RESISTANCES.size)
    for start, stop in zip(edges, edges[1:]):
        level = power(0.5 * (start + stop))
        solution = solve_ivp(lambda t, theta, level=level: (level * RESISTANCES - theta) / TIME_CONSTANTS,
                             (start, stop), state, method="LSODA", rtol=1e-9, atol=1e-13)
        state = solution.y[:, -1]
    return state.sum()


@pytest.mark.parametrize("time", [1e-6, 1e-5, 1e-4, 1e-3, 1e-2, 1e-1])
def test_foster_step_response_against_the_network_ode(time):
    simulated = _simulated_rise(lambda t: 1.0, time)
    assert foster_impedance(time, RESISTANCES, TIME_CONSTANTS) == pytest.approx(simulated, rel=0.01)


@pytest.mark.parametrize("pulse, period", [(1e-4, 5e-3), (1e-3, 2e-3), (5e-3, 5e-2), (2e-5, 2e-3)])
def test_periodic_peak_against_the_network_ode(pulse, period):
    # Run the pulse train long enough (7 of the slowest time constants, e^-7 < 0.1 %) to reach its periodic
    # steady state, and read the rise at the end of the last pulse.
    cycles = math.ceil(7 * TIME_CONSTANTS.max() / period)
    end = (cycles - 1) * period + pulse
    edges = [edge for k in range(cycles) for edge in (k * period, k * period + pulse)]
    simulated = _simulated_rise(lambda t: 1.0 if (t % period) < pulse else 0.0, end, edges)
    exact = periodic_pulse_impedance(pulse, period, RESISTANCES, TIME_CONSTANTS)
    assert exact == pytest.approx(simulated, rel=0.01)


def test_a_single_pulse_is_the_step_response():
    single = periodic_pulse_impedance(1e-3, math.inf, RESISTANCES, TIME_CONSTANTS)
    assert single == pytest.approx(foster_impedance(1e-3, RESISTANCES, TIME_CONSTANTS), rel=1e-12)


def test_the_fit_recovers_a_known_network_over_four_decades():
    times = np.logspace(-5, -1, 17)  # four points per decade, as read off a datasheet curve
    resistances, time_constants = fit_foster(times, foster_impedance(times, RESISTANCES, TIME_CONSTANTS))
    dense = np.logspace(-5, -1, 801)
    ratio = foster_impedance(dense, resistances, time_constants) / foster_impedance(dense, RESISTANCES,
                                                                                     TIME_CONSTANTS)
    assert np.abs(ratio - 1).max() < 0.02
    assert (resistances > 0).all()


@pytest.mark.parametrize("seed", range(20))
def test_non_negative_least_squares_against_scipy(seed):
    rng = np.random.default_rng(seed)
    matrix, target = rng.normal(size=(30, 10)), rng.normal(size=30)
    expected, _ = nnls(matrix, target)
    assert non_negative_least_squares(matrix, target) == pytest.approx(expected, abs=1e-9)


def test_junction_temperature_hand_example():
    """T_c = 90 degC, R_th = 0.5 K/W, I_rms = 20 A, R_ds(on) 40 mohm at 25 degC doubling by 150 degC
    (k = ln 2/125 K = 5.5452e-3 /K), P_sw = 40 kHz x 300 uJ = 12 W. Fixed-point iteration by hand,
    T_(n+1) = 90 + 0.5 x (400 x 0.040 x 2^((T_n - 25)/125) + 12):
      T_0 =  90.000 degC: R = 0.040 x 2^(65/125)     = 0.05736 ohm, P = 22.943 + 12 = 34.943 W, T_1 = 107.472
      T_1 = 107.472:      R = 0.040 x 2^(82.472/125) = 0.06319 ohm, P = 25.277 + 12 = 37.277 W, T_2 = 108.639
      T_2 = 108.639:      R = 0.06360 ohm,                           P = 37.441 W,              T_3 = 108.721
      T_3 = 108.721:      R = 0.06363 ohm,                           P = 37.453 W,              T_4 = 108.727
    converging on 108.727 degC (each step shrinks by R_th x I^2 x k x R = 0.5 x 400 x 5.545e-3 x 0.0636
    = 0.07)."""
    t_j = junction_temperature(363.15, 0.5, 20.0, 0.040, 298.15, math.log(2) / 125, 12.0)
    assert float(t_j) - 273.15 == pytest.approx(108.727, abs=0.001)


def test_without_temperature_dependence_the_junction_rise_is_p_times_r():
    # Mohan, Undeland & Robbins 2003, ch. 29: T_j = T_c + P*R_th,jc. 90 degC + 0.5 K/W x (400 x 0.04 + 12) W
    assert float(junction_temperature(363.15, 0.5, 20.0, 0.040, 298.15, 0.0, 12.0)) == pytest.approx(377.15)


def test_thermal_runaway_has_no_equilibrium():
    # 2 K/W and 60 A: the loss 3600 x R(T) rises by 3600 x k x R ~ 0.8 W/K at once, over the 0.5 W/K the heat
    # path removes: no solution of T = T_c + R_th*P(T) exists, and the solver says so instead of looping.
    t_j = junction_temperature(np.array([363.15, 363.15]), np.array([2.0, 0.5]), np.array([60.0, 20.0]), 0.040,
                               298.15, math.log(2) / 125, 12.0)
    assert math.isinf(t_j[0]) and math.isfinite(t_j[1])


def test_the_equilibrium_is_a_fixed_point_of_the_heat_balance():
    rng = np.random.default_rng(7)
    case, r_th, current = rng.uniform(250, 400, 50), rng.uniform(0.05, 1.5, 50), rng.uniform(0, 40, 50)
    k = math.log(1.8) / 150
    t_j = junction_temperature(case, r_th, current, 0.03, 298.15, k, 10.0)
    finite = np.isfinite(t_j)
    balance = case + r_th * (current**2 * on_resistance(t_j, 0.03, 298.15, k) + 10.0)
    assert np.allclose(balance[finite], t_j[finite], atol=1e-6)
    assert finite.sum() > 10


def test_the_coefficient_passes_through_both_datasheet_points():
    k = log_temperature_coefficient(0.040, 298.15, 0.072, 448.15)
    assert on_resistance(448.15, 0.040, 298.15, k) == pytest.approx(0.072)


@settings(max_examples=300, deadline=None)
@given(case=st.floats(233.15, 423.15), r_th=st.floats(0.01, 3.0), current=st.floats(0.0, 80.0),
       extra=st.floats(0.0, 20.0), k=st.floats(0.0, 0.02), p_sw=st.floats(0.0, 200.0))
@example(case=234.0, r_th=1.0, current=4.003983567695168e-159, extra=1.0, k=0.015625, p_sw=0.0)  # found by CI
def test_more_current_never_cools_the_junction(case, r_th, current, extra, k, p_sw):
    """T_j rises (or runs away) with the current: a property of Eq. (4) for k >= 0."""
    low, high = junction_temperature(case, r_th, np.array([current, current + extra]), 0.04, 298.15, k, p_sw)
    assert high >= low - 1e-6 or math.isinf(high)
    if math.isinf(low):
        assert math.isinf(high)
    assert low >= case - 1e-9
