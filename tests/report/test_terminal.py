"""The terminal report: words not colour, NO_COLOR, 80 columns, untrusted text shown literally."""

import re

import pytest

from margincheck.checking import check_file
from margincheck.report import terminal
from tests.conftest import CONTRACT_FILE, EXAMPLES

ANY_ESCAPE = re.compile(r"\x1b\[")
COLOUR_ESCAPE = re.compile(r"\x1b\[[\d;]*?(?:3\d|4\d|9\d|10\d)(?:;[\d;]*)?m")


def _render(path, capsys) -> str:
    terminal.render(check_file(path), __import__("sys").stdout)
    return capsys.readouterr().out


def test_status_words_verdict_and_cautions(capsys):
    out = _render(CONTRACT_FILE, capsys)
    assert "FAIL" in out and "PASS" in out
    assert out.index("Q1: switch") < out.index("Q2: switch")  # the subject with a failure comes first
    assert re.search(r"margin -5\d\.\d%", out)
    assert "corner: bus_voltage 420 V, turn_off_current 40 A, loop_inductance 30 nH" in out
    assert "store 8.82 J at 420 V" in out
    assert out.rstrip().splitlines()[-2].startswith("verdict")
    assert out.rstrip().splitlines()[-1] == "exit code    1"
    assert "qualified review" in out


def test_fits_an_80_column_log_without_escapes(capsys, monkeypatch):
    monkeypatch.setenv("COLUMNS", "80")
    out = _render(CONTRACT_FILE, capsys)
    assert not ANY_ESCAPE.search(out)  # not a terminal: plain text
    assert max(len(line.rstrip()) for line in out.splitlines()) <= 80


def test_no_color_is_honoured_even_when_colour_is_forced(capsys, monkeypatch):
    monkeypatch.setenv("FORCE_COLOR", "1")
    coloured = _render(CONTRACT_FILE, capsys)
    assert COLOUR_ESCAPE.search(coloured)
    monkeypatch.setenv("NO_COLOR", "1")
    plain = _render(CONTRACT_FILE, capsys)
    assert not COLOUR_ESCAPE.search(plain)
    assert "FAIL" in plain


@pytest.mark.parametrize("example, word", [
    ("solar-string-sic-leg.yaml", "MARGINAL"), ("charger-leg-draft.yaml", "NOT EVALUATED")])
def test_other_statuses_are_spelled_out(capsys, example, word):
    assert word in _render(EXAMPLES / example, capsys)


def test_untrusted_title_is_shown_literally(capsys, write_design, contract_data):
    contract_data["design"]["title"] = "[bold red]fake PASS[/] \x1b[2J"
    out = _render(write_design(contract_data), capsys)
    assert "[bold red]fake PASS[/] \\x1b[2J" in out
    assert "\x1b" not in out
