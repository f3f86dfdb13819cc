"""Resonant transients against numerical solutions of the same ODEs (scipy.integrate.solve_ivp, LSODA or
Radau with rtol 1e-9) and against closed forms; the issue's bound is 1 % of the peak overshoot."""

import numpy as np
import pytest
from scipy.integrate import quad, solve_ivp

from margincheck.physics.capacitance import capacitance_at, stored_output_energy
from margincheck.physics.ringing import (
    gate_ringing_peak,
    ramp_ring_overshoot,
    resonant_peak_voltage,
    ring_frequency,
    step_overshoot_fraction,
)
from margincheck.physics.turn_off import resonant_turn_off_peak

pytestmark = pytest.mark.reference

BUS = 400.0
# An illustrative nonlinear output capacitance curve (superjunction-like: large at low voltage).
TABLE_V = np.array([0.0, 25.0, 50.0, 100.0, 200.0, 400.0, 600.0])
TABLE_C = np.array([5e-9, 1e-9, 2e-10, 9e-11, 7e-11, 5.5e-11, 5e-11])


def _reference_peak(inductance, resistance, current, channel, capacitance, duration):
    """Peak of ODE (1) of margincheck.physics.ringing from solve_ivp, sampled densely."""
    def rhs(t, state):
        v, i = state
        return [(i - channel(t)) / capacitance(v), (BUS - v - resistance * i) / inductance]

    solution = solve_ivp(rhs, (0.0, duration), [BUS, current], method="LSODA", rtol=1e-9, atol=[1e-6, 1e-9],
                         max_step=duration / 4000)
    return solution.y[0].max()


def _ramp(current, fall_time):
    return lambda t: np.clip(current * (1.0 - np.asarray(t) / fall_time), 0.0, None)


def _constant(value):
    return lambda v: np.full_like(np.asarray(v, dtype=float), value)


def _curve(v):
    return capacitance_at(v, TABLE_V, TABLE_C)


@pytest.mark.parametrize("fall_time", [2e-9, 5e-9, 20e-9])  # omega*t_f below and above pi
def test_ramp_closed_form_matches_the_ode(fall_time):
    inductance, capacitance, current = 30e-9, 90e-12, 40.0
    duration = fall_time + 2.0 / ring_frequency(inductance, capacitance)
    reference = _reference_peak(inductance, 0.0, current, _ramp(current, fall_time), _constant(capacitance),
                                duration) - BUS
    assert ramp_ring_overshoot(inductance, capacitance, current, fall_time) == pytest.approx(reference, rel=0.01)
    solver = resonant_peak_voltage(BUS, inductance, 0.0, current, _ramp(current, fall_time),
                                   _constant(capacitance), duration) - BUS
    assert solver == pytest.approx(reference, rel=0.01)


def test_ramp_closed_form_limits():
    inductance, capacitance, current = 30e-9, 90e-12, 40.0
    # abrupt step: I*sqrt(L/C) (design.md section 5); slow ramp: 2*L*I/t_f
    assert ramp_ring_overshoot(inductance, capacitance, current, 0.0) == pytest.approx(
        current * np.sqrt(inductance / capacitance))
    assert ramp_ring_overshoot(inductance, capacitance, current, 1e-6) == pytest.approx(
        2 * inductance * current / 1e-6)


@pytest.mark.parametrize("resistance", [0.0, 0.5, 3.0])
@pytest.mark.parametrize("nonlinear", [False, True], ids=["linear-C", "nonlinear-C"])
def test_solver_matches_solve_ivp(resistance, nonlinear):
    inductance, current, fall_time = 20e-9, 30.0, 4e-9
    capacitance = _curve if nonlinear else _constant(70e-12)
    duration = fall_time + 2.0 / ring_frequency(inductance, 50e-12)
    reference = _reference_peak(inductance, resistance, current, _ramp(current, fall_time), capacitance, duration)
    solver = resonant_peak_voltage(BUS, inductance, resistance, current, _ramp(current, fall_time), capacitance,
                                   duration)
    assert solver - BUS == pytest.approx(reference - BUS, rel=0.01)


