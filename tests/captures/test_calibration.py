"""Calibration of the cell model to a capture (margincheck.captures.calibration).

Two kinds of test, said at each:
- the fit: figures produced by the project's own cell model at known inputs are fitted from other start values,
  and the inputs come back (this checks the fitting and the shared measurement definitions, not the physics);
- the physics: a capture of the independent scipy circuit of tests/captures/double_pulse_circuit.py (a different
  circuit: C_oss behind an ESR, an exponential diode, no Miller capacitance in the power stage) at 100 V predicts
  the peak of the same circuit at 400 V.
"""

from __future__ import annotations

import dataclasses

import numpy as np
import pytest

from margincheck.bringup import predict_turn_off_peaks
from margincheck.captures.calibration import (
    CalibrationError,
    calibrate,
    measured_targets,
    nominal_point,
    simulate_as_captured,
)
from margincheck.captures.edges import DoublePulseEdges, NotMeasurable
from margincheck.captures.measurements import DoublePulseFigures, measure_double_pulse
from margincheck.design import load_design
from margincheck.rules.cell_model import cell_inputs, cells_for_grid
from tests.captures.double_pulse_circuit import Circuit, scope, simulate

LEG = {
    "format": "margincheck/1",
    "design": {"title": "calibration leg (illustrative)"},
    "derating": "default",
    "conditions": {"bus_voltage": {"max": "400 V"}, "turn_off_current": {"max": "20 A"},
                   "switching_frequency": "20 kHz", "case_temperature": {"max": "80 degC"}},
    "commutation_loop": {"inductance": {"nominal": "15 nH", "tolerance": "30 %"}},
    "devices": {"dut": {
        "technology": "sic-mosfet",
        "ratings": {"v_ds_max": "1200 V", "v_gs_max": "22 V", "v_gs_min": "-8 V", "i_d_pulse": "100 A",
                    "t_j_max": "175 degC"},
        "characteristics": {"v_gs_th": {"min": "3.5 V", "nominal": "4 V", "max": "4.5 V"},
                            "transconductance": {"min": "8 S", "nominal": "10 S", "max": "12 S"},
                            "c_iss": "1 nF", "c_rss": "20 pF", "c_oss": "100 pF", "r_g_internal": "1 ohm",
                            "r_ds_on": {"value": {"max": "50 mohm"}, "t_j": "25 degC", "v_gs": "15 V"},
                            "reverse_recovery": {"q_rr": "0 nC", "softness": 1}}}},
    "switches": [{"ref": ref, "device": "dut", "leg": "A", "source_connection": "shared",
                  "common_source_inductance": {"nominal": "2 nH", "tolerance": "50 %"},
                  "gate_drive": {"on": "15 V", "off": "-3 V", "r_on": "20 ohm", "r_off": "20 ohm"}}
                 for ref in ("Q1", "Q2")],
}


@pytest.fixture
def leg(write_design):
    return load_design(write_design(LEG))


def _model_figures(design, point: dict, bus: float, current: float) -> DoublePulseFigures:
    """The figures of the project's own cell at ``point``, measured like a capture."""
    switch = design.switches[0]
    values = nominal_point(cell_inputs(switch, design, []), bus) | point | {"turn_off_current": current}
    grid = {name: np.array([value]) for name, value in values.items()}
    cells = cells_for_grid(switch, design, grid, [])
    (turn_off,) = simulate_as_captured(cells["turn_off"], "turn_off", bus, current)
    (turn_on,) = simulate_as_captured(cells["turn_on"], "turn_on", bus, current)
    edges = DoublePulseEdges(0.0, 1e-6, NotMeasurable("not simulated"), "v_gs", 0.0, 1.0)
    return DoublePulseFigures(edges, turn_off, turn_on, NotMeasurable("not simulated"))


def test_the_fit_recovers_the_inputs_of_the_model_that_made_the_figures(leg):
    """Fit check (the model against itself): L_loop, Q and L_s come back within 3 % from a start 20-40 % off."""
    truth = {"loop_inductance": 24e-9, "quality_factor": 12.0, "common_source_inductance": 3e-9}
    figures = _model_figures(leg, truth, 100.0, 20.0)
    calibration = calibrate(leg, "Q1", figures, 100.0)
    fitted = {item.name: item.value for item in calibration.values}
    for name, value in truth.items():
        assert fitted[name] == pytest.approx(value, rel=0.03), name
    assert calibration.largest_residual < 0.01
    inside = {item.name: item.within_design for item in calibration.values}
    assert inside == {"loop_inductance": False, "quality_factor": None, "common_source_inductance": True}


def test_fitting_the_device_too_reproduces_the_figures_and_the_prediction(leg):
    """Fit check (the model against itself), with g_fs and V_th fitted too: these figures do not separate g_fs,
    V_th and L_s (a family of sets gives the same edges: measured here, 8.6 S / 4.02 V / 2.6 nH against the true
    11 S / 4.3 V / 3 nH), so the test asks what matters: every figure reproduced within 1 %, and the 400 V peak
    of the fitted set within 1 % of the true set's."""
    truth = {"loop_inductance": 24e-9, "quality_factor": 12.0, "common_source_inductance": 3e-9,
             "transconductance": 11.0, "v_gs_th": 4.3}
    calibration = calibrate(leg, "Q1", _model_figures(leg, truth, 100.0, 20.0), 100.0, fit_device=True)
    assert {item.name for item in calibration.values} == set(truth)
    assert calibration.largest_residual < 0.01
    fitted = predict_turn_off_peaks(leg, leg.switches[0], calibration, [400.0], [20.0])
    true = predict_turn_off_peaks(leg, leg.switches[0], dataclasses.replace(
        calibration, point=calibration.point | truth), [400.0], [20.0])
    assert fitted == pytest.approx(true, rel=0.01)


