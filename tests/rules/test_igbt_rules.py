"""IGBTs: the same rule ids read V_CE/V_GE/I_C ratings, the junction temperature from V_CE(sat), and device data of
the wrong technology refused. Expected values are hand arithmetic written beside each case."""

import copy

import pytest

from margincheck.checking import check_file
from margincheck.design import load_design
from margincheck.findings import Status
from margincheck.loading import load_document
from tests.conftest import EXAMPLES

IGBT_EXAMPLE = EXAMPLES / "igbt-motor-drive-leg.yaml"
DEVICE = "demo-fs1200"


@pytest.fixture
def igbt_data() -> dict:
    """The IGBT example as plain data (a fresh copy each time)."""
    return copy.deepcopy(load_document(IGBT_EXAMPLE).data)


def _finding(path, rule, subject="Q1"):
    return next(f for f in check_file(path).findings if (f.rule, f.subject) == (rule, subject))


def test_a_v_ce_peak_beyond_the_derated_v_ce_max_fails(igbt_data, write_design):
    # The example's simulated turn-off peak is some 850 V; v_ce_max 1000 V gives 0.8 x 1000 = 800 V.
    igbt_data["devices"][DEVICE]["ratings"]["v_ce_max"] = "1000 V"
    finding = _finding(write_design(igbt_data), "turn-off-overshoot")
    assert finding.status is Status.FAIL
    assert finding.limit == pytest.approx(800.0)
    assert finding.value > 800.0
    assert "v_ce_max" in finding.basis and "v_ds" not in finding.basis


def test_ratings_are_read_and_named_as_the_igbt_names_them(igbt_data, write_design):
    path = write_design(igbt_data)
    findings = {(f.rule, f.subject): f for f in check_file(path).findings}
    assert findings["bus-voltage", "Q1"].limit == pytest.approx(0.75 * 1200.0)       # steady_voltage x v_ce_max
    assert findings["turn-off-current", "Q1"].limit == pytest.approx(0.80 * 300.0)   # pulse_current x i_c_pulse
    assert findings["gate-on-voltage", "Q1"].limit == pytest.approx(0.90 * 20.0)     # gate_voltage x v_ge_max
    assert "v_ge_max" in findings["gate-on-voltage", "Q1"].basis
    assert findings["gate-off-voltage", "Q1"].limit == pytest.approx(0.90 * -20.0)   # gate_voltage x v_ge_min


def test_a_missing_rating_is_named_as_the_igbt_names_it(igbt_data, write_design):
    del igbt_data["devices"][DEVICE]["ratings"]["i_c_pulse"]
    finding = _finding(write_design(igbt_data), "turn-off-current")
    assert finding.status is Status.NOT_EVALUATED
    assert finding.missing == (f"devices.{DEVICE}.ratings.i_c_pulse",)


@pytest.fixture
def hand_case(igbt_data):
    """Exact values so that Eq. (5)-(7) of margincheck.physics.thermal stay short: no switching loss, case 100 degC,
    R_th,jc 0.5 K/W, I_rms 20 A below the datasheet's 100 A, V_CE(sat) 2.0 V at 25 degC and 2.5 V at 150 degC."""
    data = igbt_data
    data["conditions"]["case_temperature"] = "100 degC"
    device = data["devices"][DEVICE]
    device["thermal"] = {"r_th_jc": "0.5 K/W"}
    device["characteristics"].update({
        "v_ce_sat": {"value": "2.0 V", "i_c": "100 A", "t_j": "25 degC", "v_ge": "15 V"},
        "v_ce_sat_hot": {"value": "2.5 V", "t_j": "150 degC"},
        "switching_energy": {"e_on": "0 mJ", "e_off": "0 mJ", "v_ce": "600 V", "i_c": "100 A"}})
    for switch in data["switches"]:
        switch["rms_current"] = "20 A"
    return data