def test_solver_is_vectorised_over_corners():
    inductances = np.array([10e-9, 20e-9, 30e-9])
    batch = resonant_peak_voltage(BUS, inductances, 0.0, 30.0, _ramp(30.0, 4e-9), _constant(70e-12), 20e-9)
    one_by_one = [resonant_peak_voltage(BUS, value, 0.0, 30.0, _ramp(30.0, 4e-9), _constant(70e-12), 20e-9)
                  for value in inductances]
    np.testing.assert_allclose(batch, np.ravel(one_by_one), rtol=1e-12)
    assert np.all(np.diff(batch) > 0)  # more inductance, more overshoot


def test_whole_turn_off_transient_matches_solve_ivp():
    """The turn-off wrapper's ring phase against solve_ivp with the same gate-model channel current."""
    v_th, v_off, current, gfs, r_g, c_iss, l_s, inductance = 4.0, -3.0, 40.0, 20.0, 6.0, 2.5e-9, 1e-9, 25e-9
    c_rss = _constant(8e-12)
    peak = resonant_turn_off_peak(BUS, inductance, 0.0, current, v_th, v_off, gfs, r_g, c_iss, l_s, c_rss,
                                  _curve, _curve)
    tau = r_g * c_iss + gfs * l_s
    plateau = v_th + current / gfs
    gate_rate = (plateau - v_off) / (r_g * 8e-12)
    node = _curve(BUS) + _curve(0.0)
    rate = min(gate_rate, current / node)
    start = v_th + max(current - node * rate, 0.0) / gfs

    def channel(t):
        return max(gfs * (v_off + (start - v_off) * np.exp(-t / tau) - v_th), 0.0)

    duration = tau * np.log((start - v_off) / (v_th - v_off)) + 1.25 / ring_frequency(inductance, _curve(BUS))
    loop_current = current - _curve(0.0) * rate  # the opposite device's charging current went to its diode
    assert float(peak) - BUS == pytest.approx(_reference_peak(inductance, 0.0, loop_current, channel, _curve,
                                                              duration) - BUS, rel=0.01)


def test_ring_frequency_against_a_simulated_lc_oscillation():
    inductance, capacitance = 18.1e-9, 560e-12  # design.md section 8: about 50 MHz
    solution = solve_ivp(lambda t, y: [y[1] / capacitance, -y[0] / inductance], (0.0, 200e-9), [1.0, 0.0],
                         rtol=1e-10, atol=1e-12, dense_output=True)
    t = np.linspace(0.0, 200e-9, 200001)
    v = solution.sol(t)[0]
    crossings = t[1:][np.diff(np.sign(v)) != 0]
    measured = 1.0 / (2.0 * np.mean(np.diff(crossings)))
    assert ring_frequency(inductance, capacitance) == pytest.approx(measured, rel=1e-3)
    assert ring_frequency(inductance, capacitance) == pytest.approx(50e6, rel=0.01)


@pytest.mark.parametrize("zeta, textbook", [(0.1, 0.729), (0.3, 0.372), (0.5, 0.163), (0.7, 0.046)])
def test_step_overshoot_against_the_textbook_table(zeta, textbook):
    """Maximum overshoot of a second-order step response (Ogata, Modern Control Engineering, 5th ed.,
    Fig. 5-11 / Eq. 5-21, from memory: 72.9 %, 37.2 %, 16.3 %, 4.6 %); table values rounded to 0.1 %."""
    inductance, capacitance = 10e-9, 2e-9
    resistance = 2.0 * zeta * np.sqrt(inductance / capacitance)
    assert step_overshoot_fraction(resistance, inductance, capacitance) == pytest.approx(textbook, abs=6e-4)


def test_gate_ringing_peak_against_a_simulated_rlc_step():
    r_g, l_g, c_iss, v_off, v_on = 2.0, 15e-9, 2.5e-9, -4.0, 18.0
    solution = solve_ivp(lambda t, y: [y[1] / c_iss, (v_on - y[0] - r_g * y[1]) / l_g], (0.0, 100e-9),
                         [v_off, 0.0], rtol=1e-10, atol=1e-12, max_step=0.01e-9)
    assert gate_ringing_peak(v_off, v_on, r_g, l_g, c_iss) == pytest.approx(solution.y[0].max(), rel=1e-3)
    assert step_overshoot_fraction(20.0, l_g, c_iss) == 0.0  # overdamped: no overshoot


def test_output_energy_against_quad():
    energy, _ = quad(lambda v: v * _curve(v), 0.0, 400.0, points=list(TABLE_V[1:6]), limit=200)
    assert stored_output_energy(400.0, TABLE_V, TABLE_C) == pytest.approx(energy, rel=0.01)
