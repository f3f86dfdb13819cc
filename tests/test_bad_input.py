"""Bad input through the command line: one located line per problem, exit code 2, never a traceback."""

import pytest

from tests.conftest import CONTRACT_FILE

CONTRACT_TEXT = CONTRACT_FILE.read_text(encoding="utf-8")


#: The contract file's last line, and the same with a waiver after it (line 47).
LAST_LINE = "    capacitance: 100 uF\n"
WAIVER = (LAST_LINE + "waivers:\n  - {rule: turn-off-overshoot, subject: Q1, reason: bench only, accepted_by: JK, "
          "expires: 2027-12-31}\n")


def _edited(old: str, new: str) -> str:
    text = CONTRACT_TEXT + WAIVER.removeprefix(LAST_LINE) if old == WAIVER else CONTRACT_TEXT
    assert old in text, old
    return text.replace(old, new, 1)


# (edit of the contract file, the exact line printed). Line and column are those of the edited file,
# counted by hand (e.g. "2 V" of r_off starts at column 75 of line 35; the "0" of sigmas in the sigmas case at
# column 25 + 63 = 88 of line 25).
CASES = {
    "wrong unit": (
        ("r_off: 2 ohm}", "r_off: 2 V}"),
        'leg.yaml:35:75: switches[0].gate_drive.r_off: expected a resistance such as "2.2 ohm", got "2 V"'),
    "bare number": (
        ("      c_iss: 2.5 nF", "      c_iss: 2.5"),
        'leg.yaml:26:14: devices.demo-sj650.characteristics.c_iss: expected a capacitance such as "2.5 nF", '
        'got the bare number 2.5 (a unit is required)'),
    "missing required field": (
        ("    device: demo-sj650\n    source_connection: shared", "    source_connection: shared"),
        "leg.yaml:36:5: switches[1].device: required field is missing"),
    "unknown key": (
        ("    common_source_inductance: 12 nH", "    common_source_inductence: 12 nH"),
        'leg.yaml:39:5: switches[1].common_source_inductence: unknown field; did you mean '
        '"common_source_inductance"? (allowed here: common_source_inductance, device, driver_cmti, gate_drive, '
        'gate_loop_inductance, leg, notes, opposite, r_th_cs, ref, rms_current, short_circuit, soa_points, '
        'source_connection, switched_current, turn_off_di_dt)'),
    "duplicate key": (
        ("      v_gs_max: 20 V\n", "      v_gs_max: 20 V\n      v_gs_max: 25 V\n"),
        'leg.yaml:20:7: devices.demo-sj650.ratings.v_gs_max: duplicate key "v_gs_max" (first written at line 19)'),
    "unknown device name": (
        ("    device: demo-sj650\n    source_connection: shared",
         "    device: demo-sj65\n    source_connection: shared"),
        'leg.yaml:37:13: switches[1].device: no device named "demo-sj65" under devices; did you mean "demo-sj650"?'),
    "percent tolerance on a temperature": (
        ("case_temperature: {min: -20 degC, max: 90 degC}", "case_temperature: {nominal: 25 degC, tolerance: 5 %}"),
        'leg.yaml:11:51: conditions.case_temperature.tolerance: a tolerance on a temperature must be a temperature '
        'difference such as "5 K", got "5 %"'),
    "unknown technology": (
        ("technology: si-mosfet ", "technology: thyristor "),
        "leg.yaml:16:17: devices.demo-sj650.technology: expected one of si-mosfet, sic-mosfet, gan-hemt, igbt; "
        'got text ("thyristor")'),
    "min above max": (
        ("v_gs_th: {min: 3.0 V, max: 4.0 V}", "v_gs_th: {min: 4.5 V, max: 4.0 V}"),
        "leg.yaml:24:16: devices.demo-sj650.characteristics.v_gs_th: expected min <= nominal <= max"),
    "normal distribution without sigmas": (
        ("transconductance: 20 S", "transconductance: {nominal: 20 S, tolerance: 20 %, distribution: normal}"),
        "leg.yaml:25:58: devices.demo-sj650.characteristics.transconductance.distribution: a normal distribution "
        "needs sigmas"),
    "sigmas not above zero": (
        ("transconductance: 20 S",
         "transconductance: {nominal: 20 S, tolerance: 20 %, distribution: normal, sigmas: 0}"),
        "leg.yaml:25:88: devices.demo-sj650.characteristics.transconductance.sigmas: 0 is less than or equal to the "
        "minimum of 0"),
    "sigmas not a finite number": (
        ("transconductance: 20 S",
         "transconductance: {nominal: 20 S, tolerance: 20 %, distribution: normal, sigmas: .nan}"),
        'leg.yaml:25:88: devices.demo-sj650.characteristics.transconductance.sigmas: expected a plain number such as '
        '"0.8", got the bare number nan (the number is not finite)'),
    "curve scale not a finite number": (
        ("      c_oss: 90 pF", "      c_oss: {points: [{v_ds: 0 V, capacitance: 90 pF}], min: 0.9, max: 1e999}"),
        'leg.yaml:28:73: devices.demo-sj650.characteristics.c_oss.max: expected a factor on a curve such as "0.9", '
        "got the bare number inf (the number is not finite)"),
    "distribution on an exact value": (
        ("transconductance: 20 S", "transconductance: {nominal: 20 S, distribution: normal, sigmas: 3}"),
        "leg.yaml:25:41: devices.demo-sj650.characteristics.transconductance.distribution: a distribution needs a "
        "spread, but this value is exact"),
    "normal distribution on a one-sided value": (
        ("turn_off_current: {max: 40 A}", "turn_off_current: {max: 40 A, distribution: normal, sigmas: 3}"),
        "leg.yaml:9:33: conditions.turn_off_current.distribution: a distribution needs both ends of the tolerance"),
    "curve scale with one end": (
        ("      c_oss: 90 pF", "      c_oss: {points: [{v_ds: 0 V, capacitance: 90 pF}], max: 1.1}"),
        "leg.yaml:28:14: devices.demo-sj650.characteristics.c_oss: a curve's scale needs both ends"),
    "tolerance with a plus-minus sign": (
        ("inductance: {nominal: 25 nH, tolerance: 20 %}", "inductance: {nominal: 25 nH, tolerance: \u00b120%}"),
        'leg.yaml:13:43: commutation_loop.inductance.tolerance: a tolerance applies both ways (nominal \u00b1 '
        'tolerance) and is written without a sign: write "20 %"; for a spread that is unequal or on one side only, '
        'give min and max (or min, nominal and max) instead of a tolerance; got "\u00b120%"'),
    "tolerance without a unit": (
        ("capacitance: 100 uF", "capacitance: {nominal: 100 uF, tolerance: 10}"),
        'leg.yaml:45:47: capacitors[0].capacitance.tolerance: a tolerance needs its unit: write "10 %" for a '
        'percentage, or a capacitance such as "2.5 nF"; got the bare number 10'),
    "waiver date in day.month.year": (
        (WAIVER, WAIVER.replace("2027-12-31", "31.12.2027")),
        'leg.yaml:47:91: waivers[0].expires: dates are written YYYY-MM-DD (write 2027-12-31), got text '
        '("31.12.2027")'),
    "misspelled waiver rule id": (
        (WAIVER, WAIVER.replace("turn-off-overshoot", "turn-of-overshoot")),
        'leg.yaml:47:12: waivers[0].rule: unknown rule id "turn-of-overshoot"; did you mean "turn-off-overshoot"?'),
    "yaml syntax": (
        ("  revision: B", "  revision: [B"),
        "leg.yaml:6:9: not valid YAML: while parsing a flow sequence"),
}


