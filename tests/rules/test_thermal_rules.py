"""The thermal, SOA, avalanche and short-circuit rules on designs, against hand arithmetic written beside each
case (equations of margincheck.physics.thermal and safe_operating_area)."""

import copy
import math

import pytest

from margincheck.checking import check_file
from margincheck.findings import Status
from tests.conftest import EXAMPLES


@pytest.fixture
def cell(contract_data):
    """The contract design with thermal data: exact values so the hand arithmetic stays short.

    Conditions: 400 V, 40 A trip, 40 kHz, case up to 90 degC. Device: R_ds(on) 0.1 ohm at 25 degC with no
    temperature dependence (0 %/K), datasheet E_on + E_off = 100 uJ + 50 uJ at 400 V, 20 A; R_th,jc 0.5 K/W.
    """
    data = contract_data
    data["conditions"]["bus_voltage"] = "400 V"
    device = data["devices"]["demo-sj650"]
    device["characteristics"].update({
        "r_ds_on": {"value": "0.1 ohm", "t_j": "25 degC", "v_gs": "10 V"},
        "r_ds_on_temperature_coefficient": "0 %/K",
        "switching_energy": {"e_on": "100 uJ", "e_off": "50 uJ", "v_ds": "400 V", "i_d": "20 A"}})
    device["thermal"] = {"r_th_jc": "0.5 K/W", "foster": [{"r": "0.1 K/W", "tau": "100 us"},
                                                          {"r": "0.4 K/W", "tau": "10 ms"}]}
    for switch in data["switches"]:
        switch.update({"rms_current": "10 A", "switched_current": "20 A"})
    return data


def _quiet_loop(data):
    """A 2 nH loop with 0.5 nH source leads: the turn-off transient (about 610 V) stays inside the SOA."""
    data["commutation_loop"]["inductance"] = "2 nH"
    for switch in data["switches"]:
        switch["common_source_inductance"] = "0.5 nH"


def _finding(path, rule, subject="Q1"):
    return next(f for f in check_file(path).findings if (f.rule, f.subject) == (rule, subject))


def test_junction_temperature_by_hand(cell, write_design):
    # P = 10^2 x 0.1 + 40 kHz x 150 uJ x (400/400) x (20/20) = 10 + 6 = 16 W; T_j = 90 + 0.5 x 16 = 98 degC.
    # Limit 150 - 25 = 125 degC; margin over the allowed rise above the case: (125 - 98)/(125 - 90) = 0.7714.
    finding = _finding(write_design(cell), "junction-temperature")
    assert finding.value - 273.15 == pytest.approx(98.0)
    assert finding.limit - 273.15 == pytest.approx(125.0)
    assert finding.margin == pytest.approx(27 / 35)
    assert finding.details["dissipated_power"].value == pytest.approx(16.0)
    assert finding.status is Status.PASS


def test_junction_temperature_through_the_heat_sink(cell, write_design):
    # No case temperature: heat sink at 70 degC with R_th,cs 0.25 K/W: T_j = 70 + (0.5 + 0.25) x 16 = 82 degC.
    del cell["conditions"]["case_temperature"]
    cell["conditions"]["heatsink_temperature"] = "70 degC"
    cell["switches"][0]["r_th_cs"] = "0.25 K/W"
    finding = _finding(write_design(cell), "junction-temperature")
    assert finding.value - 273.15 == pytest.approx(82.0)


def test_thermal_runaway_is_a_failure_with_that_name(cell, write_design):
    # R_ds(on) rising 2 %/K at 60 A rms: 3600 A^2 x 0.1 ohm x 0.02/K x 0.5 K/W = 3.6 > 1, no equilibrium.
    cell["devices"]["demo-sj650"]["characteristics"]["r_ds_on_temperature_coefficient"] = "2 %/K"
    cell["switches"][0]["rms_current"] = "60 A"
    finding = _finding(write_design(cell), "junction-temperature")
    assert finding.status is Status.FAIL
    assert "thermal runaway" in finding.note


