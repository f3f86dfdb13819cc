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
