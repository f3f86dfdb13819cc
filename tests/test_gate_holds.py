"""Issue 11, the gate holds: a batch cannot be bypassed by a format line, no input hangs or crashes the tool,
no report target is clobbered, no text can forge a record, and batch report names are unique and confined.
Each reproducer runs through the command line and checks the exact exit code and message. A case that could
hang runs in a child process with a generous timeout (a hang fails the test; no timing is asserted)."""

import json
import os
import shutil
import stat
import subprocess
import sys
import threading
import xml.etree.ElementTree as ElementTree

import pytest

from tests.conftest import CONTRACT_FILE, EXAMPLES

CONTRACT_TEXT = CONTRACT_FILE.read_text(encoding="utf-8")
HANG_TIMEOUT = 60  # seconds: a hang, not a slow machine
READS = "(the only version of this file format that this release reads)"
posix_only = pytest.mark.skipif(not hasattr(os, "mkfifo"), reason="named pipes need a POSIX system")


def _replaced(old: str, new: str, text: str = CONTRACT_TEXT) -> str:
    assert old in text, old
    return text.replace(old, new, 1)


def _child(*arguments, cwd, shell_suffix: str = "") -> subprocess.CompletedProcess:
    command = [sys.executable, "-m", "margincheck", *map(str, arguments)]
    if shell_suffix:
        command = ["sh", "-c", " ".join(f"'{part}'" for part in command) + shell_suffix]
    return subprocess.run(command, cwd=cwd, capture_output=True, text=True, timeout=HANG_TIMEOUT, check=False)


# ---- item 1: a batch cannot skip a design whose format line is edited --------------------------------------

FORMAT_EDITS = {
    "another version": ("format: margincheck/2", f'expected "margincheck/1" {READS}, got text ("margincheck/2")',
                        "2:9"),
    "other case": ("format: Margincheck/1", f'expected "margincheck/1" {READS}, got text ("Margincheck/1")', "2:9"),
    "trailing space": ('format: "margincheck/1 "', f'expected "margincheck/1" {READS}, got text ("margincheck/1 ")',
                       "2:9"),
    "a device format": ("format: margincheck-device/1",
                        f'expected "margincheck/1" {READS}, got text ("margincheck-device/1")', "2:9"),
    "no format line": ("", 'required field is missing; expected "margincheck/1"', "3:1"),
}


@pytest.mark.parametrize("line, message, where", FORMAT_EDITS.values(), ids=FORMAT_EDITS.keys())
def test_a_design_with_an_edited_format_line_fails_the_batch(tmp_path, monkeypatch, run_cli, line, message, where):
    monkeypatch.chdir(tmp_path)
    (tmp_path / "designs").mkdir()
    (tmp_path / "designs" / "leg.yaml").write_text(_replaced("format: margincheck/1", line), encoding="utf-8")
    code, out, err = run_cli("check", "designs")
    assert code == 2, out
    assert "batch of 1 design(s), 0 file(s) skipped" in out
    assert err.strip() == f"designs/leg.yaml:{where}: format: {message}"


def test_an_unknown_design_version_without_design_fields_is_an_error_too(tmp_path, monkeypatch, run_cli):
    monkeypatch.chdir(tmp_path)
    (tmp_path / "designs").mkdir()
    (tmp_path / "designs" / "new.yaml").write_text("format: margincheck/3\nbranches: []\n", encoding="utf-8")
    code, _, err = run_cli("check", "designs")
    assert code == 2
    assert (f'designs/new.yaml:1:9: format: expected "margincheck/1" {READS}, got text ("margincheck/3")'
            in err.splitlines()), err


