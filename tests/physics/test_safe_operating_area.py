"""SOA boundary and avalanche energy against hand calculations and a scipy integration of the clamped
inductor (the unclamped inductive switching circuit)."""

import numpy as np
import pytest
from scipy.integrate import solve_ivp

from margincheck.physics.safe_operating_area import (
    Boundary,
    allowed_avalanche_energy,
    avalanche_energy,
    boundary_current,
    scaled_chart_current,
    thermal_line_current,
)
from margincheck.physics.thermal import foster_impedance

pytestmark = pytest.mark.reference


def test_thermal_line_by_hand():
    """P = (T_j,max - T_c)/Z_th(t_p) (design.md section 5): T_j,max 175 degC, T_c 100 degC, a 100 us pulse
    into the network below: Z_th = 0.05(1 - e^-10) + 0.2(1 - e^-0.1) + 0.1(1 - e^-0.01) = 0.049998 + 0.019033
    + 0.000995 = 0.070026 K/W; P = 75/0.070026 = 1071.0 W; at 400 V that is 2.6776 A."""
    impedance = foster_impedance(1e-4, [0.05, 0.2, 0.1], [1e-5, 1e-3, 1e-2])
    assert impedance == pytest.approx(0.070026, rel=1e-4)
    assert thermal_line_current(400.0, 448.15, 373.15, impedance) == pytest.approx(2.6776, rel=1e-4)


def test_boundary_takes_the_least_part_and_names_it():
    voltage = np.array([1.0, 50.0, 400.0])
    current, governing = boundary_current(voltage, 150.0, 0.1, thermal_line_current(voltage, 448.15, 373.15, 0.07))
    # 1 V: R_ds(on) line 10 A; 50 V: I_DM 150 A vs thermal 1071/50 = 21.4 A; 400 V: thermal 2.68 A
    assert current == pytest.approx([10.0, 75 / 0.07 / 50, 75 / 0.07 / 400])
    assert list(governing) == [Boundary.ON_RESISTANCE, Boundary.THERMAL, Boundary.THERMAL]


def test_chart_points_carried_to_a_hotter_case():
    # Log-log interpolation halfway (in log V) between (10 V, 100 A) and (1000 V, 1 A) is (100 V, 10 A); the
    # case at 100 degC with T_j,max 175 degC leaves 75 of the chart's 150 K: half the current.
    current = scaled_chart_current(100.0, (10.0, 1000.0), (100.0, 1.0), 298.15, 448.15, 373.15)
    assert current == pytest.approx(5.0)
    assert np.isnan(scaled_chart_current(5.0, (10.0, 1000.0), (100.0, 1.0), 298.15, 448.15, 373.15))
    colder = scaled_chart_current(100.0, (10.0, 1000.0), (100.0, 1.0), 298.15, 448.15, 253.15)
    assert colder == pytest.approx(10.0)  # never scaled up


@pytest.mark.parametrize("inductance, current, breakdown, supply", [
    (1e-3, 10.0, 100.0, 50.0), (30e-9, 40.0, 650.0, 420.0), (100e-6, 28.0, 780.0, 600.0)])
def test_avalanche_energy_against_the_clamped_inductor(inductance, current, breakdown, supply):
    """The clamped circuit: L·di/dt = V_DD − V_BR while the device holds V_BR, absorbing V_BR·i, until i = 0."""
    def circuit(t, state):
        i, _ = state
        return [(supply - breakdown) / inductance, breakdown * max(i, 0.0)]

    current_zero = lambda t, state: state[0]  # noqa: E731
    current_zero.terminal = True
    solution = solve_ivp(circuit, (0.0, 1.0), [current, 0.0], events=current_zero, rtol=1e-10, atol=1e-14,
                         method="LSODA")
    absorbed = solution.y_events[0][0][1]
    assert avalanche_energy(inductance, current, breakdown, supply) == pytest.approx(absorbed, rel=1e-6)


def test_a_bus_at_breakdown_has_no_finite_avalanche_energy():
    assert np.isnan(avalanche_energy(1e-6, 10.0, 100.0, 100.0))


def test_avalanche_rating_derates_linearly_to_zero_at_t_j_max():
    assert allowed_avalanche_energy(0.4, 298.15, 448.15, 298.15) == pytest.approx(0.4)
    assert allowed_avalanche_energy(0.4, 298.15, 448.15, 448.15) == pytest.approx(0.0)
    assert allowed_avalanche_energy(0.4, 298.15, 448.15, 500.0) == pytest.approx(0.0)


def test_without_an_on_resistance_model_that_line_is_left_out():
    current, governing = boundary_current(np.array([1.0, 100.0]), 150.0, None, np.array([np.nan, 20.0]))
    assert current == pytest.approx([150.0, 20.0])
    assert list(governing) == [Boundary.CURRENT, Boundary.THERMAL]
