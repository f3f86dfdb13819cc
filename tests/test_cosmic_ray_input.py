"""The cosmic-ray fields of the design, device and policy files: bad values are one located line and exit code 2
(through the command line, check and validate), good ones validate."""

import json

import pytest

from tests.conftest import CONTRACT_FILE

#: The contract file with an altitude (line 12) and cosmic-ray constants on its device (line 31).
TEXT = CONTRACT_FILE.read_text(encoding="utf-8").replace(
    "  case_temperature: {min: -20 degC, max: 90 degC}\n",
    "  case_temperature: {min: -20 degC, max: 90 degC}\n  altitude: {max: 2000 m}\n").replace(
    "      r_g_internal: 1 ohm\n",
    "      r_g_internal: 1 ohm\n    cosmic_ray: {c1: 300 V, c2: 240 V, c3: 1000 FIT, reference: invented}\n").replace(
    "derating: default ", "derating: policy.yaml")
POLICY = "format: margincheck-policy/1\nname: t\nbasis: a test policy\ncosmic_ray_fit_budget: 2000 FIT\n"

# (file, edit, the exact line printed); columns counted by hand, e.g. "1000 FIT" starts at column 4 + 39 + 1 = 44.
CASES = {
    "altitude in volts": (
        "leg.yaml", ("{max: 2000 m}", "{max: 2000 V}"),
        'leg.yaml:12:19: conditions.altitude.max: expected an altitude such as "2000 m", got "2000 V"'),
    "failure rate without a unit": (
        "leg.yaml", ("c3: 1000 FIT", "c3: 1000"),
        'leg.yaml:31:44: devices.demo-sj650.cosmic_ray.c3: expected a failure rate such as "100 FIT", got the bare '
        "number 1000 (a unit is required)"),
    "negative constant": (
        "leg.yaml", ("c2: 240 V", "c2: -240 V"),
        "leg.yaml:31:33: devices.demo-sj650.cosmic_ray.c2: must be greater than zero"),
    "constants without their reference": (
        "leg.yaml", (", reference: invented", ""),
        "leg.yaml:31:5: devices.demo-sj650.cosmic_ray.reference: required field is missing"),
    "unknown constant": (
        "leg.yaml", ("reference: invented", "c4: 1 V, reference: invented"),
        "leg.yaml:31:54: devices.demo-sj650.cosmic_ray.c4: unknown field"),
    "budget without a unit": (
        "policy.yaml", ("2000 FIT", "2000"),
        'policy.yaml:4:24: cosmic_ray_fit_budget: expected a failure rate such as "100 FIT", got the bare number 2000 '
        "(a unit is required)"),
    "budget of zero": (
        "policy.yaml", ("2000 FIT", "0 FIT"),
        'policy.yaml:4:24: cosmic_ray_fit_budget: must be greater than zero (got "0 FIT")'),
}


@pytest.fixture
def files(tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)

    def write(design: str = TEXT, policy: str = POLICY) -> None:
        (tmp_path / "leg.yaml").write_text(design, encoding="utf-8")
        (tmp_path / "policy.yaml").write_text(policy, encoding="utf-8")

    return write


@pytest.mark.parametrize("name, edit, expected", CASES.values(), ids=CASES.keys())
def test_bad_cosmic_ray_field_is_one_located_line_and_exit_2(files, run_cli, name, edit, expected):
    old, new = edit
    text = {"leg.yaml": TEXT, "policy.yaml": POLICY}[name]
    assert old in text, old
    files(**{"design" if name == "leg.yaml" else "policy": text.replace(old, new, 1)})
    for command in ("check", "validate"):
        code, out, err = run_cli(command, "leg.yaml")
        assert (code, out) == (2, ""), err
        assert err.splitlines()[0].startswith(expected), err
        assert "Traceback" not in err


def test_good_cosmic_ray_fields_validate_and_check(files, run_cli):
    files()
    assert run_cli("validate", "leg.yaml")[0] == 0
    code, out, _ = run_cli("check", "leg.yaml", "--format", "json")
    report = json.loads(out)
    fit = 1e-9 / 3600.0  # one failure in 1e9 device-hours, per second: JSON gives SI magnitudes
    assert report["policy"]["cosmic_ray_fit_budget"] == {"magnitude": pytest.approx(2000 * fit), "units": "1/s"}
    # 1000 FIT x e^(240/(300 - 420)) x 4.5203 (2000 m) x 2.5740 (-20 degC) = 1574.5 FIT per switch
    rates = {f["subject"]: (f["status"], f["value"]["magnitude"] / fit) for f in report["findings"]
             if f["rule"] == "cosmic-ray-fit"}
    assert rates == {"Q1": ("pass", pytest.approx(1574.5, rel=1e-4)), "Q2": ("pass", pytest.approx(1574.5, rel=1e-4))}