def test_targets_come_from_the_first_turn_off_and_the_turn_on(leg):
    figures = _model_figures(leg, {"loop_inductance": 20e-9, "quality_factor": 8.0}, 100.0, 20.0)
    measured, missing = measured_targets(figures)
    assert set(measured) == {"ring_frequency", "ring_damping_ratio", "overshoot", "turn_off_di_dt",
                             "turn_on_di_dt", "voltage_dip"}
    assert measured["overshoot"] == pytest.approx(figures.first_turn_off.overshoot)
    assert missing == {}


def test_a_capture_with_nothing_to_fit_is_refused(leg):
    nothing = NotMeasurable("no edge")
    edges = DoublePulseEdges(nothing, nothing, nothing, "v_gs", 0.0, 1.0)
    with pytest.raises(CalibrationError, match="neither the ring, the overshoot nor the turn-on dip"):
        calibrate(leg, "Q1", DoublePulseFigures(edges, nothing, nothing, nothing), 100.0)


def test_an_unknown_switch_is_refused(leg):
    figures = _model_figures(leg, {"loop_inductance": 20e-9}, 100.0, 20.0)
    with pytest.raises(CalibrationError, match='no switch with ref "Q7"'):
        calibrate(leg, "Q7", figures, 100.0)


#: The independent circuit with the leg's nominal gate data (C_iss = C_gs + C_gd = 1 nF, C_rss = 20 pF, C_oss =
#: C_ds + C_gd = 100 pF, R_g = 20 + 1 ohm, V_th 4 V, g_fs 10 S) and parasitics the design does not know: a 25 nH
#: loop (the design guesses 15 nH), 1.5 nH shared source (it guesses 2 nH) and a 1 ohm ESR behind C_oss.
DRIVEN = {"gate_drive": "driven", "source_connection": "shared", "c_gs": 980e-12, "c_gd": 20e-12, "c_oss": 80e-12,
          "r_g_on": 21.0, "r_g_off": 21.0, "loop_inductance": 25e-9, "common_source_inductance": 1.5e-9,
          "idle_resistance": 1e4, "load_inductance": 50e-6}


@pytest.fixture(scope="session")
def bench_references():
    """The circuit at 100 V and at 400 V, both turning off 20 A at the end of the first pulse (scipy Radau)."""
    return {bus: simulate(Circuit(bus_voltage=bus, start_current=start, **DRIVEN))
            for bus, start in ((100.0, 19.4), (400.0, 17.6))}


def _first_turn_off(solution) -> tuple[float, float]:
    """The clean circuit's current at the first turn-off's gate step [A] and the peak v_ds after it [V]."""
    instant = solution.circuit.ramps[0][0]
    after = (solution.time > instant) & (solution.time < solution.circuit.ramps[1][0])
    return float(np.interp(instant, solution.time, solution.i_d)), float(solution.v_ds[after].max())


def test_a_100_volt_capture_predicts_the_400_volt_peak_of_the_independent_circuit(leg, bench_references):
    """Physics check. The issue's acceptance: the full-voltage peak from a 100 V capture within 5 % of the
    simulation at 400 V (measured: +0.9 %). The overshoot above the bus, a harder figure, within 15 % (+8 %).
    Against the circuit's own values: the fitted L_loop within 10 % (-7 %), and the fitted model's ring damping
    within 20 % (the issue's tolerance) of the circuit's series R-L-C ζ = ((R + R_oss)/2)·√(C/L), C = C_ds + C_gd
    with the gate held (-3 %). The fitted Q input itself is not the ring's Q: the model's gate loop damps too."""
    channels = scope(bench_references[100.0])
    figures = measure_double_pulse(channels["time"], channels["v_ds"], channels["i_d"], channels["v_gs"], 100.0,
                                   50e-6)
    calibration = calibrate(leg, "Q1", figures, 100.0)
    current, reference_peak = _first_turn_off(bench_references[400.0])
    (predicted,) = predict_turn_off_peaks(leg, leg.switches[0], calibration, [400.0], [current])
    assert predicted == pytest.approx(reference_peak, rel=0.05)
    assert predicted - 400.0 == pytest.approx(reference_peak - 400.0, rel=0.15)
    fitted = {item.name: item.value for item in calibration.values}
    circuit = bench_references[400.0].circuit
    assert fitted["loop_inductance"] == pytest.approx(circuit.loop_inductance, rel=0.10)
    ring = 0.5 * (circuit.loop_resistance + circuit.oss_resistance) * np.sqrt(
        (circuit.c_oss + circuit.c_gd) / circuit.loop_inductance)
    damping = next(target for target in calibration.targets if target.name == "ring_damping_ratio")
    assert damping.fitted == pytest.approx(ring, rel=0.20)
