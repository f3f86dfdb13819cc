"""An IGBT's conduction loss and junction temperature (Eq. (5)-(7) of margincheck.physics.thermal) against
independent numerical solutions: scipy quad of v_ce(i)·i over a PWM-like current, scipy brentq of the balance."""

import numpy as np
import pytest
from scipy.integrate import quad
from scipy.optimize import brentq

from margincheck.physics.thermal import igbt_conduction_loss, junction_temperature_linear_loss, saturation_voltage

pytestmark = pytest.mark.reference


@pytest.mark.parametrize("knee", [0.0, 0.6, 1.2, 1.8])          # V_CE0 of the on-state line [V]
@pytest.mark.parametrize("peak", [20.0, 100.0, 250.0])           # peak of the half-sine current [A]
def test_the_loss_bound_holds_for_any_on_state_line_through_the_datasheet_point(knee, peak):
    # v_ce = V_CE0 + r·i through (100 A, 1.8 V); the switch conducts a half sine of one polarity for half the period
    # (I_avg <= I_rms); the true mean loss is (1/T)·∫ v(i)·i dt over the period (quad).
    saturation, reference = 1.8, 100.0
    slope = (saturation - knee) / reference

    def current(t):
        return peak * np.sin(2 * np.pi * t) if t < 0.5 else 0.0

    mean_loss = quad(lambda t: (knee + slope * current(t)) * current(t), 0.0, 1.0, points=[0.5])[0]
    rms = np.sqrt(quad(lambda t: current(t) ** 2, 0.0, 1.0, points=[0.5])[0])
    bound = float(igbt_conduction_loss(rms, saturation, reference))
    assert mean_loss <= bound * (1 + 1e-12)


def test_the_bound_is_reached_by_a_dc_current_on_either_end_line():
    # A DC current: I_avg = I_rms, so the flat line below I_ref and the resistive one above give the bound exactly.
    assert float(igbt_conduction_loss(40.0, 1.8, 100.0)) == pytest.approx(1.8 * 40.0)
    assert float(igbt_conduction_loss(150.0, 1.8, 100.0)) == pytest.approx(1.8 / 100.0 * 150.0 ** 2)


@pytest.mark.parametrize(("r_th", "coefficient"), [(0.5, 0.004), (0.3, -0.003), (2.0, 0.0)])
def test_junction_temperature_solves_the_heat_balance(r_th, coefficient):
    # T = T_c + R_th·(P_cond(T) + P_sw) with P_cond linear in T through V_CE(sat)(T), solved by brentq.
    case, current, reference, p_sw = 373.15, 60.0, 100.0, 30.0

    def balance(temperature):
        voltage = saturation_voltage(temperature, 1.9, 298.15, coefficient)
        return case + r_th * (float(igbt_conduction_loss(current, voltage, reference)) + p_sw) - temperature

    expected = brentq(balance, case, case + 1000.0, xtol=1e-9)
    loss = float(igbt_conduction_loss(current, saturation_voltage(case, 1.9, 298.15, coefficient), reference))
    slope = float(igbt_conduction_loss(current, coefficient, reference))
    assert float(junction_temperature_linear_loss(case, r_th, loss, slope, p_sw)) == pytest.approx(expected, abs=1e-6)


def test_no_equilibrium_is_thermal_runaway():
    assert np.isposinf(junction_temperature_linear_loss(373.15, 10.0, 50.0, 0.1, 0.0))   # R_th·dP/dT = 1
    assert np.isfinite(junction_temperature_linear_loss(373.15, 9.9, 50.0, 0.1, 0.0))