def test_junction_temperature_needs_the_hot_on_resistance(cell, write_design):
    del cell["devices"]["demo-sj650"]["characteristics"]["r_ds_on_temperature_coefficient"]
    finding = _finding(write_design(cell), "junction-temperature")
    assert finding.status is Status.NOT_EVALUATED
    assert "r_ds_on_hot" in finding.missing[0]


def test_on_resistance_stated_above_the_drive_level_is_not_used(cell, write_design):
    cell["devices"]["demo-sj650"]["characteristics"]["r_ds_on"]["v_gs"] = "18 V"  # the drive gives 15 V
    finding = _finding(write_design(cell), "junction-temperature")
    assert finding.status is Status.NOT_EVALUATED
    assert "above the drive's on-level" in finding.note


def test_soa_operating_point_by_hand(cell, write_design):
    # A 1 ms single pulse at 300 V: Z_th = 0.1(1 - e^-10) + 0.4(1 - e^-0.1) = 0.099995 + 0.038065 = 0.13806 K/W;
    # thermal line (150 - 90)/0.13806 = 434.6 W, 1.4487 A at 300 V, below I_DM 120 A. Limit 0.8 x 1.4487.
    cell["switches"][0]["soa_points"] = [{"name": "inrush", "v_ds": "300 V", "i_d": "1 A", "pulse": "1 ms"}]
    _quiet_loop(cell)
    finding = _finding(write_design(cell), "soa")
    assert finding.limit == pytest.approx(0.8 * 60 / 0.13806 / 300, rel=1e-4)
    assert finding.margin == pytest.approx(1 - 1 / (0.8 * 60 / 0.13806 / 300), rel=1e-4)
    assert "inrush" in finding.note and "thermal line" in finding.note


def test_soa_periodic_point_is_hotter_than_the_single_pulse(cell, write_design):
    _quiet_loop(cell)
    points = [{"name": "burst", "v_ds": "300 V", "i_d": "1 A", "pulse": "1 ms"}]
    single = _finding(write_design(cell | {"switches": [
        cell["switches"][0] | {"soa_points": points}, cell["switches"][1]]}), "soa")
    periodic = _finding(write_design(cell | {"switches": [
        cell["switches"][0] | {"soa_points": [points[0] | {"duty": 0.5}]}, cell["switches"][1]]}), "soa")
    assert periodic.limit < single.limit


def test_soa_point_beyond_the_voltage_rating_fails(cell, write_design):
    _quiet_loop(cell)
    cell["switches"][0]["soa_points"] = [{"name": "surge", "v_ds": "700 V", "i_d": "1 A", "pulse": "10 us"}]
    finding = _finding(write_design(cell), "soa")
    assert finding.status is Status.FAIL and finding.limit == 650.0


def test_soa_without_thermal_data_is_not_evaluated(cell, write_design):
    _quiet_loop(cell)
    del cell["devices"]["demo-sj650"]["thermal"]
    finding = _finding(write_design(cell), "soa")
    assert finding.status is Status.NOT_EVALUATED


def test_avalanche_energy_by_hand(cell, write_design):
    # Q1's contract peak (785 V) passes V(BR)DSS 650 V. E = 0.5 x 30 nH x 40^2 x 650/(650 - 400) = 62.4 uJ.
    # Start T_j from the junction-temperature rule, 98 degC: allowed 0.5 J x (150 - 98)/(150 - 25) = 0.208 J.
    cell["devices"]["demo-sj650"]["ratings"]["avalanche"] = {"energy": "500 mJ", "t_j": "25 degC"}
    finding = _finding(write_design(cell), "avalanche-energy")
    assert finding.value == pytest.approx(0.5 * 30e-9 * 1600 * 650 / 250)
    assert finding.limit == pytest.approx(0.5 * 52 / 125)
    assert finding.status is Status.PASS