def test_junction_temperature_from_v_ce_sat_by_hand(hand_case, write_design):
    # k = (2.5 - 2.0)/125 = 4 mV/K; at the case: V = 2.0 + 0.004 x 75 = 2.3 V, P = 2.3 x max(20, 400/100) = 46 W;
    # dP/dT = 0.004 x 20 = 0.08 W/K; T_j = 100 + 0.5 x 46/(1 - 0.5 x 0.08) = 100 + 23.9583 degC.
    finding = _finding(write_design(hand_case), "junction-temperature")
    assert finding.value - 273.15 == pytest.approx(100.0 + 23.0 / 0.96)
    assert finding.details["saturation_voltage_at_t_j"].value == pytest.approx(2.0 + 0.004 * (75.0 + 23.0 / 0.96))
    assert "V_CE(sat)" in finding.basis
    assert finding.status is Status.PASS


def test_junction_temperature_above_the_datasheet_current_uses_the_resistive_line(hand_case, write_design):
    # I_rms 150 A: P = V x max(150, 150^2/100) = V x 225 A; at the case V = 2.3 V: P = 517.5 W, dP/dT = 0.9 W/K;
    # with R_th 0.001 K/W: T_j = 100 + 0.001 x 517.5/(1 - 0.0009).
    hand_case["devices"][DEVICE]["thermal"] = {"r_th_jc": "0.001 K/W"}
    for switch in hand_case["switches"]:
        switch["rms_current"] = "150 A"
    finding = _finding(write_design(hand_case), "junction-temperature")
    assert finding.value - 273.15 == pytest.approx(100.0 + 0.5175 / (1 - 0.0009))


def test_thermal_runaway_of_a_rising_v_ce_sat_fails(hand_case, write_design):
    # dP/dT = 0.08 W/K: with R_th 12.5 K/W, R_th x dP/dT = 1: no equilibrium.
    hand_case["devices"][DEVICE]["thermal"] = {"r_th_jc": "12.5 K/W"}
    finding = _finding(write_design(hand_case), "junction-temperature")
    assert finding.status is Status.FAIL
    assert "thermal runaway" in finding.note


def test_v_ce_sat_stated_above_the_drive_level_is_not_evaluated(hand_case, write_design):
    hand_case["devices"][DEVICE]["characteristics"]["v_ce_sat"]["v_ge"] = "18 V"
    finding = _finding(write_design(hand_case), "junction-temperature")
    assert finding.status is Status.NOT_EVALUATED
    assert finding.missing == (f"devices.{DEVICE}.characteristics.v_ce_sat at the drive's on-level",)


def test_an_igbt_without_a_temperature_model_is_not_evaluated(hand_case, write_design):
    del hand_case["devices"][DEVICE]["characteristics"]["v_ce_sat_hot"]
    finding = _finding(write_design(hand_case), "junction-temperature")
    assert finding.status is Status.NOT_EVALUATED
    assert "v_ce_sat (with v_ce_sat_hot or v_ce_sat_temperature_coefficient)" in finding.missing[0]


def test_an_igbt_without_tail_data_has_no_simulated_switching_energy(hand_case, write_design):
    characteristics = hand_case["devices"][DEVICE]["characteristics"]
    del characteristics["switching_energy"], characteristics["tail"]
    finding = _finding(write_design(hand_case), "junction-temperature")
    assert finding.status is Status.NOT_EVALUATED
    assert "characteristics.tail" in finding.missing[0]


