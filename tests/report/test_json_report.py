"""The JSON report object of design.md section 6 (a contract)."""

import json

import pytest

from tests.conftest import CONTRACT_FILE


@pytest.fixture
def report(run_cli):
    code, out, err = run_cli("check", CONTRACT_FILE, "--format", "json")
    assert code == 1, err
    return json.loads(out)


def test_top_level_keys(report):
    assert report["format"] == "margincheck-report/1"
    assert report["tool"]["name"] == "margincheck"
    assert report["design"]["title"] == "Pump-drive inverter leg, bench build (illustrative)"
    assert report["design"]["revision"] == "B"
    assert len(report["design"]["sha256"]) == 64
    assert report["policy"]["name"] == "default"
    assert report["policy"]["basis"].startswith("common practice")
    assert report["verdict"] == "fail"


def test_the_q1_overshoot_finding(report):
    """The simulated peak (checked against the independent Radau reference in tests/rules/test_contract_design.py),
    in the JSON contract's shape."""
    finding = next(f for f in report["findings"]
                   if (f["rule"], f["subject"]) == ("turn-off-overshoot", "Q1"))
    assert finding["status"] == "fail"
    assert finding["value"]["units"] == "V"
    assert finding["value"]["magnitude"] == pytest.approx(784.15, abs=0.5)
    assert finding["limit"] == {"magnitude": 520.0, "units": "V"}
    assert finding["margin"] == pytest.approx((520.0 - finding["value"]["magnitude"]) / 520.0, abs=1e-6)
    assert finding["corner"]["bus_voltage"] == "420 V"
    assert finding["corner"]["loop_inductance"] == "30 nH"
    assert finding["basis"].startswith("V_pk = max v_ds of the simulated turn-off edge")
    assert finding["details"]["first_order_peak"]["units"] == "V"
    assert finding["source"] and finding["caution"]


def test_cautions_carry_the_stored_energy(report):
    assert "8.82 J" in report["cautions"][0]
    assert any("qualified review" in caution for caution in report["cautions"])


def test_not_evaluated_has_null_value_and_names_what_is_missing(run_cli):
    from tests.conftest import EXAMPLES

    code, out, _ = run_cli("check", EXAMPLES / "charger-leg-draft.yaml", "--format", "json")
    findings = json.loads(out)["findings"]
    finding = next(f for f in findings if f["rule"] == "turn-off-current")
    assert (code, finding["status"], finding["value"], finding["margin"]) == (1, "not-evaluated", None, None)
    assert "conditions.turn_off_current" in finding["missing"]
