"""Every bundled example through the command line, with its expected verdict (acceptance tests)."""

import json

import pytest

from tests.conftest import EXAMPLES

EXPECTED = {
    "pump-drive-leg.yaml": ("fail", 1),          # the design.md contract file: Q1 overshoot and C1 fail
    "solar-string-sic-leg.yaml": ("fail", 1),    # the README's default example: the idle gate's negative spike
    "gan-48v-stage.yaml": ("pass", 0),           # passes under its bench-lab policy file
    "charger-leg-draft.yaml": ("incomplete", 1),  # device characteristics not yet known
    "bench-leg-first-pulse.yaml": ("fail", 1),   # the bring-up example: the shared source's gate-off spike
    "igbt-motor-drive-leg.yaml": ("marginal", 0),  # an IGBT leg: its junction temperature within 5 % of the limit
}


def test_every_example_has_an_expected_verdict():
    assert sorted(path.name for path in EXAMPLES.glob("*.yaml")) == sorted(EXPECTED)


@pytest.mark.parametrize("name", EXPECTED)
def test_example_verdict_through_the_cli(run_cli, name):
    verdict, code = EXPECTED[name]
    text_code, text, text_err = run_cli("check", EXAMPLES / name)
    assert text_code == code, text + text_err
    assert f" {verdict.upper()} " in text, text
    json_code, out, _ = run_cli("check", EXAMPLES / name, "--format", "json")
    assert (json_code, json.loads(out)["verdict"]) == (code, verdict), out


@pytest.mark.parametrize("name", EXPECTED)
def test_example_validates(run_cli, name):
    code, out, err = run_cli("validate", EXAMPLES / name)
    assert code == 0, err
    assert "valid margincheck/1 design" in out


def test_default_example_has_a_marginal_finding(run_cli):
    _, out, _ = run_cli("check", EXAMPLES / "solar-string-sic-leg.yaml", "--format", "json")
    assert any(finding["status"] == "marginal" for finding in json.loads(out)["findings"])


def test_schema_command_prints_the_design_schema(run_cli):
    code, out, _ = run_cli("schema")
    assert code == 0
    assert json.loads(out)["$schema"] == "https://json-schema.org/draft/2020-12/schema"
