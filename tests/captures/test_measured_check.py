"""Measured figures of a double-pulse capture against the design rules' derated limits.

The capture is the independent double-pulse circuit of tests/captures/double_pulse_circuit.py (scipy Radau),
sampled like an 8-bit scope (noise 0.3 % of full scale, σ), written as a .npz file named in the design's
``captures:`` section and read back through it; the switch under test is Q1 of an exact, symmetric version of
the contract design (two Kelvin-source switches of one leg, isolated drivers)."""

from __future__ import annotations

import copy
import dataclasses

import numpy as np
import pytest
import yaml

from margincheck.captures.edges import NotMeasurable
from margincheck.captures.measured_check import measured_findings
from margincheck.captures.measurements import measure_double_pulse
from margincheck.captures.reading import read_capture
from margincheck.design import load_design
from margincheck.findings import Status
from margincheck.loading import load_document
from margincheck.rules import evaluate_design
from tests.captures.double_pulse_circuit import scope
from tests.conftest import CONTRACT_FILE

BUS = 400.0
CAPTURE = "captures/q1-double-pulse.npz"
#: One 8-bit step of the v_ds channel (800 V / 256 = 3.1 V) plus 2 σ of its noise (2.4 V each), as in
#: test_measurements.py
PEAK_TOLERANCE = 8.0


def _design_data(**changes) -> dict:
    data = copy.deepcopy(load_document(CONTRACT_FILE).data)
    data["conditions"]["bus_voltage"] = "400 V"
    data["commutation_loop"]["inductance"] = "25 nH"
    device = data["devices"]["demo-sj650"]
    device["characteristics"].update({"c_rss": "10 pF", "c_iss": "2 nF",
                                      "v_gs_th_hot": {"v_gs_th": {"min": "2.5 V", "max": "3 V"}, "t_j": "150 degC"}})
    for switch in data["switches"]:
        switch.update({"source_connection": "kelvin", "common_source_inductance": "1 nH", "leg": "A",
                       "driver_cmti": "100 kV/us",
                       "gate_drive": {"on": "15 V", "off": "-3 V", "r_on": "5 ohm", "r_off": "5 ohm"}})
    data["captures"] = [{"file": CAPTURE, "switch": "Q1", "bus_voltage": "400 V", "load_inductance": "50 uH"}]
    device["ratings"].update(changes)
    return data


@pytest.fixture(scope="module")
def bench(tmp_path_factory, circuit_solution):
    """A folder holding the scope capture of the circuit (all four channels) as a .npz file."""
    folder = tmp_path_factory.mktemp("bench")
    (folder / "captures").mkdir()
    np.savez(folder / CAPTURE, **scope(circuit_solution, sample_interval=0.2e-9))
    return folder


@pytest.fixture
def design_at(bench):
    """The design, with ``changes`` to Q1's device ratings, written beside the capture and loaded."""
    def write(data: dict | None = None, **changes):
        path = bench / "leg.yaml"
        path.write_text(yaml.safe_dump(data or _design_data(**changes), sort_keys=False), encoding="utf-8")
        return load_design(path)

    return write


def _measured(design, idle: bool = True):
    """The capture of ``design``'s captures section read and measured: (figures, sha256)."""
    (spec,) = design.captures
    capture = read_capture(spec.file, spec.mapping, spec.name)
    channels = capture.channels
    figures = measure_double_pulse(capture.time, channels["v_ds"], channels["i_d"], channels["v_gs"],
                                   spec.bus_voltage, spec.load_inductance,
                                   v_gs_idle=channels["v_gs_idle"] if idle else None)
    return figures, capture.sha256


def _findings(design, figures, sha256=None) -> dict:
    (spec,) = design.captures
    return {finding.rule: finding for finding in measured_findings(design, spec, figures, sha256)}


@pytest.fixture(scope="module")
def checked(bench, circuit_solution):
    """The design as written, its design findings, and the capture's measured figures and findings."""
    path = bench / "leg-module.yaml"
    path.write_text(yaml.safe_dump(_design_data(), sort_keys=False), encoding="utf-8")
    design = load_design(path)
    figures, sha256 = _measured(design)
    return design, evaluate_design(design), figures, _findings(design, figures, sha256), sha256


def _clean_turn_off_peaks(solution) -> list[float]:
    """Highest v_ds of the clean waveforms around each turn-off (from 0.2 us before the gate starts to fall
    until 0.3 us after)."""
    starts = [instant for instant, rate in solution.circuit.ramps if rate < 0]
    return [float(solution.v_ds[(solution.time > start - 0.2e-6) & (solution.time < start + 0.3e-6)].max())
            for start in starts]


@pytest.mark.reference
def test_the_measured_peak_against_the_clean_reference_solution(checked, circuit_solution):
    """Reference: the clean v_ds of the independent circuit (scipy Radau), its highest value around each
    turn-off; the finding holds the higher of the two, and each edge's peak in its details."""
    finding = checked[3]["turn-off-overshoot"]
    first, second = _clean_turn_off_peaks(circuit_solution)
    assert finding.value == pytest.approx(max(first, second), abs=PEAK_TOLERANCE)
    assert finding.details["peak_v_ds_first_turn_off"].value == pytest.approx(first, abs=PEAK_TOLERANCE)
    assert finding.details["peak_v_ds_second_turn_off"].value == pytest.approx(second, abs=PEAK_TOLERANCE)
    assert finding.status is Status.PASS      # 0.8 x 650 V = 520 V against some 475 V


