"""The cosmic-ray failure rate against its equation typed out by hand, and its pressure ratio against the
U.S. Standard Atmosphere 1976.

The equation, as recalled from H. R. Zeller, "Cosmic ray induced failures in high power semiconductor
devices", Solid-State Electronics 38(12), 1995, pp. 2041-2046 (from memory: neither the form nor the equation
number could be confirmed against the paper, so it is labelled Eq. (2) of margincheck.physics.cosmic_ray):

    λ = C3·exp(C2/(C1 − V)) · exp((1 − (1 − h/44300)^5.26)/0.143) · exp((25 − T_j[°C])/47.6)   for V > C1

Each expected value below was evaluated by hand (rounded to 5 significant figures, hence rel=1e-4) and again
with the equation written out here with ``math``, apart from the implementation.
"""

import math

import numpy as np
import pytest

from margincheck.physics.cosmic_ray import (
    ALTITUDE_RANGE,
    altitude_factor,
    blocking_failure_rate,
    cosmic_ray_failure_rate,
    temperature_factor,
)

pytestmark = pytest.mark.reference


def zeller_by_hand(v, h, t_j_celsius, c1, c2, c3):
    """Zeller 1995 (from memory), typed from the formula above, for V > C1."""
    return (c3 * math.exp(c2 / (c1 - v)) * math.exp((1 - (1 - h / 44300) ** 5.26) / 0.143)
            * math.exp((25 - t_j_celsius) / 47.6))


# (V [V], h [m], T_j [degC], C1 [V], C2 [V], C3 [FIT], the value worked by hand [FIT])
POINTS = [
    # V - C1 = C2: 1000 x e^-1 = 367.88; sea level and 25 degC give factors of 1
    (900.0, 0.0, 25.0, 600.0, 300.0, 1000.0, 367.88),
    # 2e5 x e^-12 = 1.2288; (1 - 2000/44300)^5.26 = 0.78427, exp(0.21573/0.143) = 4.5203; exp(50/47.6) = 2.8589
    (850.0, 2000.0, -25.0, 600.0, 3000.0, 2e5, 15.880),
    # 1e4 x e^-1 = 3678.8; (1 - 1000/44300)^5.26 = 0.88684, exp(0.11316/0.143) = 2.2065; exp(-50/47.6) = 0.34978
    (1000.0, 1000.0, 75.0, 600.0, 400.0, 1e4, 2839.2),
]


@pytest.mark.parametrize("v, h, t_j, c1, c2, c3, by_hand", POINTS)
def test_rate_against_the_equation_by_hand(v, h, t_j, c1, c2, c3, by_hand):
    ours = float(cosmic_ray_failure_rate(v, h, t_j + 273.15, c1, c2, c3))
    assert ours == pytest.approx(zeller_by_hand(v, h, t_j, c1, c2, c3), rel=1e-12)
    assert ours == pytest.approx(by_hand, rel=1e-4)


def test_arrays_evaluate_each_element_as_a_scalar():
    columns = [np.array(column) for column in zip(*POINTS)]
    rates = cosmic_ray_failure_rate(columns[0], columns[1], columns[2] + 273.15, 600.0, 300.0, 1000.0)
    expected = [zeller_by_hand(v, h, t_j, 600.0, 300.0, 1000.0) for v, h, t_j, *_ in POINTS]
    np.testing.assert_allclose(rates, expected, rtol=1e-12)


def test_pressure_ratio_is_that_of_the_standard_atmosphere():
    # U.S. Standard Atmosphere 1976, layer 0 (0 to 11 km): p/p0 = (1 + L·h/T0)^(−g0·M/(R*·L)) with T0 = 288.15 K,
    # L = −0.0065 K/m, g0 = 9.80665 m/s², M = 0.0289644 kg/mol, R* = 8.31432 N·m/(mol·K). The model's rounded
    # 44300 m and 5.26 stay within 0.3 % of it (0.24 % at 11 km, an absolute 0.0006 in p/p0), so the exponent
    # of the altitude factor, (1 − p/p0)/0.143, within 0.0006/0.143 ≈ 0.004.
    altitudes = np.linspace(0.0, ALTITUDE_RANGE[1], 23)
    standard = (1 - 0.0065 * altitudes / 288.15) ** (9.80665 * 0.0289644 / (8.31432 * 0.0065))
    recalled = (1 - altitudes / 44300) ** 5.26
    np.testing.assert_allclose(recalled, standard, rtol=3e-3)
    exponent_from_standard = (1 - standard) / 0.143
    np.testing.assert_allclose(np.log(altitude_factor(altitudes)), exponent_from_standard, atol=0.005)


def test_rate_rises_with_voltage_and_altitude_and_falls_with_temperature():
    voltages, altitudes, temperatures = np.linspace(601, 1200, 50), np.linspace(-500, 11000, 50), \
        np.linspace(230, 450, 50)
    assert np.all(np.diff(blocking_failure_rate(voltages, 600.0, 300.0, 1.0)) > 0)
    assert np.all(np.diff(altitude_factor(altitudes)) > 0)
    assert np.all(np.diff(temperature_factor(temperatures)) < 0)
    assert float(temperature_factor(298.15)) == 1.0


def test_rate_vanishes_at_and_below_c1_and_rises_continuously_from_it():
    rates = blocking_failure_rate(np.array([0.0, 599.0, 600.0, 600.001]), 600.0, 300.0, 1e9)
    assert rates[:3].tolist() == [0.0, 0.0, 0.0]
    assert 0.0 <= rates[3] < 1e-100   # e^(-300/0.001): continuous at c1


def test_outside_the_altitude_range_the_factor_is_not_a_number():
    factors = altitude_factor(np.array([ALTITUDE_RANGE[0] - 1, ALTITUDE_RANGE[1] + 1, 50_000.0]))
    assert np.isnan(factors).all()
    assert np.isnan(cosmic_ray_failure_rate(900.0, 12_000.0, 300.0, 600.0, 300.0, 1.0))


def test_not_a_number_voltage_stays_not_a_number():
    assert np.isnan(blocking_failure_rate(np.nan, 600.0, 300.0, 1.0))
