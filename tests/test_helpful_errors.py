"""Errors that point to the fix, through the command line: tolerances written with a sign or without a unit,
waiver dates in another order and misspelled rule ids (exit code 2, one located line each), and the
short-circuit rule saying what its rating covers when the design goes beyond it (not evaluated, exit code 1)."""

import json

import pytest

from tests.conftest import CONTRACT_FILE

CONTRACT_TEXT = CONTRACT_FILE.read_text(encoding="utf-8")
LOOP = "inductance: {nominal: 25 nH, tolerance: 20 %}"
WAIVERS = "waivers:\n  - {rule: RULE, subject: Q1, reason: bench only, accepted_by: JK, expires: EXPIRES}\n"


def _bad_input(tmp_path, monkeypatch, run_cli, text: str, command: str = "check") -> str:
    """The one line printed for a design that cannot be read (exit code 2, nothing on stdout)."""
    monkeypatch.chdir(tmp_path)
    (tmp_path / "leg.yaml").write_text(text, encoding="utf-8")
    code, out, err = run_cli(command, "leg.yaml")
    assert (code, out) == (2, ""), err
    assert len(err.splitlines()) == 1 and "Traceback" not in err, err
    return err.strip()


def _with_waiver(rule: str = "turn-off-overshoot", expires: str = "2027-12-31") -> str:
    return CONTRACT_TEXT + WAIVERS.replace("RULE", rule).replace("EXPIRES", expires)


@pytest.mark.parametrize("written", ["\u00b120%", "\u00b120 %", "+-20%", "+/-20 %", "+ / - 20 %", "+20 %"])
def test_a_signed_tolerance_says_it_is_written_20_percent(tmp_path, monkeypatch, run_cli, written):
    text = CONTRACT_TEXT.replace(LOOP, f'inductance: {{nominal: 25 nH, tolerance: "{written}"}}')
    line = _bad_input(tmp_path, monkeypatch, run_cli, text)
    assert line.startswith("leg.yaml:13:43: commutation_loop.inductance.tolerance: a tolerance applies both ways"), line
    assert 'write "20 %"' in line and "give min and max" in line and f'got "{written}"' in line


def test_a_signed_absolute_tolerance_keeps_its_unit(tmp_path, monkeypatch, run_cli):
    text = CONTRACT_TEXT.replace(LOOP, "inductance: {nominal: 25 nH, tolerance: \u00b15nH}")
    assert 'write "5 nH"' in _bad_input(tmp_path, monkeypatch, run_cli, text)


def test_an_unequal_spread_is_sent_to_min_and_max(tmp_path, monkeypatch, run_cli):
    text = CONTRACT_TEXT.replace(LOOP, "inductance: {nominal: 25 nH, tolerance: +20/-10 %}")
    line = _bad_input(tmp_path, monkeypatch, run_cli, text)
    assert "write" not in line and "give min and max (or min, nominal and max) instead of a tolerance" in line


@pytest.mark.parametrize("old, new, where, expected", [
    ("tolerance: 5 %, r_on: 5", "tolerance: 5, r_on: 5", "leg.yaml:35:50: switches[0].gate_drive.tolerance",
     'write "5 %" for a percentage, or a voltage such as "400 V"; got the bare number 5'),
    ("      c_iss: 2.5 nF", "      c_iss: {nominal: 2.5 nF, tolerance: '10'}",
     "leg.yaml:26:43: devices.demo-sj650.characteristics.c_iss.tolerance",
     'write "10 %" for a percentage, or a capacitance such as "2.5 nF"; got "10"'),
    ("case_temperature: {min: -20 degC, max: 90 degC}", "case_temperature: {nominal: 25 degC, tolerance: 5}",
     "leg.yaml:11:51: conditions.case_temperature.tolerance", 'write "5 K"; got the bare number 5'),
], ids=["gate drive", "device characteristic, quoted", "temperature"])
def test_a_tolerance_without_a_unit_says_how_to_write_it(tmp_path, monkeypatch, run_cli, old, new, where, expected):
    assert old in CONTRACT_TEXT
    line = _bad_input(tmp_path, monkeypatch, run_cli, CONTRACT_TEXT.replace(old, new, 1))
    assert line == f"{where}: a tolerance needs its unit: {expected}"


@pytest.mark.parametrize("written", ["31.12.2027", "12/31/2027", "2027.12.31", "31 12 2027"])
def test_a_waiver_date_in_another_order_says_yyyy_mm_dd(tmp_path, monkeypatch, run_cli, written):
    line = _bad_input(tmp_path, monkeypatch, run_cli, _with_waiver(expires=written), "validate")
    assert line.endswith(f'waivers[0].expires: dates are written YYYY-MM-DD (write 2027-12-31), got text ("{written}")')


@pytest.mark.parametrize("written", ["01/02/2027", "2027-1-5", "31.02.2027", "end of 2027"])
def test_a_waiver_date_that_could_be_misread_gets_an_example_not_a_guess(tmp_path, monkeypatch, run_cli, written):
    # 01/02/2027 is January 2 or February 1; a guessed month must never move an expiry date.
    line = _bad_input(tmp_path, monkeypatch, run_cli, _with_waiver(expires=f'"{written}"'))
    assert line.endswith(f'dates are written YYYY-MM-DD (e.g. 2027-12-31), got text ("{written}")'), line