@pytest.mark.parametrize(("technology_of", "section", "field", "value", "message"), [
    ("mosfet", "ratings", "v_ce_max", "650 V",
     "an IGBT field, but this device is technology si-mosfet (write v_ds_max)"),
    ("mosfet", "characteristics", "v_ce_sat",
     {"value": "2 V", "i_c": "10 A", "t_j": "25 degC", "v_ge": "15 V"}, "an IGBT field, but this device is technology "
                                                                         "si-mosfet"),
    ("igbt", "ratings", "v_ds_max", "1200 V",
     "a MOSFET/HEMT field, but this device is technology igbt (write v_ce_max)"),
    ("igbt", "characteristics", "r_ds_on", {"value": "0.1 ohm", "t_j": "25 degC", "v_gs": "15 V"},
     "a MOSFET/HEMT field, but this device is technology igbt"),
])
def test_a_field_of_the_other_technology_is_one_located_line_and_exit_2(
        run_cli, write_design, contract_data, igbt_data, technology_of, section, field, value, message):
    data, device = (contract_data, "demo-sj650") if technology_of == "mosfet" else (igbt_data, DEVICE)
    data["devices"][device][section][field] = value
    code, out, err = run_cli("check", write_design(data))
    assert code == 2, out + err
    lines = [line for line in err.splitlines() if line.strip()]
    assert any("leg.yaml:" in line and f"devices.{device}.{section}.{field}: {message}" in line for line in lines), err


def test_an_igbt_without_v_ce_max_is_told_so(run_cli, write_design, igbt_data):
    del igbt_data["devices"][DEVICE]["ratings"]["v_ce_max"]
    code, _, err = run_cli("check", write_design(igbt_data))
    assert code == 2
    assert f"devices.{DEVICE}.ratings.v_ce_max: required field is missing" in err


def test_a_switching_energy_of_an_igbt_needs_its_v_ce(run_cli, write_design, igbt_data):
    energy = igbt_data["devices"][DEVICE]["characteristics"]["switching_energy"]
    energy["v_ds"] = energy.pop("v_ce")
    code, _, err = run_cli("check", write_design(igbt_data))
    assert code == 2
    assert f"devices.{DEVICE}.characteristics.switching_energy.v_ce: required field is missing" in err
    assert "switching_energy.v_ds: a MOSFET/HEMT field" in err


@pytest.mark.parametrize(("structure", "hot", "refused"), [
    ("field-stop", "1.6 V", True),            # V_CE(sat) falling, which a field-stop IGBT's does not
    ("non-punch-through", "1.6 V", True),
    ("punch-through", "2.5 V", True),         # rising, which a punch-through IGBT's does not (at low current)
    ("punch-through", "1.6 V", False),
    ("field-stop", "2.5 V", False),
])
def test_a_v_ce_sat_trend_against_the_structure_is_refused(run_cli, write_design, igbt_data, structure, hot, refused):
    characteristics = igbt_data["devices"][DEVICE]["characteristics"]
    characteristics.update({"structure": structure,
                            "v_ce_sat": {"value": "2.0 V", "i_c": "100 A", "t_j": "25 degC", "v_ge": "15 V"},
                            "v_ce_sat_hot": {"value": hot, "t_j": "150 degC"}})
    code, _, err = run_cli("validate", write_design(igbt_data))
    assert (code == 2) is refused, err
    if refused:
        assert f"devices.{DEVICE}.characteristics.v_ce_sat_hot.value: V_CE(sat)" in err
        assert structure in err


def test_a_tail_given_twice_is_refused(run_cli, write_design, igbt_data):
    igbt_data["devices"][DEVICE]["characteristics"]["tail"] |= {"charge": "5 uC", "i_c": "100 A"}
    code, _, err = run_cli("validate", write_design(igbt_data))
    assert code == 2
    assert f"devices.{DEVICE}.characteristics.tail: give fraction, or charge with i_c" in err


def test_a_tail_charge_gives_its_fraction(write_design, igbt_data):
    # Q_tail = fraction x I x tau: 5 uC at 100 A with 250 ns is a fraction of 0.2, the example's own.
    tail = igbt_data["devices"][DEVICE]["characteristics"]["tail"]
    del tail["fraction"]
    tail |= {"charge": "5 uC", "i_c": "100 A"}
    device = load_design(write_design(igbt_data)).switches[0].device
    assert device.tail.fraction == pytest.approx(0.2)
