"""The command line as a real process: help, version, policy option, no traceback on bad input."""

import json
import os
import re
import subprocess
import sys
from pathlib import Path

from tests.conftest import CONTRACT_FILE, EXAMPLES

ROOT = Path(__file__).resolve().parent.parent


def _run(*arguments, cwd=None):
    environment = {**os.environ, "PYTHONPATH": str(ROOT)}  # importable from any folder, installed or not
    return subprocess.run([sys.executable, "-m", "margincheck", *map(str, arguments)], capture_output=True,
                          text=True, cwd=cwd, env=environment, check=False)


def test_help_teaches_the_commands_and_exit_codes():
    result = _run("--help")
    assert result.returncode == 0
    for text in ("check", "validate", "schema", "exit codes", "COMMAND"):
        assert text in result.stdout
    check_help = _run("check", "--help").stdout
    assert "--format" in check_help and "--policy" in check_help and "--details, -v" in check_help


def test_help_fits_an_80_column_log():
    """No line of the help runs past 80 columns, and no text is pushed apart by a run of embedded spaces (a
    line continued inside the help string); only argparse's alignment of the help column (24) has them."""
    environment = {**os.environ, "PYTHONPATH": str(ROOT), "COLUMNS": "80"}
    for arguments in (["--help"], ["check", "--help"]):
        text = subprocess.run([sys.executable, "-m", "margincheck", *arguments], capture_output=True, text=True,
                              env=environment, check=True).stdout
        for line in text.splitlines():
            assert len(line) <= 80, line
            assert all(gap.end() <= 25 for gap in re.finditer(r"(?<=\S) {3,}(?=\S)", line)), line


def test_details_option_shows_every_finding_in_full():
    """Without --details a passing finding is one line; -v (or --details) adds its formula and source."""
    short = _run("check", EXAMPLES / "gan-48v-stage.yaml").stdout
    full = _run("check", EXAMPLES / "gan-48v-stage.yaml", "-v").stdout
    assert "source: " not in short and "source: " in full
    assert "switching figures" in full and "switching figures" not in short
    assert _run("check", EXAMPLES / "gan-48v-stage.yaml", "--details").stdout.count("source: ") == full.count(
        "source: ")


def test_version():
    assert _run("--version").stdout.startswith("margincheck ")


def test_policy_option_changes_the_verdict(tmp_path):
    # gan-48v-stage passes under the default policy (its simulated peak, about 72 V, against 0.8 x 100 V) and
    # fails under a policy that allows half the rating for the peak.
    result = _run("check", EXAMPLES / "gan-48v-stage.yaml", "--policy", "default", "--format", "json")
    report = json.loads(result.stdout)
    assert (result.returncode, report["verdict"], report["policy"]["name"]) == (0, "pass", "default")
    strict = tmp_path / "strict.yaml"
    strict.write_text("format: margincheck-policy/1\nname: strict\nbasis: a test policy\npeak_voltage: 0.5\n",
                      encoding="utf-8")
    result = _run("check", EXAMPLES / "gan-48v-stage.yaml", "--policy", strict, "--format", "json")
    report = json.loads(result.stdout)
    assert (result.returncode, report["verdict"], report["policy"]["name"]) == (1, "fail", "strict")


def test_bad_input_in_a_real_process_is_one_line_without_traceback(tmp_path):
    bad = CONTRACT_FILE.read_text(encoding="utf-8").replace("r_off: 2 ohm}", "r_off: 2 V}")
    (tmp_path / "leg.yaml").write_text(bad, encoding="utf-8")
    result = _run("check", "leg.yaml", cwd=tmp_path)
    assert result.returncode == 2
    assert result.stdout == ""
    assert result.stderr.splitlines() == [
        'leg.yaml:35:75: switches[0].gate_drive.r_off: expected a resistance such as "2.2 ohm", got "2 V"']


def test_unknown_policy_file_is_exit_2(tmp_path):
    result = _run("check", CONTRACT_FILE, "--policy", tmp_path / "nope.yaml")
    assert result.returncode == 2
    assert "nope.yaml: cannot read the file" in result.stderr


def test_schema_kinds():
    for kind in ("design", "device", "policy"):
        assert json.loads(_run("schema", kind).stdout)["$schema"].endswith("2020-12/schema")


def test_an_ascii_only_output_gets_replacement_characters_not_a_failure():
    """A log that can only take ASCII (PYTHONIOENCODING=ascii): the report's rules and signs become '?'."""
    completed = subprocess.run([sys.executable, "-m", "margincheck", "check", str(EXAMPLES / "gan-48v-stage.yaml")],
                               capture_output=True, env={**os.environ, "PYTHONIOENCODING": "ascii"})
    assert completed.returncode == 0, completed.stderr
    assert b"verdict" in completed.stdout and completed.stderr == b""
