"""First-order turn-off peak V_bus + L·|di/dt| and the stored energy ½·C·V².

References: the inductor relation v = L·di/dt (Faraday's law of induction; e.g. R. W. Erickson,
D. Maksimović, Fundamentals of Power Electronics, 3rd ed., Springer 2020, ch. 2, from memory); the energy of a
charged capacitor W = ∫ C·v dv = C·V²/2 (Halliday, Resnick & Walker, Fundamentals of Physics, 10th ed., 2014,
Eq. 25-21, from memory), integrated numerically with scipy.integrate.quad as the independent check.
"""

import numpy as np
import pytest
from scipy.integrate import quad, solve_ivp

from margincheck.physics.energy import capacitor_energy
from margincheck.physics.overshoot import inductive_overshoot, turn_off_peak_voltage

pytestmark = pytest.mark.reference


def test_inductive_voltage_is_l_times_di_dt():
    # 25 nH x 6 A/ns = 150 V, hand arithmetic on v = L·di/dt
    assert inductive_overshoot(25e-9, 6e9) == pytest.approx(150.0, rel=1e-12)
    assert inductive_overshoot(25e-9, -6e9) == pytest.approx(150.0, rel=1e-12)  # a falling current


def test_inductor_voltage_from_an_integrated_linear_current_fall():
    """A current falling linearly from 40 A to 0 in 6 ns through 30 nH: integrate L·di/dt = v with solve_ivp
    for the flux and compare the volt-seconds L·ΔI with the constant voltage L·I/t_f times t_f."""
    inductance, current, fall_time = 30e-9, 40.0, 6e-9
    di_dt = -current / fall_time
    voltage = inductive_overshoot(inductance, di_dt)
    flux = solve_ivp(lambda _t, _y: [voltage], (0.0, fall_time), [0.0], rtol=1e-12, atol=1e-18).y[0, -1]
    assert flux == pytest.approx(inductance * current, rel=1e-9)  # volt-seconds = L·ΔI


def test_turn_off_peak_adds_the_bus_voltage():
    # The contract design's Q1 worst corner: 420 V + 30 nH x 6.6545 A/ns = 619.64 V (design.md section 6
    # prints 619.6 V for the same design)
    di_dt = (20.0 * (4.0 + 3.15) + 40.0) / 27.5e-9
    assert turn_off_peak_voltage(420.0, 30e-9, di_dt) == pytest.approx(619.6, abs=0.05)


def test_turn_off_peak_on_arrays():
    peaks = turn_off_peak_voltage(np.array([380.0, 420.0]), np.array([20e-9, 30e-9]), 5e9)
    np.testing.assert_allclose(peaks, [480.0, 570.0])


@pytest.mark.parametrize("capacitance, voltage", [(100e-6, 420.0), (60e-6 * 1.1, 850.0), (12e-6, 54.0)])
def test_capacitor_energy_against_the_integral_of_c_v_dv(capacitance, voltage):
    integral, _ = quad(lambda v: capacitance * v, 0.0, voltage)
    assert capacitor_energy(capacitance, voltage) == pytest.approx(integral, rel=1e-12)


def test_capacitor_energy_worked_value():
    # 100 uF at 420 V: 0.5 x 100e-6 x 420^2 = 8.82 J (hand arithmetic)
    assert capacitor_energy(100e-6, 420.0) == pytest.approx(8.82, rel=1e-12)