def test_skipped_files_are_listed_with_the_reason_in_every_format(tmp_path, monkeypatch, run_cli):
    monkeypatch.chdir(tmp_path)
    (tmp_path / "designs").mkdir()
    (tmp_path / "designs" / "leg.yaml").write_text(CONTRACT_TEXT, encoding="utf-8")
    (tmp_path / "designs" / "ci.yaml").write_text("jobs: {test: {runs-on: linux}}\n", encoding="utf-8")
    (tmp_path / "designs" / "broken.yaml").write_text("format: margincheck/1\nswitches: [\n", encoding="utf-8")
    reason = "not a margincheck design (no format: margincheck/1, no switches or conditions)"
    code, out, _ = run_cli("check", "designs", "--report", "junit:out/all.xml", "--report", "sarif:out/all.sarif",
                           "--report", "markdown:out/all.md")
    assert code == 2
    assert f"skipped: designs/ci.yaml ({reason})" in out
    summary = json.loads(run_cli("check", "designs", "--format", "json")[1])
    assert summary["skipped"] == [{"file": "designs/ci.yaml", "reason": reason}]
    cases = {case.get("name"): case for case in ElementTree.parse(tmp_path / "out" / "all.xml").iter("testcase")}
    assert cases["designs/ci.yaml"].find("skipped").get("message") == reason
    assert cases["designs/broken.yaml"].find("error").get("message").startswith("designs/broken.yaml:3:1: ")
    notes = json.loads((tmp_path / "out" / "all.sarif").read_text(encoding="utf-8"))["runs"][-1]["invocations"][0]
    assert notes["executionSuccessful"] is False
    assert {(note["level"], note["message"]["text"].split(":")[0]) for note in notes["toolExecutionNotifications"]} \
        == {("error", "not checked"), ("note", "skipped")}
    markdown = (tmp_path / "out" / "all.md").read_text(encoding="utf-8")
    assert "- skipped: `designs/ci.yaml`: not a margincheck design" in markdown
    assert "- **ERROR**, not checked: `designs/broken.yaml`" in markdown


# ---- item 8: a named pipe never hangs the check ------------------------------------------------------------

@posix_only
def test_a_named_pipe_as_the_design_is_refused_at_once(tmp_path):
    os.mkfifo(tmp_path / "pipe.yaml")
    completed = _child("check", "pipe.yaml", cwd=tmp_path)
    assert (completed.returncode, completed.stdout, completed.stderr) == (2, "", "pipe.yaml: not a regular file\n")


# ---- item 9: report targets are written into, never replaced -----------------------------------------------

@posix_only
def test_a_named_pipe_as_the_report_is_written_into_not_replaced(tmp_path, monkeypatch, run_cli):
    monkeypatch.chdir(tmp_path)
    (tmp_path / "leg.yaml").write_text(CONTRACT_TEXT, encoding="utf-8")
    os.mkfifo(tmp_path / "report.fifo")
    received = []
    reader = threading.Thread(target=lambda: received.append((tmp_path / "report.fifo").read_text(encoding="utf-8")))
    reader.start()
    try:
        completed = _child("check", "leg.yaml", "--format", "json", "-o", "report.fifo", cwd=tmp_path)
    finally:
        reader.join(HANG_TIMEOUT)
    assert completed.returncode == 1, completed.stderr
    assert json.loads(received[0])["verdict"] == "fail"
    assert stat.S_ISFIFO(os.stat(tmp_path / "report.fifo").st_mode)


@posix_only
def test_a_named_pipe_nobody_reads_is_an_error_not_a_hang(tmp_path):
    (tmp_path / "leg.yaml").write_text(CONTRACT_TEXT, encoding="utf-8")
    os.mkfifo(tmp_path / "report.fifo")
    completed = _child("check", "leg.yaml", "--report", "sarif:report.fifo", cwd=tmp_path)
    assert (completed.returncode, completed.stderr) == (
        2, "margincheck: report.fifo: cannot write the report into a named pipe that nobody reads\n")
    assert stat.S_ISFIFO(os.stat(tmp_path / "report.fifo").st_mode)


def test_a_folder_as_the_report_is_refused(tmp_path, monkeypatch, run_cli):
    monkeypatch.chdir(tmp_path)
    (tmp_path / "leg.yaml").write_text(CONTRACT_TEXT, encoding="utf-8")
    (tmp_path / "out").mkdir()
    code, _, err = run_cli("check", "leg.yaml", "-o", "out")
    assert (code, err.strip()) == (2, "margincheck: out: not a regular file, a character device or a named pipe; "
                                      "refusing to replace it with the report")
    assert (tmp_path / "out").is_dir()