def test_overshoot_past_the_rating_of_a_gan_device_fails(write_design):
    text = (EXAMPLES / "gan-48v-stage.yaml").read_text(encoding="utf-8")
    text = text.replace("inductance: {nominal: 1.0 nH, tolerance: 20 %}",
                        "inductance: {nominal: 6 nH, tolerance: 20 %}")
    path = write_design(text, "gan.yaml")
    (path.parent / "policies").mkdir()
    (path.parent / "policies" / "bench-lab.yaml").write_bytes((EXAMPLES / "policies" / "bench-lab.yaml").read_bytes())
    finding = _finding(path, "avalanche-energy")
    assert finding.status is Status.FAIL
    assert finding.value > 100.0 and "no avalanche capability" in finding.note


@pytest.mark.parametrize("response, status", [("1.4 us", Status.PASS), ("1.5 us", Status.MARGINAL),
                                              ("1.6 us", Status.FAIL)])
def test_short_circuit_response_against_half_the_withstand_time(cell, write_design, response, status):
    cell["devices"]["demo-sj650"]["ratings"]["short_circuit"] = {"withstand_time": "3 us", "v_ds": "400 V",
                                                                 "v_gs": "15.75 V"}
    cell["switches"][0]["short_circuit"] = {"current": "300 A", "response_time": response}
    finding = _finding(write_design(cell), "short-circuit")
    assert finding.limit == pytest.approx(1.5e-6)
    assert finding.status is status


def test_short_circuit_rating_at_a_lower_bus_voltage_does_not_cover_the_design(cell, write_design):
    cell["devices"]["demo-sj650"]["ratings"]["short_circuit"] = {"withstand_time": "3 us", "v_ds": "360 V",
                                                                 "v_gs": "20 V"}
    cell["switches"][0]["short_circuit"] = {"current": "300 A", "response_time": "1 us"}
    finding = _finding(write_design(cell), "short-circuit")
    assert finding.status is Status.NOT_EVALUATED and "360 V" in finding.note


def test_device_without_withstand_rating_must_clear_the_fault_inside_the_soa(cell, write_design):
    # 300 A is beyond I_DM = 120 A: outside the SOA whatever the time.
    cell["devices"]["demo-sj650"]["ratings"]["short_circuit"] = "none"
    cell["switches"][0]["short_circuit"] = {"current": "300 A", "response_time": "200 ns"}
    finding = _finding(write_design(cell), "short-circuit")
    assert finding.status is Status.FAIL
    assert finding.limit == pytest.approx(0.8 * 120.0)


def test_examples_are_fully_evaluated():
    for name in ("solar-string-sic-leg.yaml", "gan-48v-stage.yaml"):
        statuses = {f.status for f in check_file(EXAMPLES / name).findings}
        assert Status.NOT_EVALUATED not in statuses, name
    assert math.isfinite(_finding(EXAMPLES / "solar-string-sic-leg.yaml", "junction-temperature").value)


def test_soa_without_an_on_resistance_model_still_has_a_boundary(cell, write_design):
    # Found in review: a missing R_ds(on) model once closed the boundary to 0 A. Without it the line is left
    # out; 1 A at 300 V for 1 ms stays governed by the thermal line (see test_soa_operating_point_by_hand).
    del cell["devices"]["demo-sj650"]["characteristics"]["r_ds_on_temperature_coefficient"]
    cell["switches"][0]["soa_points"] = [{"name": "inrush", "v_ds": "300 V", "i_d": "1 A", "pulse": "1 ms"}]
    _quiet_loop(cell)
    finding = _finding(write_design(cell), "soa")
    assert finding.status is Status.PASS
    assert finding.limit == pytest.approx(0.8 * 60 / 0.13806 / 300, rel=1e-4)


