"""Building the typed design: device files, policy files, intervals, semantic checks."""

import math

import pytest

from margincheck.design import load_design
from margincheck.errors import InputError
from margincheck.policy import DEFAULT_POLICY
from tests.conftest import CONTRACT_FILE, EXAMPLES


def test_contract_design_in_si_units():
    design = load_design(CONTRACT_FILE)
    assert (design.conditions.bus_voltage.low, design.conditions.bus_voltage.high) == pytest.approx((380.0, 420.0))
    assert math.isnan(design.conditions.turn_off_current.low)
    assert design.conditions.case_temperature.low == pytest.approx(253.15)
    q1 = design.switches[0]
    assert (q1.gate_drive.off.low, q1.gate_drive.off.high) == pytest.approx((-3.15, -2.85))
    assert q1.device.t_j_max == pytest.approx(423.15)
    assert design.policy is DEFAULT_POLICY


def test_device_file_and_its_hash_are_recorded():
    design = load_design(EXAMPLES / "solar-string-sic-leg.yaml")
    roles = {item.role: item for item in design.inputs}
    assert roles["device"].name.endswith("devices/demo-sic1200.yaml")
    assert design.switches[0].device.v_ds_max == 1200.0


def test_policy_file_overrides_only_its_keys():
    design = load_design(EXAMPLES / "gan-48v-stage.yaml")
    assert design.policy.name == "bench-lab"
    assert design.policy.peak_voltage == 0.90
    assert design.policy.steady_voltage == DEFAULT_POLICY.steady_voltage


def test_policy_option_replaces_the_designs_own(monkeypatch):
    monkeypatch.chdir(EXAMPLES)
    assert load_design(EXAMPLES / "gan-48v-stage.yaml", "default").policy is DEFAULT_POLICY
    assert load_design(CONTRACT_FILE, "policies/bench-lab.yaml").policy.name == "bench-lab"


def test_problems_in_a_device_file_are_located_in_that_file(tmp_path, write_design, contract_data):
    (tmp_path / "dev.yaml").write_text("technology: si-mosfet\nratings:\n  v_ds_max: 650\n", encoding="utf-8")
    contract_data["devices"]["demo-sj650"] = "dev.yaml"
    with pytest.raises(InputError) as raised:
        load_design(write_design(contract_data))
    messages = [str(problem) for problem in raised.value.problems]
    assert any(message.endswith("dev.yaml:3:13: ratings.v_ds_max: expected a voltage such as \"400 V\", got the "
                                "bare number 650 (a unit is required)") for message in messages), messages


def test_policy_file_errors_are_located(tmp_path, write_design, contract_data):
    (tmp_path / "p.yaml").write_text("format: margincheck-policy/1\nname: x\nbasis: y\npeak_voltage: 1.2\n",
                                     encoding="utf-8")
    contract_data["derating"] = "p.yaml"
    with pytest.raises(InputError, match=r"p.yaml:4:15: peak_voltage: "):
        load_design(write_design(contract_data))


def test_duplicate_refs_are_refused(write_design, contract_data):
    contract_data["switches"][1]["ref"] = "Q1"
    with pytest.raises(InputError, match=r'switches\[1\].ref: ref "Q1" is used twice'):
        load_design(write_design(contract_data))


def test_tolerance_and_min_max_together_are_refused(write_design, contract_data):
    contract_data["conditions"]["bus_voltage"] = {"nominal": "400 V", "tolerance": "5 %", "max": "430 V"}
    with pytest.raises(InputError, match="give either a tolerance or min/max, not both"):
        load_design(write_design(contract_data))


@pytest.mark.parametrize("field, value, message", [
    (("commutation_loop", "inductance"), "-5 nH", "must be greater than zero"),
    (("conditions", "bus_voltage"), "0 V", "must be greater than zero"),
])
def test_impossible_signs_are_refused(write_design, contract_data, field, value, message):
    contract_data[field[0]][field[1]] = value
    with pytest.raises(InputError, match=message):
        load_design(write_design(contract_data))


