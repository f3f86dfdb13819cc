"""How the cell simulation handles many corners: corners that finish early are taken apart from the rest,
corners an edge cannot tell apart are simulated once, and a capacitance curve is prepared once. Each result is
compared with the same corner simulated alone (or, for the curve, with scipy's quad), never with itself.
"""

import dataclasses

import numpy as np
import pytest
from scipy.integrate import quad

from margincheck.physics.capacitance import LogLinearCurve, capacitance_at, charge_at
from margincheck.physics.cell_edges import measure_edges
from margincheck.physics.switching_cell import STATES, V_DS, cell_at, simulate_edge
from tests.physics.cell_builders import CELL, DEVICE, cell_arrays, with_changes

SLOW = with_changes(DEVICE, r_gate=40.0)


def _two_gates(pattern: list[int]):
    """A cell over len(pattern) corners whose switch under test has the gate resistance of DEVICE (0) or of
    SLOW (1) per corner."""
    both = cell_arrays(CELL, DEVICE, DEVICE, 2)
    both = dataclasses.replace(both, dut=dataclasses.replace(both.dut, r_gate=np.array([DEVICE["r_gate"],
                                                                                          SLOW["r_gate"]])))
    return cell_at(both, np.array(pattern), 2)


def test_corners_that_repeat_are_measured_once_and_get_their_own_figures():
    """Corners that an edge cannot tell apart share one simulation; each corner still reads the figures of
    its own values, the same as that corner simulated alone."""
    pattern = [0, 1, 0, 1, 1]
    together = measure_edges({"turn_off": _two_gates(pattern)}, len(pattern))["turn_off"]
    alone = {choice: measure_edges({"turn_off": cell_arrays(CELL, device, DEVICE)}, 1)["turn_off"]
             for choice, device in ((0, DEVICE), (1, SLOW))}
    for name in ("peak_voltage", "di_dt_max", "turn_off_energy"):
        expected = np.array([alone[choice][name][0] for choice in pattern])
        assert together[name] == pytest.approx(expected, rel=1e-3), name
    assert together["peak_voltage"][0] != pytest.approx(together["peak_voltage"][1], rel=1e-3)


def test_a_corner_that_needs_more_time_is_integrated_as_if_alone():
    """Corners that reach their end early are taken apart from the rest: the long corner's waveform is the one
    it has alone, and the short corners hold their last sample and are complete."""
    corners = 8
    cell = cell_arrays(CELL, DEVICE, DEVICE, corners)
    end = np.full(corners, 20e-9)
    end[0] = 200e-9
    step = np.full(corners, 0.2e-9)
    together = simulate_edge(cell, "turn_off", end, step, relative_tolerance=1e-4)
    alone = simulate_edge(cell_at(cell, slice(0, 1), corners), "turn_off", end[:1], step[:1], relative_tolerance=1e-4)
    assert together.completed.all()
    assert together.time[-1] == pytest.approx(end)
    assert together.state[:, 0, V_DS].max() == pytest.approx(alone.state[:, 0, V_DS].max(), rel=1e-4)
    assert together.state[-1, 0] == pytest.approx(alone.state[-1, 0], rel=1e-4, abs=1e-9)
    finished = together.time[:, 1] >= end[1]
    assert (together.state[finished, 1] == together.state[-1, 1]).all()
    assert together.state.shape[2] == len(STATES)


def test_cell_at_takes_corners_and_spreads_scalars():
    cell = dataclasses.replace(cell_arrays(CELL, DEVICE, DEVICE, 4), damping_conductance=0.5,
                               bus_voltage=np.array([1.0, 2.0, 3.0, 4.0]))
    part = cell_at(cell, np.array([3, 1]), 4)
    assert part.bus_voltage.tolist() == [4.0, 2.0]
    assert part.damping_conductance.tolist() == [0.5, 0.5]
    assert part.dut.c_oss.voltages == cell.dut.c_oss.voltages
    assert part.dut.c_oss.scale.shape == (2,)


CURVE_V = (0.0, 25.0, 50.0, 100.0, 200.0, 400.0)
CURVE_C = (3e-9, 6e-10, 1.5e-10, 9e-11, 7e-11, 6e-11)


@pytest.mark.reference
@pytest.mark.parametrize("voltage", [-5.0, 10.0, 37.5, 150.0, 400.0, 650.0])
def test_the_prepared_curve_charge_is_the_integral_of_its_capacitance(voltage):
    """Q(v) = ∫0^v C(w) dw, checked with scipy's quad over the log-linear C(v) (points at the table voltages)."""
    curve = LogLinearCurve.of(CURVE_V, CURVE_C)
    points = [v for v in CURVE_V if min(0.0, voltage) < v < max(0.0, voltage)]
    expected = quad(lambda w: capacitance_at(w, CURVE_V, CURVE_C), 0.0, voltage, points=points or None,
                    limit=200)[0]
    assert curve.charge(voltage) == pytest.approx(expected, rel=1e-9)
    assert charge_at(voltage, CURVE_V, CURVE_C) == pytest.approx(expected, rel=1e-9)


def test_the_prepared_curve_is_log_linear_between_points_and_flat_beyond():
    curve = LogLinearCurve.of(CURVE_V, CURVE_C)
    voltages = np.array([-10.0, 0.0, 12.5, 400.0, 800.0])
    expected = [3e-9, 3e-9, np.sqrt(3e-9 * 6e-10), 6e-11, 6e-11]
    assert curve.capacitance(voltages) == pytest.approx(expected, rel=1e-12)
