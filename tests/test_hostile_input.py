"""Hostile input: loading limits, refused file references, impossible values, text that tries to drive the
terminal. Each case checks the exact message and exit code 2."""

import json
import os
import tracemalloc

import pytest

from margincheck.errors import InputError
from margincheck.loading import Limits, load_document
from tests.conftest import CONTRACT_FILE

CONTRACT_TEXT = CONTRACT_FILE.read_text(encoding="utf-8")

BILLION_LAUGHS = "\n".join(
    ["a0: &a0 [lol, lol, lol, lol, lol, lol, lol, lol, lol, lol]"]
    + [f"a{i}: &a{i} [" + ", ".join([f"*a{i - 1}"] * 10) + "]" for i in range(1, 9)]
) + "\n"


def _write(tmp_path, text, name="leg.yaml"):
    path = tmp_path / name
    path.write_text(text, encoding="utf-8")
    return path


# ---- loading limits ---------------------------------------------------------------------------------------

def test_size_cap_is_configurable(tmp_path, run_cli, monkeypatch):
    monkeypatch.chdir(tmp_path)
    _write(tmp_path, CONTRACT_TEXT)
    code, _, err = run_cli("check", "leg.yaml", "--max-input-bytes", "1000")
    assert (code, err.strip()) == (2, "leg.yaml: the file is larger than the input limit of 1000 bytes "
                                      "(--max-input-bytes raises it)")
    assert run_cli("check", "leg.yaml", "--max-input-bytes", str(len(CONTRACT_TEXT)))[0] == 1


def test_default_size_cap_is_one_mebibyte(tmp_path):
    path = _write(tmp_path, "a: 1\n" + "#" * (1 << 20) + "\n")
    with pytest.raises(InputError, match="larger than the input limit of 1048576 bytes"):
        load_document(path, "big.yaml")


def test_nesting_depth_cap(tmp_path):
    path = _write(tmp_path, "a: " + "[" * 40 + "]" * 40 + "\n")
    with pytest.raises(InputError, match=r"^doc.yaml:1:35: nesting is deeper than the limit of 32 levels$"):
        load_document(path, "doc.yaml")


def test_very_deep_nesting_is_refused_without_recursion(tmp_path):
    path = _write(tmp_path, "[" * 100_000 + "]" * 100_000 + "\n")
    # Refused by our depth limit, or (newer libyaml) by the parser's own limit first: located either way.
    with pytest.raises(InputError, match=r"^doc.yaml:1:\d+: (nesting is deeper than the limit of 32 levels|"
                                         r"not valid YAML: .*exceeded maximum nesting depth)"):
        load_document(path, "doc.yaml")


def test_alias_count_cap(tmp_path):
    text = "base: &b 1\nlist: [" + ", ".join(["*b"] * 101) + "]\n"
    with pytest.raises(InputError, match=r"^doc.yaml:2:\d+: more than 100 aliases; write the values out instead$"):
        load_document(_write(tmp_path, text), "doc.yaml")


def test_billion_laughs_is_refused_in_bounded_memory(tmp_path):
    path = _write(tmp_path, BILLION_LAUGHS)
    tracemalloc.start()
    try:
        with pytest.raises(InputError, match=r"^doc.yaml:1:1: the document expands to more than 20000 values "
                                             r"\(alias expansion\); refused$"):
            load_document(path, "doc.yaml")
        _, peak = tracemalloc.get_traced_memory()
    finally:
        tracemalloc.stop()
    assert peak < 50 * 2**20  # 10**9 expanded strings would need tens of GB


def test_expansion_cap_is_configurable(tmp_path):
    text = "a: &a [1, 2, 3]\nb: [*a, *a]\n"
    with pytest.raises(InputError, match="expands to more than 5 values"):
        load_document(_write(tmp_path, text), "doc.yaml", Limits(max_values=5))