@pytest.mark.parametrize("edit, expected", CASES.values(), ids=CASES.keys())
def test_bad_input_is_one_located_line_and_exit_2(tmp_path, monkeypatch, run_cli, edit, expected):
    monkeypatch.chdir(tmp_path)
    (tmp_path / "leg.yaml").write_text(_edited(*edit), encoding="utf-8")
    for command in ("check", "validate"):
        code, out, err = run_cli(command, "leg.yaml")
        assert code == 2, err
        assert out == ""
        assert err.splitlines()[0].startswith(expected), err
        assert "Traceback" not in err


def test_every_problem_is_reported_at_once(tmp_path, monkeypatch, run_cli):
    monkeypatch.chdir(tmp_path)
    text = _edited("r_off: 2 ohm}", "r_off: 2 V}").replace("      c_iss: 2.5 nF", "      c_iss: 2.5")
    (tmp_path / "leg.yaml").write_text(text, encoding="utf-8")
    code, _, err = run_cli("check", "leg.yaml")
    assert code == 2
    assert [line.split(": ")[1] for line in err.splitlines()] == [
        "devices.demo-sj650.characteristics.c_iss", "switches[0].gate_drive.r_off"]


def test_a_missing_file_is_exit_2(tmp_path, run_cli):
    code, _, err = run_cli("check", tmp_path / "absent.yaml")
    assert code == 2
    assert "absent.yaml: cannot read the file" in err


def test_an_empty_file_is_exit_2(tmp_path, monkeypatch, run_cli):
    monkeypatch.chdir(tmp_path)
    (tmp_path / "leg.yaml").write_text("# nothing yet\n", encoding="utf-8")
    code, _, err = run_cli("check", "leg.yaml")
    assert (code, err.strip()) == (2, "leg.yaml:1:1: the file is empty")


def test_input_files_are_byte_identical_after_every_command(tmp_path, run_cli):
    import shutil

    from tests.conftest import EXAMPLES

    shutil.copytree(EXAMPLES, tmp_path / "examples")
    inputs = sorted(path for path in (tmp_path / "examples").rglob("*.yaml"))
    before = {path: (path.read_bytes(), path.stat().st_mtime_ns) for path in inputs}
    for design in (tmp_path / "examples").glob("*.yaml"):
        for arguments in (("check", design), ("check", design, "--format", "json"), ("validate", design),
                          ("check", design, "--output", tmp_path / "report.txt"),
                          ("check", design, "--policy", tmp_path / "examples/policies/bench-lab.yaml"),
                          ("check", design, "--output", design), ("schema",)):
            run_cli(*arguments)
    assert {path: (path.read_bytes(), path.stat().st_mtime_ns) for path in inputs} == before
