"""Per-technology factors in a policy file: applied to the switches of that technology only, named in their
findings, and refused with a located error when a key or value is wrong."""

import json

import pytest

from margincheck.checking import check_file

_POLICY = """\
format: margincheck-policy/1
name: mixed-leg
basis: illustrative
technologies:
  sic-mosfet:
    peak_voltage: 0.9
    tj: 10 K
"""


@pytest.fixture
def mixed_leg(tmp_path, write_design, contract_data):
    """The contract design with Q2 on a SiC copy of the device, under a policy with SiC factors."""
    (tmp_path / "p.yaml").write_text(_POLICY, encoding="utf-8")
    devices = contract_data["devices"]
    devices["demo-sic650"] = {**devices["demo-sj650"], "technology": "sic-mosfet"}
    contract_data["switches"][1]["device"] = "demo-sic650"
    contract_data["derating"] = "p.yaml"
    return write_design(contract_data)


def _finding(report, rule, subject):
    return next(finding for finding in report.findings if (finding.rule, finding.subject) == (rule, subject))


def test_technology_factor_applies_to_that_technology_only(mixed_leg):
    report = check_file(mixed_leg)
    si, sic = (_finding(report, "turn-off-overshoot", ref) for ref in ("Q1", "Q2"))
    assert (si.limit, sic.limit) == pytest.approx((0.8 * 650.0, 0.9 * 650.0))  # default 0.80; SiC override 0.9


def test_the_finding_names_the_technology_factor_that_applied(mixed_leg):
    report = check_file(mixed_leg)
    sic = _finding(report, "turn-off-overshoot", "Q2")
    assert "policy mixed-leg: its sic-mosfet factors applied to Q2 (peak_voltage 0.9, tj 10 K)" in sic.note
    assert "sic-mosfet factors" not in _finding(report, "turn-off-overshoot", "Q1").note


def test_the_json_report_lists_the_technology_factors(mixed_leg, run_cli):
    _, out, _ = run_cli("check", mixed_leg, "--format", "json")
    policy = json.loads(out)["policy"]
    assert policy["technologies"] == {"sic-mosfet": {"peak_voltage": 0.9, "tj": {"magnitude": 10.0, "units": "K"}}}


@pytest.mark.parametrize("entry, message", [
    ("  gan-hemt:\n    capacitor_voltage: 0.5",
     "p.yaml:6:5: technologies.gan-hemt.capacitor_voltage: unknown field; did you mean \"peak_voltage\"? (allowed "
     "here: cmti, gate_voltage, peak_voltage, pulse_current, short_circuit, soa, spurious_turn_on, steady_voltage, "
     "tj)"),
    ("  gan:\n    peak_voltage: 0.9",
     "p.yaml:5:3: technologies: expected one of si-mosfet, sic-mosfet, gan-hemt, igbt; got text (\"gan\")"),
    ("  gan-hemt:\n    peak_voltage: 1.5",
     "p.yaml:6:19: technologies.gan-hemt.peak_voltage: 1.5 is greater than the maximum of 1"),
    ("  gan-hemt:\n    tj: -3 K",
     "p.yaml:6:9: technologies.gan-hemt.tj: must not be negative (got \"-3 K\"): the junction limit is t_j_max - "
     "tj, and a policy may only keep it at or below the rating"),
])
def test_a_bad_technology_entry_is_a_located_error(tmp_path, write_design, contract_data, run_cli, entry, message):
    (tmp_path / "p.yaml").write_text(f"format: margincheck-policy/1\nname: p\nbasis: b\ntechnologies:\n{entry}\n",
                                     encoding="utf-8")
    code, out, err = run_cli("check", write_design(contract_data), "--policy", tmp_path / "p.yaml")
    assert (code, out) == (2, "")
    assert err.strip().endswith(message), err
