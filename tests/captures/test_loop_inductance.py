"""Loop inductance (ring and dip), loop resistance, damping and common-source inductance recovered from a scope
capture of the independent double-pulse circuit (scipy Radau) with noise, 8-bit steps and probe skew."""

from __future__ import annotations

import numpy as np
import pytest

from margincheck.captures.edges import NotMeasurable
from margincheck.captures.loop_inductance import (
    common_source_inductance,
    compare_loop_inductance,
    dip_inductance,
    ring_inductance,
    ring_resistance,
)
from margincheck.captures.measurements import measure_double_pulse
from tests.captures.double_pulse_circuit import scope

pytestmark = pytest.mark.reference

SKEWS = [0.0, 1e-9, 2e-9]   # current probe late by up to 2 ns (10 % of the 20 ns current rise)


def _capture_and_figures(solution, skew):
    capture = scope(solution, sample_interval=0.2e-9, skew=skew)
    figures = measure_double_pulse(capture["time"], capture["v_ds"], capture["i_d"], capture["v_gs"],
                                   solution.circuit.bus_voltage, solution.circuit.load_inductance,
                                   v_gs_idle=capture["v_gs_idle"])
    return capture, figures


@pytest.fixture(scope="module", params=SKEWS, ids=lambda skew: f"skew {skew * 1e9:g} ns")
def measured(request, circuit_solution):
    capture, figures = _capture_and_figures(circuit_solution, request.param)
    return capture, figures, compare_loop_inductance(figures.turn_off, figures.turn_on, circuit_solution.circuit.c_oss)


def test_loop_inductance_from_the_ring(measured, circuit_solution):
    # the circuit's C_oss is linear, so f_n = 1/(2π√(L·C_oss)) holds exactly; 5 % as the issue asks
    assert measured[2].from_ring == pytest.approx(circuit_solution.circuit.loop_inductance, rel=0.05)


def test_loop_inductance_from_the_dip(measured, circuit_solution):
    """The dip holds R·i (20 mΩ · 13 A = 0.3 V against L·di/dt = 25 V) and the ring the current's start
    excites; it reads 2-3 % high here, within the 5 % the issue asks."""
    assert measured[2].from_dip == pytest.approx(circuit_solution.circuit.loop_inductance, rel=0.05)


def test_the_two_estimates_and_their_disagreement(measured):
    loop = measured[2]
    assert loop.disagreement == pytest.approx((loop.from_dip - loop.from_ring) / loop.from_ring)
    assert abs(loop.disagreement) < 0.05


def test_damping_of_the_ring_against_the_series_rlc(measured, circuit_solution):
    """ζ = ((R + R_oss)/2)·√(C_oss/L) of the series R-L-C ring (the diode's dynamic resistance, n·V_T/I = 2 mΩ,
    neglected); within 20 % as the issue asks, and the loop resistance R = 2ζ√(L/C) with it."""
    circuit = circuit_solution.circuit
    ring = measured[1].turn_off.ring
    assert ring.damping_ratio == pytest.approx(circuit.ring_damping_ratio, rel=0.2)
    assert ring.quality == pytest.approx(0.5 / circuit.ring_damping_ratio, rel=0.2)
    assert measured[2].ring_resistance == pytest.approx(circuit.loop_resistance + circuit.oss_resistance, rel=0.2)


def test_common_source_inductance_from_the_gate_step(measured, circuit_solution):
    capture, figures, _ = measured
    estimate = common_source_inductance(capture["time"], capture["v_gs"], capture["i_d"], figures.edges,
                                        figures.turn_on)
    # 10 %: the step (1.5 V) is 11 steps of the 8-bit gate channel, read over a 20 ns rise
    assert estimate == pytest.approx(circuit_solution.circuit.common_source_inductance, rel=0.1)


def test_a_kelvin_gate_shows_no_common_source_step(circuit_solution):
    """Measured at a Kelvin source the gate has no L_s·di/dt: nothing to infer, said so."""
    capture, figures = _capture_and_figures(circuit_solution, 0.0)
    capture["v_gs"] = np.interp(capture["time"], circuit_solution.time, circuit_solution.extra["die_gate"])
    estimate = common_source_inductance(capture["time"], capture["v_gs"], capture["i_d"], figures.edges,
                                        figures.turn_on)
    assert isinstance(estimate, NotMeasurable) or estimate < 0.1 * circuit_solution.circuit.common_source_inductance


def test_without_a_ring_only_the_dip_is_given(circuit_solution):
    capture, figures = _capture_and_figures(circuit_solution, 0.0)
    loop = compare_loop_inductance(NotMeasurable("ring too short: test"), figures.turn_on, 100e-12)
    assert isinstance(loop.from_ring, NotMeasurable) and loop.from_ring.reason == "ring too short: test"
    assert isinstance(loop.disagreement, NotMeasurable) and not isinstance(loop.from_dip, NotMeasurable)


def test_closed_forms():
    """L = 1/((2πf)²C), R = 2ζ√(L/C), L = ΔV/(di/dt): arithmetic only."""
    assert ring_inductance(1.0 / (2.0 * np.pi * 1e-9), 1e-9) == pytest.approx(1e-9)
    assert ring_resistance(0.5, 1e-9, 1e-9) == pytest.approx(1.0)
    assert dip_inductance(25.0, 1e9) == pytest.approx(25e-9)