def test_tab_is_located(tmp_path):
    with pytest.raises(InputError, match=r"^doc.yaml:2:5: a tab character; indent and separate with spaces$"):
        load_document(_write(tmp_path, "a:\n  b:\t1\n"), "doc.yaml")


def test_a_folder_without_designs_is_an_error_not_a_pass(tmp_path, run_cli):
    code, _, err = run_cli("check", tmp_path)
    assert code == 2
    assert "no margincheck design" in err


@pytest.mark.skipif(not hasattr(os, "mkfifo"), reason="named pipes need a POSIX system")
def test_a_named_pipe_is_refused_without_blocking(tmp_path):
    fifo = tmp_path / "pipe.yaml"
    os.mkfifo(fifo)
    descriptor = os.open(fifo, os.O_RDWR | os.O_NONBLOCK)  # a writer end, so that opening does not block
    try:
        with pytest.raises(InputError, match="not a regular file"):
            load_document(fifo, "pipe.yaml")
    finally:
        os.close(descriptor)


# ---- file references --------------------------------------------------------------------------------------

SECRET = "secret-content-that-must-never-be-echoed"


@pytest.fixture
def outside_file(tmp_path):
    """A device-looking file outside the design's folder, holding a secret."""
    (tmp_path / "design").mkdir()
    secret = tmp_path / "outside.yaml"
    secret.write_text(f"technology: si-mosfet\nratings: {{v_ds_max: {SECRET}}}\n", encoding="utf-8")
    return secret


def _design_naming(tmp_path, reference, contract_data, write_design):
    contract_data["devices"]["demo-sj650"] = reference
    return write_design(contract_data, "design/leg.yaml")


@pytest.mark.parametrize("kind, message", [
    ("dotdot", 'devices.demo-sj650: device file "../outside.yaml": the path leads outside the design file\'s '
               "folder; move it inside that folder, or allow its folder with --allow-root DIR"),
    ("absolute", 'devices.demo-sj650: device file "{absolute}": an absolute path is not allowed; give a path '
                 "relative to the design file, or allow its folder with --allow-root DIR"),
    ("symlink", 'devices.demo-sj650: device file "dev.yaml": the path goes through a symbolic link to a place '
                "outside the design file's folder; move it inside that folder, or allow its folder with "
                "--allow-root DIR"),
])
def test_references_that_leave_the_folder_are_refused(tmp_path, outside_file, contract_data, write_design,
                                                      run_cli, kind, message):
    reference = {"dotdot": "../outside.yaml", "absolute": str(outside_file), "symlink": "dev.yaml"}[kind]
    if kind == "symlink":
        (tmp_path / "design" / "dev.yaml").symlink_to(outside_file)
    design = _design_naming(tmp_path, reference, contract_data, write_design)
    code, out, err = run_cli("check", design)
    assert code == 2
    assert err.strip().splitlines() == [f"{design}:21:15: " + message.format(absolute=outside_file)], err
    assert SECRET not in err + out


def test_allow_root_permits_a_reference_outside(tmp_path, outside_file, contract_data, write_design, run_cli):
    design = _design_naming(tmp_path, "../outside.yaml", contract_data, write_design)
    code, _, err = run_cli("check", design, "--allow-root", tmp_path)
    assert code == 2  # now read: and its bad value is reported, located in that file
    assert "outside.yaml:2:21: ratings.v_ds_max: expected a voltage" in err


def test_policy_reference_is_confined_too(tmp_path, contract_data, write_design, run_cli):
    contract_data["derating"] = "../policy.yaml"
    code, _, err = run_cli("check", write_design(contract_data, "design/leg.yaml"))
    assert code == 2
    assert 'derating: policy file "../policy.yaml": the path leads outside' in err


