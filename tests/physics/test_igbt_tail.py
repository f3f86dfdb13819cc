"""The IGBT tail current of the cell simulation (row (10) of margincheck.physics.switching_cell) and its share of
E_off.

The reference is an independent integration (scipy quad) of the waveform the tail is meant to be: while v_ce sits at
the bus, i_tail(t) = α·I·exp(−t/τ) flows until the collector current falls to the 2 % end of the E_off window.
This checks that the simulation carries and integrates the tail as stated, not the device physics behind the
exponential (Baliga 2008, ch. 9, from memory). The tail is made long against the edges (τ = 1 µs, the edges some
30 ns), so that what the simulation adds beyond the idealised tail, the decay during the edge and the slower
current fall of the channel's smaller share, stays below t_edge/τ ≈ 3 % of the tail's energy: the tolerance.
"""

import dataclasses

import numpy as np
import pytest
from scipy.integrate import quad

from margincheck.physics.cell_edges import measure_edges
from tests.physics.cell_builders import CELL, DEVICE, cell_arrays, with_changes

pytestmark = pytest.mark.reference

FRACTION, TAIL_TIME = 0.2, 1e-6          # α, τ_t [s]
WINDOW_END = 0.02                        # the E_off window ends where i_c has fallen to 2 % of I
DAMPING = 20.0  # ohm across the loop: a ring quality of about 1 (sqrt(30 nH/90 pF) = 18 ohm), so that the terminal
#                 current is the tail itself once the edge is over


def _turn_off(tail: bool) -> dict:
    cell = cell_arrays(with_changes(CELL, damping_resistance=DAMPING), DEVICE, DEVICE)
    if tail:
        dut = dataclasses.replace(cell.dut, tail_fraction=np.array([FRACTION]), tail_time=np.array([TAIL_TIME]))
        cell = dataclasses.replace(cell, dut=dut)
    return {name: float(values[0]) for name, values in measure_edges({"turn_off": cell}, 1)["turn_off"].items()}


@pytest.fixture(scope="module")
def edges() -> tuple[dict, dict]:
    return _turn_off(tail=False), _turn_off(tail=True)


def _tail_energy_by_quad(bus_voltage: float, current: float) -> float:
    """∫ V·α·I·exp(−t/τ) dt from the start of the tail until α·I·exp(−t/τ) = 2 % of I [J]."""
    end = TAIL_TIME * np.log(FRACTION / WINDOW_END)
    energy, error = quad(lambda t: bus_voltage * FRACTION * current * np.exp(-t / TAIL_TIME), 0.0, end)
    assert error < 1e-9 * energy
    return energy


def test_the_tail_adds_its_integral_to_e_off(edges):
    without, with_tail = edges
    expected = _tail_energy_by_quad(CELL["bus_voltage"], CELL["load_current"])   # 400 V x 8 A x 1 us x 0.9 = 2.88 mJ
    assert with_tail["turn_off_energy"] - without["turn_off_energy"] == pytest.approx(expected, rel=0.03)


def test_the_tail_slows_the_current_fall_and_lowers_the_peak(edges):
    without, with_tail = edges
    assert with_tail["di_dt_max"] < without["di_dt_max"]
    assert with_tail["peak_voltage"] < without["peak_voltage"]


def test_a_device_without_a_tail_is_unchanged_by_the_tail_state():
    # The MOSFET cell carries i_tail as an algebraic zero: its E_off is the plain edge's, ½·V·I·t order (tens of µJ).
    figures = _turn_off(tail=False)
    assert 0.0 < figures["turn_off_energy"] < 1e-3
