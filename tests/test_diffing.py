"""``margincheck diff A B`` through the command line: pairing, order by loss of margin, exit codes, the three
formats, and bad input. Each design is checked once per module (the checks are memoised), since one check of
the contract design costs seconds."""

import json
import re

import pytest

from margincheck import diffing
from margincheck.cli import main
from margincheck.diffing import flatten
from tests.conftest import CONTRACT_FILE

CHANGED_R_OFF = "switches.Q2.gate_drive.r_off"


@pytest.fixture(scope="module")
def memoised_checks():
    """``check_file`` in margincheck.diffing answered once per design file and override list."""
    original, results = diffing.check_file, {}

    def check_once(path, **options):
        key = (str(path), tuple(item.text for item in options["overrides"]))
        if key not in results:
            results[key] = original(path, **options)
        return results[key]

    with pytest.MonkeyPatch.context() as patch:
        patch.setattr(diffing, "check_file", check_once)
        yield


@pytest.fixture(scope="module")
def designs(tmp_path_factory):
    """The contract design (A) and a copy (B) whose Q2 turns off through 2.2 ohm instead of 10 ohm."""
    folder = tmp_path_factory.mktemp("diff")
    text = CONTRACT_FILE.read_text(encoding="utf-8")
    changed = text.replace("r_on: 10 ohm, r_off: 10 ohm}", "r_on: 10 ohm, r_off: 2.2 ohm}")
    assert changed != text
    (folder / "a.yaml").write_text(text, encoding="utf-8")
    (folder / "b.yaml").write_text(changed, encoding="utf-8")
    return folder / "a.yaml", folder / "b.yaml"


@pytest.fixture
def diff(memoised_checks, designs, capsys):
    def run(*arguments: str) -> tuple[int, str, str]:
        code = main(["diff", *map(str, designs), *arguments])
        captured = capsys.readouterr()
        return code, captured.out, captured.err

    return run


def test_json_orders_by_loss_of_margin_and_names_the_changed_field(diff):
    code, out, _ = diff("--format", "json")
    result = json.loads(out)
    assert out.isascii() and result["format"] == "margincheck-diff/1"
    assert (code, result["exit_code"], result["regressions"]) == (0, 0, 0)
    assert result["changed_inputs"] == [{"path": CHANGED_R_OFF, "a": "10 ohm", "b": "2.2 ohm"}]
    changed = [row for row in result["findings"] if row["change"] != "unchanged"]
    losses = [row["margin_change"] for row in changed]
    assert losses == sorted(losses) and losses[0] < 0 < losses[-1]
    # the faster Q2 turn-off swings its gate further: its gate-off level loses the most margin
    assert (changed[0]["subject"], changed[0]["rule"], changed[0]["change"]) == ("Q2", "gate-off-voltage", "worse")
    first = changed[0]
    assert first["margin_change"] == pytest.approx(first["margin"]["b"] - first["margin"]["a"], abs=1e-9)
    assert len(result["findings"]) == 27 and "a.yaml (A): LETHAL VOLTAGE" in result["cautions"][0]


def test_exit_1_when_b_adds_a_not_evaluated_finding(diff, designs):
    # Q1 turning off through 10 ohm: its SOA transient can no longer be evaluated (fail -> not-evaluated), so
    # B has a not-evaluated finding that A did not have. --set-b applies to B alone, here design A itself.
    code, out, _ = diff("--format", "json", "--set-b", "switches.Q1.gate_drive.r_off=10 ohm")
    result = json.loads(out)
    first = result["findings"][0]
    assert (code, result["exit_code"]) == (1, 1)
    assert (first["subject"], first["rule"], first["regression"]) == ("Q1", "soa", True)
    assert first["status"] == {"a": "fail", "b": "not-evaluated"}
    assert result["b"]["overrides"] == [{"set": "switches.Q1.gate_drive.r_off=10 ohm",
                                         "path": "switches[0].gate_drive.r_off", "file_value": "2 ohm"}]
    assert result["a"]["overrides"] == []


def test_markdown_is_a_well_formed_table_with_the_cautions(diff):
    code, out, _ = diff("--format", "markdown")
    assert code == 0
    rows = [line for line in out.splitlines() if line.startswith("|")]
    assert rows[0] == "| change | subject | rule | status | value | margin |" and rows[1] == "|---|---|---|---|---|---|"
    assert all(len(re.findall(r"(?<!\\)\|", row)) == 7 for row in rows), rows
    assert rows[2].startswith("| WORSE | Q2 | gate-off-voltage | FAIL |")
    assert f"- {CHANGED_R_OFF.replace('_', chr(92) + '_')}: 10 ohm -> 2.2 ohm" in out
    assert "#### Cautions" in out and "LETHAL VOLTAGE" in out


def test_text_fits_a_ci_log(diff):
    code, out, _ = diff()
    assert code == 0
    assert max(len(line) for line in out.splitlines()) <= 80, out
    assert "result       B adds no fail and no not-evaluated finding (exit code 0)" in out
    assert f"{CHANGED_R_OFF}: 10 ohm -> 2.2 ohm" in out and "cautions" in out


def test_set_applies_to_both_designs_and_a_bad_one_is_located(diff, designs):
    code, out, err = diff("--set", "switches.Q2.gate_drive.r_off=2.2 V")
    names = [str(path) for path in designs]
    assert (code, out) == (2, "")
    assert err.splitlines() == [f"{name} (--set switches.Q2.gate_drive.r_off=2.2 V): switches[1].gate_drive.r_off: "
                                'expected a resistance such as "2.2 ohm", got "2.2 V"' for name in names]


def test_missing_design_is_exit_2(run_cli, designs, tmp_path):
    code, _, err = run_cli("diff", designs[0], tmp_path / "nope.yaml")
    assert code == 2 and "nope.yaml: cannot read the file" in err


def test_flatten_addresses_list_entries_as_set_does():
    leaves = flatten({"switches": [{"ref": "Q1", "gate_drive": {"r_off": "2 ohm"}}],
                      "legs": [{"a": 1}], "points": ["1 V", "2 V"]})
    assert leaves == {"switches.Q1.ref": "Q1", "switches.Q1.gate_drive.r_off": "2 ohm", "legs[0].a": 1,
                      "points": ["1 V", "2 V"]}