def test_a_reference_inside_a_subfolder_is_fine(tmp_path, contract_data, write_design, run_cli):
    (tmp_path / "parts").mkdir()
    device = contract_data["devices"]["demo-sj650"]
    (tmp_path / "parts" / "dev.yaml").write_text(json.dumps(device), encoding="utf-8")  # JSON is YAML
    contract_data["devices"]["demo-sj650"] = "parts/../parts/dev.yaml"
    assert run_cli("check", write_design(contract_data))[0] == 1


# ---- impossible and implausible values --------------------------------------------------------------------

@pytest.mark.parametrize("edit, message", [
    (("inductance: {nominal: 25 nH, tolerance: 20 %}", "inductance: {nominal: -25 nH, tolerance: 20 %}"),
     "leg.yaml:13:25: commutation_loop.inductance.nominal: must be greater than zero"),
    (("inductance: {nominal: 25 nH, tolerance: 20 %}", "inductance: {nominal: 25 nH, tolerance: 120 %}"),
     "leg.yaml:13:43: commutation_loop.inductance.tolerance: the tolerance takes the minimum to -5 nH, but "
     "the value must be greater than zero"),
    (("c_iss: 2.5 nF", "c_iss: 0 nF"), "leg.yaml:26:14: devices.demo-sj650.characteristics.c_iss: must be "
                                       "greater than zero"),
    (("r_g_internal: 1 ohm", "r_g_internal: 0 ohm"),
     "leg.yaml:29:21: devices.demo-sj650.characteristics.r_g_internal: must be greater than zero"),
    (("common_source_inductance: 1 nH", "common_source_inductance: 0 nH"),
     "leg.yaml:34:31: switches[0].common_source_inductance: must be greater than zero"),
    (("i_d_pulse: 120 A", "i_d_pulse: -120 A"),
     "leg.yaml:21:18: devices.demo-sj650.ratings.i_d_pulse: must be greater than zero"),
    (("capacitance: 100 uF", "capacitance: 1e999 uF"),
     'leg.yaml:45:18: capacitors[0].capacitance: expected a capacitance such as "2.5 nF", got "1e999 uF" '
     "(the number is not finite)"),
    (("capacitance: 100 uF", "capacitance: .nan"),
     'leg.yaml:45:18: capacitors[0].capacitance: expected a capacitance such as "2.5 nF", got the bare '
     "number nan (a unit is required)"),
])
def test_impossible_values_are_located_errors(tmp_path, monkeypatch, run_cli, edit, message):
    monkeypatch.chdir(tmp_path)
    _write(tmp_path, CONTRACT_TEXT.replace(*edit))
    code, _, err = run_cli("check", "leg.yaml")
    assert (code, err.strip()) == (2, message)


def test_a_non_finite_policy_factor_is_refused(tmp_path, monkeypatch, run_cli):
    monkeypatch.chdir(tmp_path)
    _write(tmp_path, "format: margincheck-policy/1\nname: p\nbasis: b\npeak_voltage: .nan\n", "p.yaml")
    _write(tmp_path, CONTRACT_TEXT.replace("derating: default", "derating: p.yaml"))
    code, _, err = run_cli("check", "leg.yaml")
    assert (code, err.strip()) == (2, "p.yaml:4:15: peak_voltage: expected a finite number, got nan")


@pytest.mark.parametrize("edit, warning", [
    (("v_ds_max: 650 V", "v_ds_max: 20 kV"),
     "leg.yaml:18:17: devices.demo-sj650.ratings.v_ds_max: 20 kV is above 10 kV, which is unusual"),
    (("inductance: {nominal: 25 nH, tolerance: 20 %}", "inductance: 1 mH"),
     "leg.yaml:13:15: commutation_loop.inductance: 1 mH is above 1 uH, which is unusual"),
])
def test_implausible_values_are_warnings_in_the_report(tmp_path, monkeypatch, run_cli, edit, warning):
    monkeypatch.chdir(tmp_path)
    _write(tmp_path, CONTRACT_TEXT.replace(*edit))
    code, out, _ = run_cli("check", "leg.yaml", "--format", "json")
    warnings = [f"{w['file']}:{w['line']}:{w['column']}: {w['path']}: {w['message']}"
                for w in json.loads(out)["warnings"]]
    assert code == 1
    assert any(text.startswith(warning) for text in warnings), warnings
    text_report = run_cli("check", "leg.yaml")[1]
    assert "warning: " + warning[:40] in text_report