def test_a_waiver_rule_id_in_capitals_says_how_rule_ids_are_written(tmp_path, monkeypatch, run_cli):
    line = _bad_input(tmp_path, monkeypatch, run_cli, _with_waiver(rule="Turn-Off-Overshoot"))
    assert line.endswith("waivers[0].rule: rule ids are lower-case letters, digits and - (e.g. turn-off-overshoot), "
                         'got text ("Turn-Off-Overshoot")'), line


@pytest.mark.parametrize("command", ["check", "validate", "headroom"])
def test_a_misspelled_waiver_rule_id_names_the_closest_rule(tmp_path, monkeypatch, run_cli, command):
    line = _bad_input(tmp_path, monkeypatch, run_cli, _with_waiver(rule="turn-of-overshoot"), command)
    assert line == ('leg.yaml:47:12: waivers[0].rule: unknown rule id "turn-of-overshoot"; '
                    'did you mean "turn-off-overshoot"?')


def test_a_waiver_rule_id_like_none_lists_the_rule_ids(tmp_path, monkeypatch, run_cli):
    from margincheck.rules import RULES

    line = _bad_input(tmp_path, monkeypatch, run_cli, _with_waiver(rule="zzz"))
    assert line == f'leg.yaml:47:12: waivers[0].rule: unknown rule id "zzz" (rule ids: {", ".join(RULES)})'


def test_a_misspelled_rule_id_set_on_the_command_line_names_the_override(tmp_path, monkeypatch, run_cli):
    monkeypatch.chdir(tmp_path)
    (tmp_path / "leg.yaml").write_text(_with_waiver(), encoding="utf-8")
    code, _, err = run_cli("check", "leg.yaml", "--set", "waivers[0].rule=bus-voltag")
    assert code == 2
    assert err.strip() == ('leg.yaml (--set waivers[0].rule=bus-voltag): waivers[0].rule: unknown rule id '
                           '"bus-voltag"; did you mean "bus-voltage"?')


# The short-circuit withstand rating of the contract's device: 3 us at a 400 V bus and V_GS 15 V; Q1 has a
# short-circuit case. The bus and Q1's gate drive decide whether the rating covers the design.
RATING = "      t_j_max: 150 degC\n"
Q1_SOURCE = "    common_source_inductance: 1 nH\n"


def _short_circuit(tmp_path, run_cli, bus: str, gate: str = "{on: 15 V, off: -3 V, tolerance: 5 %,") -> dict:
    text = (CONTRACT_TEXT
            .replace("bus_voltage: {nominal: 400 V, tolerance: 5 %}", f"bus_voltage: {bus}")
            .replace(RATING, RATING + "      short_circuit: {withstand_time: 3 us, v_ds: 400 V, v_gs: 15 V}\n")
            .replace(Q1_SOURCE, Q1_SOURCE + "    short_circuit: {current: 300 A, response_time: 1 us}\n", 1)
            .replace("{on: 15 V, off: -3 V, tolerance: 5 %,", gate))
    (tmp_path / "leg.yaml").write_text(text, encoding="utf-8")
    code, out, err = run_cli("check", tmp_path / "leg.yaml", "--format", "json")
    assert code == 1, err  # the contract design fails other rules; a short-circuit finding never passes here
    return next(f for f in json.loads(out)["findings"] if (f["rule"], f["subject"]) == ("short-circuit", "Q1"))


def test_a_bus_beyond_the_short_circuit_rating_says_what_the_rating_covers(tmp_path, run_cli):
    # 450 V against a rating at 400 V; the gate at exactly 15 V (no tolerance on its on-level) is covered.
    finding = _short_circuit(tmp_path, run_cli, "450 V", gate="{on: 15 V, off: {nominal: -3 V, tolerance: 5 %},")
    assert finding["status"] == "not-evaluated" and finding["value"] is None
    assert finding["missing"] == ["devices.demo-sj650.ratings.short_circuit at a 450 V bus or more"]
    assert finding["note"] == (
        "the short-circuit withstand time of 3 us is rated at a 400 V bus and V_GS 15 V; this design's bus reaches "
        "450 V, beyond the rating's test conditions (a higher voltage shortens the withstand time), so the rating "
        "does not cover this design: ask for a rating at a 450 V bus or more")


def test_a_gate_drive_beyond_the_short_circuit_rating_names_both_voltages(tmp_path, run_cli):
    # 420 V (400 V + 5 %) and V_GS 15.75 V (15 V + 5 %) both exceed the rating's 400 V and 15 V.
    finding = _short_circuit(tmp_path, run_cli, "{nominal: 400 V, tolerance: 5 %}")
    assert finding["status"] == "not-evaluated"
    assert "this design's bus reaches 420 V and its gate drive reaches V_GS 15.75 V" in finding["note"]
    assert finding["note"].endswith("ask for a rating at a 420 V bus and V_GS 15.75 V or more")


def test_a_bus_without_a_maximum_is_named_not_guessed(tmp_path, run_cli):
    finding = _short_circuit(tmp_path, run_cli, "{min: 380 V}")
    assert finding["status"] == "not-evaluated"
    assert finding["missing"] == ["conditions.bus_voltage (maximum)"]
    assert finding["note"].endswith("without this design's maximum it cannot be known to apply")


def test_a_design_inside_the_rating_is_evaluated(tmp_path, run_cli):
    # At the rating's own voltages the response time of 1 us is judged against 0.5 x 3 us (default policy).
    finding = _short_circuit(tmp_path, run_cli, "400 V", gate="{on: 15 V, off: {nominal: -3 V, tolerance: 5 %},")
    assert finding["status"] == "pass" and finding["limit"] == {"magnitude": 1.5e-6, "units": "s"}