@pytest.mark.parametrize("umask, mode", [(0o022, 0o644), (0o077, 0o600), (0o002, 0o664)])
def test_reports_honour_the_umask(tmp_path, monkeypatch, run_cli, umask, mode):
    monkeypatch.chdir(tmp_path)
    (tmp_path / "leg.yaml").write_text(CONTRACT_TEXT, encoding="utf-8")
    previous = os.umask(umask)
    try:
        run_cli("check", "leg.yaml", "-o", "report.txt", "--report", "html:out/leg.html")
    finally:
        os.umask(previous)
    assert stat.S_IMODE(os.stat(tmp_path / "report.txt").st_mode) == mode
    assert stat.S_IMODE(os.stat(tmp_path / "out" / "leg.html").st_mode) == mode


def test_a_replaced_report_keeps_its_permissions(tmp_path, monkeypatch, run_cli):
    monkeypatch.chdir(tmp_path)
    (tmp_path / "leg.yaml").write_text(CONTRACT_TEXT, encoding="utf-8")
    (tmp_path / "report.txt").write_text("old\n", encoding="utf-8")
    os.chmod(tmp_path / "report.txt", 0o640)
    run_cli("check", "leg.yaml", "-o", "report.txt")
    assert stat.S_IMODE(os.stat(tmp_path / "report.txt").st_mode) == 0o640
    assert "margincheck" in (tmp_path / "report.txt").read_text(encoding="utf-8")


# ---- item 10: no internal error ----------------------------------------------------------------------------

LONG_NUMBER = "1" * 4301


def test_a_very_long_integer_is_a_located_error(tmp_path, monkeypatch, run_cli):
    monkeypatch.chdir(tmp_path)
    (tmp_path / "leg.yaml").write_text(_replaced("revision: B", f"revision: {LONG_NUMBER}"), encoding="utf-8")
    code, out, err = run_cli("check", "leg.yaml")
    assert (code, out) == (2, "")
    assert err.strip() == ("leg.yaml:5:13: design.revision: a number of 4301 characters is too long to read; write "
                           "it with an exponent (1e30) or as text")


def test_one_broken_design_never_loses_the_others_results(tmp_path, monkeypatch, run_cli):
    monkeypatch.chdir(tmp_path)
    (tmp_path / "designs").mkdir()
    (tmp_path / "designs" / "big.yaml").write_text(_replaced("revision: B", f"revision: {LONG_NUMBER}"),
                                                   encoding="utf-8")
    (tmp_path / "designs" / "leg.yaml").write_text(CONTRACT_TEXT, encoding="utf-8")
    code, out, err = run_cli("check", "designs", "--format", "json")
    rows = {row["file"]: (row["verdict"], row["exit_code"]) for row in json.loads(out)["designs"]}
    assert rows == {"designs/big.yaml": ("error", 2), "designs/leg.yaml": ("fail", 1)}
    assert code == 2 and "internal error" not in err


def test_a_nul_byte_in_a_file_reference_is_a_located_error(contract_data, write_design, run_cli):
    contract_data["devices"]["demo-sj650"] = "dev\x00.yaml"
    design = write_design(contract_data)
    code, _, err = run_cli("check", design)
    assert code == 2
    assert err.strip().startswith(str(design)), err
    assert err.strip().endswith('devices.demo-sj650: device file "dev\\x00.yaml": a file name may not contain a NUL '
                                "character"), err


@pytest.mark.parametrize("name", ["$$", r"$\foo$", "$" + "{" * 40 + "x" + "}" * 40 + "$", r"$\frac{a}{b}$"])
def test_mathtext_in_a_point_name_is_drawn_as_text(tmp_path, monkeypatch, run_cli, name):
    pytest.importorskip("matplotlib")
    monkeypatch.chdir(tmp_path)
    (tmp_path / "devices").mkdir()
    (tmp_path / "devices" / "demo-sic1200.yaml").write_bytes((EXAMPLES / "devices" / "demo-sic1200.yaml").read_bytes())
    shutil.copytree(EXAMPLES / "policies", tmp_path / "policies")
    design = (EXAMPLES / "solar-string-sic-leg.yaml").read_text(encoding="utf-8")
    (tmp_path / "leg.yaml").write_text(design.replace("name: string-input soft start", f"name: {json.dumps(name)}"),
                                       encoding="utf-8")
    code, _, err = run_cli("check", "leg.yaml", "--plot", "soa.svg", "--report", "html:leg.html")
    assert (code, err) == (1, "")   # exit 1: the solar leg fails its gate-off check; no internal error (3)
    assert (tmp_path / "soa.svg").stat().st_size > 0