# ---- untrusted text ---------------------------------------------------------------------------------------

def test_escape_sequences_in_a_bad_value_are_neutralised_in_the_error(tmp_path, monkeypatch, run_cli):
    monkeypatch.chdir(tmp_path)
    _write(tmp_path, CONTRACT_TEXT.replace("r_off: 2 ohm}", 'r_off: "2 \\e[2J\\e]0;owned\\a"}'))
    code, _, err = run_cli("check", "leg.yaml")
    assert code == 2
    assert "\x1b" not in err and "\x07" not in err
    assert '\\x1b[2J\\x1b]0;owned\\x07' in err
    assert len(err.strip().splitlines()) == 1


def test_control_characters_in_the_title_are_escaped_in_json(write_design, contract_data, run_cli):
    contract_data["design"]["title"] = "leg \x1b[31m\u202e"
    _, out, _ = run_cli("check", write_design(contract_data), "--format", "json")
    assert "\x1b" not in out and "\u202e" not in out
    assert json.loads(out)["design"]["title"] == "leg \x1b[31m\u202e"  # the data itself is kept exact


def test_a_bidirectional_override_in_the_title_is_shown_as_a_code(write_design, contract_data, run_cli):
    contract_data["design"]["title"] = "Q1 \u202eSSAP"
    _, out, _ = run_cli("check", write_design(contract_data))
    assert "\u202e" not in out and "Q1 \\u202eSSAP" in out


# ---- output files -----------------------------------------------------------------------------------------

def test_output_is_written_atomically_and_never_over_an_input(tmp_path, run_cli):
    design = _write(tmp_path, CONTRACT_TEXT)
    report = tmp_path / "report.json"
    assert run_cli("check", design, "--format", "json", "--output", report)[0] == 1
    assert json.loads(report.read_text(encoding="utf-8"))["verdict"] == "fail"
    assert not list(tmp_path.glob(".report.json.*"))  # no temporary left behind
    before = design.read_bytes()
    code, _, err = run_cli("check", design, "--output", design)
    assert (code, design.read_bytes()) == (2, before)
    assert "refusing to write the report over an input file" in err


@pytest.mark.parametrize("field, value, message", [
    ("derating", "missing-policy.yaml", 'derating: policy file "missing-policy.yaml": no such file'),
    ("device", "missing-device.yaml", 'devices.demo-sj650: device file "missing-device.yaml": no such file'),
])
def test_a_missing_referenced_file_is_located_in_the_design(write_design, contract_data, run_cli, field, value,
                                                             message):
    if field == "derating":
        contract_data["derating"] = value
    else:
        contract_data["devices"]["demo-sj650"] = value
    design = write_design(contract_data)
    code, _, err = run_cli("check", design)
    assert code == 2
    assert err.splitlines()[0].startswith(str(design)) and err.splitlines()[0].endswith(message), err


@pytest.mark.parametrize("place", ["device", "policy"])
def test_a_reference_longer_than_the_file_system_allows_is_a_located_error(contract_data, write_design, run_cli,
                                                                          place):
    # Found by the fuzzer: the OS refuses the name itself (ENAMETOOLONG) before any file is looked at.
    name = "x" * 300 + ".yaml"
    if place == "device":
        contract_data["devices"]["demo-sj650"] = name
    else:
        contract_data["derating"] = name
    code, _, err = run_cli("check", write_design(contract_data))
    assert code == 2
    assert err.startswith(str(write_design(contract_data).parent)) and "cannot be" in err
