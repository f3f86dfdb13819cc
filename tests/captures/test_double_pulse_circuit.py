"""The independent double-pulse circuit's driven gate, checked against the gate-node charge balance and the
first-order switching model.

First-order model (Mohan, Undeland & Robbins, Power Electronics: Converters, Applications, and Design, 3rd ed.,
Wiley 2003, ch. 22, MOSFET switching characteristics): in the active region i_d = g_fs·(v_gs − V_th); at turn-off
of a clamped inductive load the gate stays at the Miller plateau V_th + I_o/g_fs while v_ds rises, then falls
through C_iss = C_gs + C_gd while the current falls.

The test circuit has a short power loop (6 nH, half of it common-source), so that the drain overshoot L·di/dt,
fed back through C_gd, stays small beside the drive: that feedback is not in the first-order model, and with the
default 25 nH loop (1.5 nH shared) it put the shared/Kelvin di/dt ratio ~20 % above the first-order value (here
0.61 against 0.58). It has no idle resistor (1 MΩ), so that the switch carries the load current alone during the
voltage rise.
"""

from __future__ import annotations

import numpy as np
import pytest

from tests.captures.double_pulse_circuit import Circuit, simulate

TURN_OFF = 0.3e-6      # the first turn-off instant of the default ramps [s]
DRIVEN = dict(gate_drive="driven", end_time=1.0e-6, idle_resistance=1e6, loop_inductance=6e-9,
              common_source_inductance=3e-9, r_g_off=20.0)


@pytest.fixture(scope="module")
def shared():
    return simulate(Circuit(source_connection="shared", **DRIVEN))


@pytest.fixture(scope="module")
def kelvin():
    return simulate(Circuit(source_connection="kelvin", **DRIVEN))


def _before_turn_off(solution):
    """Index of the last sample before the first turn-off."""
    return int(np.searchsorted(solution.time, TURN_OFF)) - 1


def _fall_slope(solution):
    """Mean di_d/dt [A/s] of the first turn-off between 80 % and 20 % of the current before it."""
    start = _before_turn_off(solution)
    current = solution.i_d[start:]
    high, low = np.argmax(current < 0.8 * current[0]), np.argmax(current < 0.2 * current[0])
    return (current[low] - current[high]) / (solution.time[start + low] - solution.time[start + high])


@pytest.mark.parametrize("c_gd_low", [None, 20e-12], ids=["constant C_gd", "stepped C_gd"])
def test_gate_charge_of_a_turn_off_is_stored_in_c_gs_and_c_gd(c_gd_low):
    """∫i_g dt = C_gs·Δv_gs + ΔQ_gd(v_gs − v_c) over the whole turn-off (gate-node Kirchhoff), to solver
    tolerance; and the sampled i_g integrates to the same charge (trapezoid, the step at the turn-off instant
    falling between samples: ~1e-3)."""
    circuit = Circuit(c_gd=200e-12, c_gd_low=c_gd_low, **DRIVEN)
    solution = simulate(circuit)
    start, end = _before_turn_off(solution), solution.time.size - 1
    die_gate, v_c, charge = (solution.extra[name] for name in ("die_gate", "v_c", "gate_charge"))
    stored = (circuit.c_gs * (die_gate[end] - die_gate[start])
              - (circuit.gate_drain_charge(v_c[end] - die_gate[end])
                 - circuit.gate_drain_charge(v_c[start] - die_gate[start])))   # Q_gd is a function of v_dg
    delivered = charge[end] - charge[start]
    assert delivered == pytest.approx(stored, rel=1e-7)
    assert delivered < -30e-9               # the gate gave up its 18 V·C_gs and the Miller charge
    sampled = np.trapezoid(solution.extra["gate_current"][start:], solution.time[start:])
    assert sampled == pytest.approx(delivered, rel=2e-3)


def test_miller_plateau_sits_at_v_th_plus_load_current_over_g_fs(shared):
    """The die gate while v_ds rises (10 %–90 % of the bus) against V_th + I_o/g_fs (Mohan et al., ch. 22); within
    3 %: the first-order value leaves out the displacement current (C_ds + C_gd + C_d)·dv_ds/dt that the channel
    does not carry (≈ 1 A of 22 A here: the plateau comes out 1 % low)."""
    circuit = shared.circuit
    start = _before_turn_off(shared)
    rising = ((shared.time > TURN_OFF) & (shared.v_ds > 0.1 * circuit.bus_voltage)
              & (shared.v_ds < 0.9 * circuit.bus_voltage))
    assert np.count_nonzero(rising) > 50                # the rise lasts tens of ns: a plateau, not a ramp
    plateau = shared.extra["die_gate"][rising]
    expected = circuit.v_gs_th + shared.i_d[start] / circuit.transconductance
    assert np.median(plateau) == pytest.approx(expected, rel=0.03)
    assert np.ptp(plateau) < 0.05 * expected


def test_shared_source_slows_the_turn_off_current_fall(shared, kelvin):
    """Ratio of the turn-off di/dt, shared to Kelvin source, against the first-order model: with
    i_d = g_fs·(v_gs − V_th) and C_iss·dv_gs/dt = (V_off − v_gs − k·L_s·di_d/dt)/R_g,
    di_d/dt = g_fs·(V_off − v_gs)/(R_g·C_iss + k·g_fs·L_s), so between the same two currents (the same two gate
    levels) the ratio is R_g·C_iss/(R_g·C_iss + g_fs·L_s); within 25 %."""
    circuit = shared.circuit
    gate_time_constant = circuit.r_g_off * (circuit.c_gs + circuit.c_gd)
    expected = gate_time_constant / (gate_time_constant
                                     + circuit.transconductance * circuit.common_source_inductance)
    ratio = _fall_slope(shared) / _fall_slope(kelvin)
    assert ratio < 1.0
    assert ratio == pytest.approx(expected, rel=0.25)


def test_pins_see_the_die_gate_with_a_kelvin_source_and_the_l_s_drop_with_a_shared_one(shared, kelvin):
    np.testing.assert_array_equal(kelvin.v_gs, kelvin.extra["die_gate"])
    drop = shared.v_gs - shared.extra["die_gate"]
    np.testing.assert_allclose(drop, shared.circuit.common_source_inductance * shared.extra["di_dt"])
    assert drop.min() < -1.0                # L_s·di/dt at turn-off: volts on the pins


def test_the_default_gate_is_prescribed_with_a_shared_source():
    circuit = Circuit()
    assert (circuit.gate_drive, circuit.source_connection) == ("prescribed", "shared")


@pytest.mark.parametrize("field, value", [("gate_drive", "pulsed"), ("source_connection", "floating")])
def test_an_unknown_mode_is_refused(field, value):
    with pytest.raises(ValueError, match=f"{field}: '{value}' is neither"):
        Circuit(**{field: value})
