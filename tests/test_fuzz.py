"""Fuzzing the command line with mutated copies of the contract design file.

Every case must end in a report (exit 0 or 1, output on stdout, nothing on stderr) or in exit 2 with one
located line per problem on stderr; never a traceback or an internal error, never a hang. No case is timed:
a hang is caught by a generous per-case timeout (``CASE_TIMEOUT``) that dumps every thread's traceback and
ends the process, so a loaded CI machine can slow a case down without failing it. CI runs a small budget;
for a long run by hand:

    MARGINCHECK_FUZZ_EXAMPLES=10000 python -m pytest -m fuzz -q
"""

from __future__ import annotations

import contextlib
import faulthandler
import io
import os
import re
import tempfile
from pathlib import Path

import pytest
import yaml
from hypothesis import HealthCheck, event, given, settings
from hypothesis import strategies as st

from margincheck.cli import main
from margincheck.loading import load_document
from tests.conftest import CONTRACT_FILE, EXAMPLES

pytestmark = pytest.mark.fuzz



def _thermal_seed() -> bytes:
    """The solar example with its device file written inline, so that the thermal, SOA and short-circuit
    fields are mutated too (the file must stand alone in the fuzzer's folder)."""
    # read with margincheck's own YAML 1.2 loader: PyYAML's 1.1 resolver would turn the gate_drive keys
    # on/off into booleans
    design = load_document(EXAMPLES / "solar-string-sic-leg.yaml").data
    device = load_document(EXAMPLES / "devices" / "demo-sic1200.yaml").data
    design["devices"] = {"demo-sic1200": device}
    design["derating"] = "default"  # its policy file stays behind in examples/
    return yaml.safe_dump(design, sort_keys=False, allow_unicode=True).encode("utf-8")


SEEDS = (CONTRACT_FILE.read_bytes(), _thermal_seed())
FUZZ_EXAMPLES = int(os.environ.get("MARGINCHECK_FUZZ_EXAMPLES", "150"))
CASE_TIMEOUT = 60  # seconds: a hang, far beyond any slow case

VALUES = ["5 V", "3 A", "-1 nH", "0 ohm", "1e999 V", "nan", ".nan", ".inf", "-.inf", "", "~", "true", "no", "on",
          "[", "{", "}", "]", "&a 1", "*a", "*missing", "!!str 5", "!!python/object:os.system", "!custom 3",
          "'", '"', "|", ">", "- 1", "? x", "1:2", "0x1F", "012", "2026-12-01", "5 %", "-5 %", "400 V/ns",
          "\u00b5", "\u202e", "\x1b[2J", "\x00", "\t", "a" * 300, "100 degC", "-300 degC", "5 furlong",
          "{min: 5 V, max: 1 V}", "{nominal: 1 V, tolerance: 5 %, max: 2 V}", "[1, 2, 3]", "{a: 1}"]
UNITS = ["V", "A", "nH", "uH", "mH", "ohm", "Ω", "nF", "uF", "pF", "S", "degC", "K", "A/ns", "kHz", "%", "", "W"]

LOCATED = re.compile(r"^\S.*?: .+$")


@st.composite
def mutated(draw) -> bytes:
    lines = draw(st.sampled_from(SEEDS)).decode("utf-8").splitlines(keepends=True)
    for _ in range(draw(st.integers(1, 4))):
        operation = draw(st.sampled_from(["value", "unit", "delete", "duplicate", "swap", "indent", "insert",
                                          "truncate"]))
        index = draw(st.integers(0, len(lines) - 1)) if lines else 0
        if not lines:
            break
        line = lines[index]
        if operation == "value" and ":" in line:
            head = line.split(":", 1)[0]
            lines[index] = f"{head}: {draw(st.sampled_from(VALUES) | st.text(max_size=20))}\n"
        elif operation == "unit":
            lines[index] = re.sub(r"(\d) ([A-Za-z%/Ω]+)", lambda m: f"{m[1]} {draw(st.sampled_from(UNITS))}",
                                  line, count=1)
        elif operation == "delete":
            del lines[index]
        elif operation == "duplicate":
            lines.insert(index, line)
        elif operation == "swap":
            other = draw(st.integers(0, len(lines) - 1))
            lines[index], lines[other] = lines[other], lines[index]
        elif operation == "indent":
            lines[index] = " " * draw(st.integers(0, 6)) + line.lstrip(" ")
        elif operation == "insert":
            lines.insert(index, draw(st.text(max_size=30)) + "\n")
        else:
            lines = lines[:index]
    data = "".join(lines).encode("utf-8", errors="surrogatepass")
    if draw(st.booleans()) and data:  # raw byte damage: encodings, NUL, lone continuation bytes
        position = draw(st.integers(0, len(data) - 1))
        data = data[:position] + draw(st.binary(max_size=4)) + data[position + 1:]
    return data


@pytest.fixture(scope="module")
def case_file():
    with tempfile.TemporaryDirectory() as folder:
        yield Path(folder) / "fuzzed.yaml"


def _run(arguments: list[str]) -> tuple[int, str, str]:
    out, err = io.StringIO(), io.StringIO()
    faulthandler.dump_traceback_later(CASE_TIMEOUT, exit=True)  # a hang ends the run, with where it hung
    try:
        with contextlib.redirect_stdout(out), contextlib.redirect_stderr(err):
            code = main(arguments)
    finally:
        faulthandler.cancel_dump_traceback_later()
    return code, out.getvalue(), err.getvalue()


@settings(max_examples=FUZZ_EXAMPLES, deadline=None, suppress_health_check=list(HealthCheck))
@given(content=mutated(), output_format=st.sampled_from(["text", "json"]))
def test_a_mutated_design_gives_a_report_or_located_errors(case_file, content, output_format):
    case_file.write_bytes(content)
    code, out, err = _run(["check", str(case_file), "--format", output_format])
    event(f"exit code {code}")  # the outcome mix, shown by --hypothesis-show-statistics
    assert "Traceback" not in out + err
    assert code in (0, 1, 2), err
    if code == 2:
        assert out == ""
        lines = err.splitlines()
        assert lines and all(line.startswith(str(case_file)) and LOCATED.match(line) for line in lines), err
    else:
        assert out and err == "", err