def test_a_closed_stdout_is_an_error_not_a_crash(tmp_path):
    (tmp_path / "leg.yaml").write_text(CONTRACT_TEXT, encoding="utf-8")
    completed = _child("check", "leg.yaml", "--format", "json", cwd=tmp_path, shell_suffix=" >&-")
    assert (completed.returncode, completed.stderr) == (
        2, "margincheck: standard output is closed, so the report cannot be shown; give --output PATH\n")


# ---- item 11: no character breaks XML or forges a line -----------------------------------------------------

def test_noncharacters_in_the_title_leave_junit_well_formed(tmp_path, contract_data, write_design, run_cli):
    contract_data["design"]["title"] = "leg \ufffe\uffff \u2028 end"
    design = write_design(contract_data)
    code, out, _ = run_cli("check", design, "--format", "junit")
    assert code == 1
    root = ElementTree.fromstring(out.encode("utf-8"))
    title = next(item.get("value") for item in root.iter("property") if item.get("name") == "title")
    assert title == "leg \\ufffe\\uffff \\u2028 end"


@pytest.mark.parametrize("separator", ["\\L", "\\P", "\\N", "\\v", "\\x1c", "\\r"])
def test_a_line_separator_in_a_value_cannot_forge_an_error_line(tmp_path, monkeypatch, run_cli, separator):
    monkeypatch.chdir(tmp_path)  # the separator is a YAML escape: U+2028, U+2029, NEL, VT, FS, CR
    forged = f'r_off: "2 V{separator}leg.yaml:1:1: everything: fine"}}'
    (tmp_path / "leg.yaml").write_text(_replaced("r_off: 2 ohm}", forged), encoding="utf-8")
    code, _, err = run_cli("check", "leg.yaml")
    assert code == 2
    assert len(err.splitlines()) == 1, err
    assert err.startswith('leg.yaml:35:75: switches[0].gate_drive.r_off: expected a resistance such as "2.2 ohm", '
                          'got "2 V\\'), err


@pytest.mark.parametrize("output_format", ["text", "markdown", "html", "junit"])
def test_line_separators_are_escaped_in_every_text_format(contract_data, write_design, run_cli, output_format):
    contract_data["design"]["title"] = "leg\u2028forged\u2029line"
    _, out, _ = run_cli("check", write_design(contract_data), "--format", output_format)
    assert "\u2028" not in out and "\u2029" not in out and "u2028forged" in out and "u2029line" in out


# ---- item 12: batch report names are unique and confined ---------------------------------------------------

def test_batch_report_names_are_unique_and_confined(tmp_path, monkeypatch, run_cli):
    monkeypatch.chdir(tmp_path)
    for folder, name in [("a", "x.yaml"), ("b", "x.yaml"), ("c", "x-2.yaml"), ("d", "X.yaml"), ("e", "...yaml")]:
        (tmp_path / "designs" / folder).mkdir(parents=True)
        (tmp_path / "designs" / folder / name).write_text(CONTRACT_TEXT, encoding="utf-8")
    code, _, err = run_cli("check", "designs", "--report", "html:out/{name}/review.html", "--report",
                           "json:out/{name}.json")
    assert code == 1, err
    written = sorted(str(path.relative_to(tmp_path)) for path in tmp_path.rglob("*") if path.suffix in (".html",
                                                                                                          ".json"))
    assert written == ["out/X-3.json", "out/X-3/review.html", "out/design.json", "out/design/review.html",
                       "out/x-2-2.json", "out/x-2-2/review.html", "out/x-2.json", "out/x-2/review.html",
                       "out/x.json", "out/x/review.html"]