@pytest.mark.parametrize(("rule", "subject"), [
    ("turn-off-overshoot", "Q1"), ("gate-on-voltage", "Q1"), ("gate-off-voltage", "Q1"),
    ("spurious-turn-on", "Q2"), ("driver-cmti", "Q1")])
def test_the_limit_is_the_design_rules_limit(checked, rule, subject):
    _, design_findings, _, findings, _ = checked
    designed = next(f for f in design_findings if (f.rule, f.subject) == (rule, subject))
    measured = findings[rule]
    assert measured.subject == subject
    assert designed.limit is not None
    assert measured.limit == designed.limit
    assert measured.bound is designed.bound
    assert measured.basis.startswith("measured: ")


def test_the_gate_and_the_idle_gate_are_read_from_their_traces(checked, circuit_solution):
    findings = checked[3]
    # 8-bit step of the gate channels 35 V / 256 = 0.14 V, noise σ 0.1 V
    assert findings["gate-on-voltage"].value == pytest.approx(circuit_solution.v_gs.max(), abs=0.5)
    assert findings["gate-off-voltage"].value == pytest.approx(circuit_solution.v_gs.min(), abs=0.5)
    assert findings["spurious-turn-on"].value == pytest.approx(circuit_solution.v_gs_idle.max(), abs=0.5)
    assert "common-source drop" in findings["gate-on-voltage"].note
    assert findings["driver-cmti"].details.keys() == {"dv_dt_first_turn_off", "dv_dt_second_turn_on",
                                                      "dv_dt_second_turn_off"}


def test_every_finding_says_where_it_holds_and_where_it_came_from(checked):
    _, _, _, findings, sha256 = checked
    assert len(sha256) == 64
    for finding in findings.values():
        assert "holds at the test's conditions only (bus voltage 400 V, switched current" in finding.note
        assert CAPTURE in finding.source and sha256 in finding.source


def test_recovery_overshoot_is_not_evaluated(checked):
    finding = checked[3]["recovery-overshoot"]
    assert (finding.status, finding.subject) == (Status.NOT_EVALUATED, "Q2")
    assert "the opposite device's voltage is not probed" in finding.note


@pytest.mark.parametrize(("factor", "status"), [(1.0001, Status.MARGINAL), (1.0, Status.MARGINAL),
                                                (0.9999, Status.FAIL), (0.9, Status.FAIL)])
def test_a_peak_beyond_the_derated_limit_fails(checked, design_at, factor, status):
    """v_ds_max set so that 0.8 x v_ds_max lands just above, on and below the measured peak."""
    figures = checked[2]
    peak = checked[3]["turn-off-overshoot"].value
    finding = _findings(design_at(v_ds_max=f"{peak / 0.8 * factor!r} V"), figures)["turn-off-overshoot"]
    assert finding.value == peak
    assert finding.status is status


def test_without_the_idle_gate_spurious_turn_on_is_not_evaluated(checked):
    design = checked[0]
    findings = _findings(design, _measured(design, idle=False)[0])
    finding = findings["spurious-turn-on"]
    assert finding.status is Status.NOT_EVALUATED
    assert "the idle device's gate was not probed" in finding.note
    assert finding.missing == ("captures[0].columns.v_gs_idle",)


def _with_turn_off(figures, **changes):
    return dataclasses.replace(figures, turn_off=dataclasses.replace(figures.turn_off, **changes))


@pytest.mark.parametrize("unmeasured", [NotMeasurable("v_ds does not settle"), float("nan")])
def test_a_figure_not_measured_is_not_evaluated(checked, unmeasured):
    design, _, figures = checked[:3]
    finding = _findings(design, _with_turn_off(figures, peak_v_ds=unmeasured))["turn-off-overshoot"]
    assert finding.status is Status.NOT_EVALUATED
    assert finding.value is None
    assert "second_turn_off: " in finding.note


def test_an_edge_not_measured_is_not_evaluated(checked):
    design, _, figures = checked[:3]
    edge = dataclasses.replace(figures, turn_off=NotMeasurable("the capture ends before the second turn-off"))
    findings = _findings(design, edge)
    assert findings["turn-off-overshoot"].status is Status.NOT_EVALUATED
    assert "the capture ends before the second turn-off" in findings["gate-on-voltage"].note


def test_a_violation_on_one_edge_fails_even_when_another_edge_was_not_measured(checked, design_at):
    figures = _with_turn_off(checked[2], peak_v_ds=NotMeasurable("clipped"))
    finding = _findings(design_at(v_ds_max="500 V"), figures)["turn-off-overshoot"]
    assert finding.status is Status.FAIL        # 475 V measured on the first turn-off, against 400 V
    assert "not measured: second_turn_off: clipped" in finding.note


def test_a_missing_rating_is_not_evaluated(design_at, checked):
    data = _design_data()
    del data["devices"]["demo-sj650"]["ratings"]["v_gs_max"]
    finding = _findings(design_at(data), checked[2])["gate-on-voltage"]
    assert finding.status is Status.NOT_EVALUATED
    assert finding.missing == ("devices.demo-sj650.ratings.v_gs_max",)


@pytest.mark.parametrize(("cmti", "expected"), [(None, Status.NOT_EVALUATED), ("not-isolated", None)])
def test_driver_cmti_needs_the_drivers_cmti(design_at, checked, cmti, expected):
    data = _design_data()
    if cmti is None:
        del data["switches"][0]["driver_cmti"]
    else:
        data["switches"][0]["driver_cmti"] = cmti
    finding = _findings(design_at(data), checked[2]).get("driver-cmti")
    assert (finding and finding.status) is expected