# Toleranced device data is read at its worst end (issue 12): the finding equals the one of the exact worst value.
WORST_ENDS = {
    "E_on": (("characteristics", "switching_energy", "e_on"), {"nominal": "100 uJ", "tolerance": "20 %"}, "120 uJ"),
    "E_off": (("characteristics", "switching_energy", "e_off"), {"min": "40 uJ", "max": "60 uJ"}, "60 uJ"),
    "R_th,jc": (("thermal", "r_th_jc"), {"nominal": "0.5 K/W", "tolerance": "10 %", "distribution": "normal",
                                         "sigmas": 3}, "0.55 K/W"),
    "R_ds(on)": (("characteristics", "r_ds_on", "value"), {"nominal": "0.1 ohm", "tolerance": "10 %"}, "0.11 ohm"),
    "R_ds(on) coefficient": (("characteristics", "r_ds_on_temperature_coefficient"), {"min": "0 %/K",
                                                                                      "max": "0.3 %/K"}, "0.3 %/K"),
}


def _with(data, where, value):
    device = data["devices"]["demo-sj650"]
    for key in where[:-1]:
        device = device[key]
    device[where[-1]] = value
    return data


@pytest.mark.parametrize("where, toleranced, worst", WORST_ENDS.values(), ids=WORST_ENDS.keys())
def test_junction_temperature_reads_toleranced_device_data_at_its_worst_end(cell, write_design, where, toleranced,
                                                                            worst):
    spread = _finding(write_design(_with(copy.deepcopy(cell), where, toleranced)), "junction-temperature")
    exact = _finding(write_design(_with(cell, where, worst)), "junction-temperature")
    assert (spread.value, spread.margin) == pytest.approx((exact.value, exact.margin), rel=1e-9)


def test_junction_temperature_with_the_largest_switching_energy_by_hand(cell, write_design):
    # E_on 100 uJ +- 20 %: P = 10 + 40 kHz x (120 + 50) uJ = 16.8 W; T_j = 90 + 0.5 x 16.8 = 98.4 degC.
    _with(cell, ("characteristics", "switching_energy", "e_on"), {"nominal": "100 uJ", "tolerance": "20 %"})
    finding = _finding(write_design(cell), "junction-temperature")
    assert finding.value - 273.15 == pytest.approx(98.4)
    assert finding.corner["e_on"].value == pytest.approx(120e-6)


def test_one_sided_switching_energy_without_its_maximum_is_not_evaluated(cell, write_design):
    _with(cell, ("characteristics", "switching_energy", "e_on"), {"min": "80 uJ"})
    finding = _finding(write_design(cell), "junction-temperature")
    assert finding.status is Status.NOT_EVALUATED
    assert "switching_energy.e_on (maximum)" in finding.missing[0]


def test_junction_temperature_through_a_toleranced_foster_network(cell, write_design):
    # No r_th_jc: R_th = (0.1 + 0.4) x 1.1 = 0.55 K/W at the top of a 10 % scale; T_j = 90 + 0.55 x 16 = 98.8 degC.
    cell["devices"]["demo-sj650"]["thermal"] = {"foster": {"points": cell["devices"]["demo-sj650"]["thermal"]["foster"],
                                                           "tolerance": "10 %"}}
    finding = _finding(write_design(cell), "junction-temperature")
    assert finding.value - 273.15 == pytest.approx(98.8)


def test_soa_reads_the_largest_end_of_a_toleranced_foster_network(cell, write_design):
    # As test_soa_operating_point_by_hand, with Z_th 10 % higher: limit 0.8 x 60 / (0.13806 x 1.1) / 300.
    cell["switches"][0]["soa_points"] = [{"name": "inrush", "v_ds": "300 V", "i_d": "1 A", "pulse": "1 ms"}]
    thermal = cell["devices"]["demo-sj650"]["thermal"]
    thermal["foster"] = {"points": thermal["foster"], "min": 0.9, "max": 1.1}
    _quiet_loop(cell)
    finding = _finding(write_design(cell), "soa")
    assert finding.limit == pytest.approx(0.8 * 60 / (0.13806 * 1.1) / 300, rel=1e-4)
