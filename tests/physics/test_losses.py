"""Switching energies, dv/dt, induced gate voltage and recovery spike: worked values and numerical checks."""

import numpy as np
import pytest
from scipy.integrate import trapezoid

from margincheck.physics.coupling import induced_gate_voltage
from margincheck.physics.losses import linear_transition_energy, turn_off_energy, turn_on_energy
from margincheck.physics.recovery import peak_recovery_current, recovery_peak_voltage
from margincheck.physics.switching import (
    gate_limited_turn_off_dv_dt,
    gate_limited_turn_on_dv_dt,
    load_limited_dv_dt,
)

pytestmark = pytest.mark.reference


def test_linear_transition_energy_worked_value():
    # design.md section 8: 400 V, 20 A, 20 ns clamped inductive transition gives 80 uJ (0.5*V*I*t)
    assert linear_transition_energy(400.0, 20.0, 20e-9) == pytest.approx(80e-6, rel=1e-12)


def _piecewise_linear_energy(voltage, current, first, second, turn_on):
    """Integrate v*i of the piecewise-linear clamped-inductive waveforms with scipy's trapezoid."""
    t = np.linspace(0.0, first + second, 200001)
    in_first = t <= first
    if turn_on:  # current rises at full voltage, then voltage falls at full current
        i = np.where(in_first, current * t / first, current)
        v = np.where(in_first, voltage, voltage * (1.0 - (t - first) / second))
    else:  # voltage rises at full current, then current falls at full voltage
        v = np.where(in_first, voltage * t / first, voltage)
        i = np.where(in_first, current, current * (1.0 - (t - first) / second))
    return trapezoid(v * i, t)


def test_turn_on_and_turn_off_energy_against_integrated_waveforms():
    assert turn_on_energy(400.0, 30.0, 12e-9, 25e-9) == pytest.approx(
        _piecewise_linear_energy(400.0, 30.0, 12e-9, 25e-9, turn_on=True), rel=1e-6)
    assert turn_off_energy(400.0, 30.0, 30e-9, 9e-9) == pytest.approx(
        _piecewise_linear_energy(400.0, 30.0, 30e-9, 9e-9, turn_on=False), rel=1e-6)


def test_turn_on_energy_adds_recovery_and_output_energy():
    # 100 nC at 400 V is 40 uJ; plus 5 uJ of output energy (hand arithmetic)
    base = turn_on_energy(400.0, 30.0, 12e-9, 25e-9)
    assert turn_on_energy(400.0, 30.0, 12e-9, 25e-9, 100e-9, 5e-6) == pytest.approx(base + 45e-6)


def test_dv_dt_forms():
    # plateau 4 + 40/20 = 6 V; (6 - (-3))/(3 ohm * 10 pF) = 300 V/ns; (15 - 6)/(6 ohm * 10 pF) = 150 V/ns;
    # 40 A into 200 pF = 200 V/ns (hand arithmetic)
    assert gate_limited_turn_off_dv_dt(4.0, -3.0, 40.0, 20.0, 3.0, 10e-12) == pytest.approx(3e11)
    assert gate_limited_turn_on_dv_dt(4.0, 15.0, 40.0, 20.0, 6.0, 10e-12) == pytest.approx(1.5e11)
    assert load_limited_dv_dt(40.0, 200e-12) == pytest.approx(2e11)


def test_induced_gate_voltage_is_the_smaller_of_miller_and_the_divider():
    # 5 ohm * 10 pF * 50 V/ns = 2.5 V; divider 400 V * 10 pF / 2.5 nF = 1.6 V (hand arithmetic)
    assert induced_gate_voltage(5.0, 10e-12, 2.5e-9, 50e9, 400.0) == pytest.approx(1.6)
    assert induced_gate_voltage(1.0, 10e-12, 2.5e-9, 50e9, 400.0) == pytest.approx(0.5)
    # a shared source adds L_s * di/dt: 5 nH * 0.2 A/ns = 1 V
    assert induced_gate_voltage(1.0, 10e-12, 2.5e-9, 50e9, 400.0, 5e-9, 0.2e9) == pytest.approx(1.5)


def test_triangular_recovery():
    """Q_rr = 0.5*I_rrm*(t_a + t_b) with t_a = I_rrm/a, t_b = S*t_a: check by rebuilding the charge."""
    charge, rate, softness = 300e-9, 0.5e9, 0.4
    i_rrm = peak_recovery_current(charge, rate, softness)
    t_a = i_rrm / rate
    assert 0.5 * i_rrm * (t_a + softness * t_a) == pytest.approx(charge, rel=1e-12)
    # snap-off: 20 nH * 0.5 A/ns / 0.4 = 25 V above the bus
    assert recovery_peak_voltage(400.0, 20e-9, rate, softness) == pytest.approx(425.0)