# Toleranced device data (issue 12): every form builds its interval, the distribution carried for statistics.
_CURVE = [{"v_ds": "0 V", "capacitance": "1 nF"}, {"v_ds": "400 V", "capacitance": "90 pF"}]
_FOSTER = [{"r": "0.1 K/W", "tau": "100 us"}, {"r": "0.4 K/W", "tau": "10 ms"}]
_NAN = math.nan
TOLERANCED_DEVICE_DATA = {
    "normal around the nominal": (
        ("characteristics", "transconductance"), {"nominal": "20 S", "tolerance": "20 %", "distribution": "normal",
                                                  "sigmas": 3},
        lambda device: device.transconductance, (16.0, 20.0, 24.0, "normal", 3.0)),
    "normal with unequal sides": (
        ("characteristics", "v_gs_th"), {"min": "3 V", "nominal": "3.5 V", "max": "4.5 V", "distribution": "normal",
                                         "sigmas": 2},
        lambda device: device.v_gs_th, (3.0, 3.5, 4.5, "normal", 2.0)),
    "normal between min and max (centred on their middle)": (
        ("characteristics", "c_iss"), {"min": "2 nF", "max": "3 nF", "distribution": "normal", "sigmas": 3},
        lambda device: device.c_iss, (2e-9, _NAN, 3e-9, "normal", 3.0)),
    "uniform stated": (
        ("characteristics", "c_iss"), {"min": "2 nF", "max": "3 nF", "distribution": "uniform"},
        lambda device: device.c_iss, (2e-9, _NAN, 3e-9, "uniform", None)),
    "capacitance curve as a plain list": (
        ("characteristics", "c_oss"), _CURVE, lambda device: device.c_oss.scale, (1.0, 1.0, 1.0, "uniform", None)),
    "capacitance curve with a tolerance": (
        ("characteristics", "c_oss"), {"points": _CURVE, "tolerance": "10 %"},
        lambda device: device.c_oss.scale, (0.9, 1.0, 1.1, "uniform", None)),
    "capacitance curve with factors": (
        ("characteristics", "c_rss"), {"points": _CURVE, "min": 0.8, "max": "120 %", "distribution": "uniform"},
        lambda device: device.c_rss.scale, (0.8, _NAN, 1.2, "uniform", None)),
    "capacitance curve, normal": (
        ("characteristics", "c_oss"), {"points": _CURVE, "min": 0.9, "nominal": 1, "max": 1.2,
                                       "distribution": "normal", "sigmas": 3},
        lambda device: device.c_oss.scale, (0.9, 1.0, 1.2, "normal", 3.0)),
    "Miller charge": (
        ("characteristics", "q_gd"), {"charge": {"nominal": "20 nC", "tolerance": "10 %"}, "v_ds": "400 V"},
        lambda device: device.c_rss.scale, (45e-12, 50e-12, 55e-12, "uniform", None)),
    "recovery charge": (
        ("characteristics", "reverse_recovery"), {"q_rr": {"nominal": "100 nC", "tolerance": "30 %"},
                                                  "softness": 1},
        lambda device: device.recovery.charge, (70e-9, 100e-9, 130e-9, "uniform", None)),
    "switching energy": (
        ("characteristics", "switching_energy"), {"e_on": {"nominal": "100 uJ", "tolerance": "20 %"},
                                                  "e_off": {"max": "60 uJ"}, "v_ds": "400 V", "i_d": "20 A"},
        lambda device: device.switching_energy.e_on, (80e-6, 100e-6, 120e-6, "uniform", None)),
    "hot on-resistance": (
        ("characteristics", "r_ds_on_hot"), {"value": {"nominal": "0.2 ohm", "tolerance": "10 %",
                                                       "distribution": "normal", "sigmas": 3}, "t_j": "150 degC"},
        lambda device: device.r_ds_on.hot_value, (0.18, 0.2, 0.22, "normal", 3.0)),
    "on-resistance coefficient": (
        ("characteristics", "r_ds_on_temperature_coefficient"), {"min": "0.5 %/K", "max": "0.7 %/K"},
        lambda device: device.r_ds_on.coefficient, (0.005, _NAN, 0.007, "uniform", None)),
    "threshold coefficient": (
        ("characteristics", "v_gs_th_temperature_coefficient"), {"nominal": "-5 mV/K", "tolerance": "20 %"},
        lambda device: device.v_gs_th_temperature_coefficient, (-6e-3, -5e-3, -4e-3, "uniform", None)),
    "Foster network with a tolerance": (
        ("thermal", "foster"), {"points": _FOSTER, "tolerance": "15 %"},
        lambda device: device.foster_scale, (0.85, 1.0, 1.15, "uniform", None)),
    "Z_th curve with factors": (
        ("thermal", "z_th_curve"), {"points": [{"time": "10 us", "z_th": "0.01 K/W"},
                                               {"time": "1 ms", "z_th": "0.1 K/W"},
                                               {"time": "100 ms", "z_th": "0.5 K/W"}], "min": 0.9, "max": 1.3},
        lambda device: device.foster_scale, (0.9, _NAN, 1.3, "uniform", None)),
    "junction-to-case resistance": (
        ("thermal", "r_th_jc"), {"nominal": "0.5 K/W", "tolerance": "10 %", "distribution": "normal", "sigmas": 3},
        lambda device: device.r_th_jc, (0.45, 0.5, 0.55, "normal", 3.0)),
}


@pytest.mark.parametrize("where, written, read, expected", TOLERANCED_DEVICE_DATA.values(),
                         ids=TOLERANCED_DEVICE_DATA.keys())
def test_toleranced_device_data_builds_its_interval(contract_data, write_design, where, written, read, expected):
    device = contract_data["devices"]["demo-sj650"]
    device["characteristics"]["r_ds_on"] = {"value": "0.1 ohm", "t_j": "25 degC", "v_gs": "10 V"}
    device.setdefault(where[0], {})[where[1]] = written
    if where[1] == "q_gd":
        del device["characteristics"]["c_rss"]  # q_gd stands in for a c_rss that is not given
    interval = read(load_design(write_design(contract_data)).switches[0].device)
    assert (interval.low, interval.nominal, interval.high) == pytest.approx(expected[:3], rel=1e-9, nan_ok=True)
    assert (interval.distribution, interval.sigmas) == expected[3:]


def test_sigmas_belong_to_a_normal_distribution(contract_data, write_design):
    contract_data["devices"]["demo-sj650"]["characteristics"]["c_iss"] = {"min": "2 nF", "max": "3 nF", "sigmas": 3}
    with pytest.raises(InputError, match=r"c_iss\.sigmas: sigmas belongs to a normal distribution"):
        load_design(write_design(contract_data))


def test_recovery_charge_needs_its_maximum(contract_data, write_design):
    contract_data["devices"]["demo-sj650"]["characteristics"]["reverse_recovery"] = {
        "q_rr": {"min": "50 nC"}, "softness": 1}
    with pytest.raises(InputError, match=r"reverse_recovery\.q_rr: needs its maximum"):
        load_design(write_design(contract_data))


def test_a_curve_scale_that_reaches_zero_is_refused(contract_data, write_design):
    contract_data["devices"]["demo-sj650"]["characteristics"]["c_oss"] = {"points": _CURVE, "tolerance": "100 %"}
    with pytest.raises(InputError, match=r"c_oss\.tolerance: the tolerance takes the minimum to 0"):
        load_design(write_design(contract_data))
