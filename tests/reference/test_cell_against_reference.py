"""The production cell simulation (margincheck.physics.switching_cell, TR-BDF2) against the independent Kirchhoff
model of tests/reference/kirchhoff_cell.py (scipy Radau, rtol 1e-8, events at every diode and threshold
transition), written apart from it from the same circuit statement.

This checks the physics as implemented twice (two derivations of the same circuit, two integrators, two
measurement codes), over a sweep like the one that exposed the earlier closed-form models: R_g,off 1-20 ohm,
L_s 0-15 nH, L_loop 5-60 nH, I 10-80 A, V_bus 100-800 V, constant and curve capacitances, Kelvin and shared
sources. Bounds: the turn-off peak within 2 %, E_on and E_off within 5 % (or 1 % of V·I·1 ns, for the
sub-microjoule turn-on of a loop whose L·di/dt takes the whole bus), and every corner whose reference waveform
is still ringing up at the end (by 2 % or more over a fifth of the simulated time) flagged by the oscillation
screen.
"""

from __future__ import annotations

import dataclasses

import numpy as np
import pytest

from margincheck.physics.cell_edges import measure_edges, simulated_time
from margincheck.rules.cell_model import STILL_GROWING
from margincheck.rules.transients import BUILD_UP_LIMIT
from tests.physics.cell_builders import CELL, DEVICE, cell_arrays, with_changes
from tests.reference.kirchhoff_cell import Cell, Device, measure, simulate

pytestmark = pytest.mark.reference

#: Illustrative superjunction-like curves (large at low voltage).
COSS = ((0.0, 25.0, 50.0, 100.0, 200.0, 400.0, 800.0), (3e-9, 6e-10, 1.5e-10, 9e-11, 7e-11, 6e-11, 5e-11))
CRSS = ((0.0, 25.0, 50.0, 100.0, 800.0), (3e-10, 4e-11, 1e-11, 6e-12, 4e-12))


def _sweep(count: int = 14, seed: int = 7) -> list[dict]:
    """Cases drawn evenly (log-uniform where the range spans decades) from the issue's ranges."""
    rng = np.random.default_rng(seed)
    cases = []
    for index in range(count):
        source = float(rng.uniform(0.0, 15e-9))
        loop = float(max(rng.uniform(5e-9, 60e-9), source + 3e-9))
        curved = index % 2 == 0
        dut = with_changes(DEVICE, r_gate=float(np.exp(rng.uniform(np.log(1.0), np.log(20.0)))) + 1.0,
                           l_source=source, kelvin=index % 3 == 0, l_gate=3e-9,
                           c_oss=COSS if curved else DEVICE["c_oss"], c_rss=CRSS if curved else DEVICE["c_rss"])
        opposite = with_changes(DEVICE, r_gate=11.0, l_source=0.0, kelvin=True, l_gate=3e-9, v_off=0.0,
                                c_oss=dut["c_oss"], c_rss=dut["c_rss"])
        cell = with_changes(CELL, bus_voltage=float(rng.uniform(100.0, 800.0)), load_current=float(rng.uniform(10, 80)),
                            loop_inductance=loop)
        cases.append({"cell": cell, "dut": dut, "opposite": opposite})
    return cases


CASES = _sweep()


def _reference(case: dict, edge: str, end: float) -> dict:
    device = {name.name for name in dataclasses.fields(Device)}
    cell = Cell(**{name: value for name, value in case["cell"].items()},
                dut=Device(**{k: v for k, v in case["dut"].items() if k in device}),
                opposite=Device(**{k: v for k, v in case["opposite"].items() if k in device}))
    waves = simulate(cell, edge, end)
    return measure(cell, edge, waves) | {"growth": _late_growth(waves, case["cell"]["bus_voltage"], edge)}


def _late_growth(waves: dict, bus: float, edge: str) -> float:
    """Peak-to-peak swing of the reference waveform in the last fifth of the time over the fifth before (0 when
    the last swing is below 1 % of the bus: the ring has died out)."""
    t = waves["t"]
    signal = waves["v_ds"] if edge == "turn_off" else waves["v_o"]
    late, before = signal[t > 0.8 * t[-1]], signal[(t > 0.6 * t[-1]) & (t <= 0.8 * t[-1])]
    swing = np.ptp(late)
    return 0.0 if swing < 0.01 * bus else swing / np.ptp(before)


@pytest.mark.parametrize("case", CASES, ids=[f"case{index}" for index in range(len(CASES))])
def test_the_cell_simulation_matches_the_independent_reference(case):
    cells = {edge: cell_arrays(case["cell"], with_changes(case["dut"]), case["opposite"]) for edge in
             ("turn_off", "turn_on")}
    ours = measure_edges(cells, 1)
    for edge, energy in (("turn_off", "e_off"), ("turn_on", "e_on")):
        end = float(simulated_time(cells[edge], edge)[0])
        theirs = _reference(case, edge, end)
        figures = ours[edge]
        grows = theirs["growth"] > STILL_GROWING   # a lossless ring holds its swing: growth is 2 % or more
        flagged = figures["late_growth"][0] > STILL_GROWING or figures["build_up"][0] >= BUILD_UP_LIMIT
        if grows:
            assert flagged, (edge, theirs["growth"], figures["build_up"][0])
        if edge == "turn_off":
            assert figures["peak_voltage"][0] == pytest.approx(theirs["peak_v_ds"], rel=0.02), case
        ours_energy = figures["turn_off_energy" if edge == "turn_off" else "turn_on_energy"][0]
        if not grows:
            noise = 0.01 * case["cell"]["bus_voltage"] * case["cell"]["load_current"] * 1e-9  # 1 % of V*I*1 ns
            assert ours_energy == pytest.approx(theirs[energy], rel=0.05, abs=noise), (edge, case)
