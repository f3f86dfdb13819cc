"""The terminal report: summary first, passing findings collapsed, identical switches grouped, toleranced
corners marked; words not colour, NO_COLOR, 80 columns, untrusted text shown literally."""

import re
import sys

import pytest

from margincheck.checking import check_file
from margincheck.report import terminal
from tests.conftest import CONTRACT_FILE, EXAMPLES

ANY_ESCAPE = re.compile(r"\x1b\[")
COLOUR_ESCAPE = re.compile(r"\x1b\[[\d;]*?(?:3\d|4\d|9\d|10\d)(?:;[\d;]*)?m")
SECTION = re.compile(r"^\S.* ─+$")

#: Line counts of each bundled example at 80 columns, summary and --details: a bound on the shape of the
#: report, not its wording. The default example must stay a two-minute read (at most 60 lines).
EXAMPLE_LINES = {
    "solar-string-sic-leg.yaml": (40, 60, 250, 360),
    "gan-48v-stage.yaml": (30, 60, 220, 340),
    "charger-leg-draft.yaml": (40, 80, 130, 220),
    "pump-drive-leg.yaml": (60, 120, 400, 600),
    "bench-leg-first-pulse.yaml": (50, 120, 200, 500),
    "igbt-motor-drive-leg.yaml": (30, 80, 200, 400),
}


@pytest.fixture(scope="module")
def solar_report():
    return check_file(EXAMPLES / "solar-string-sic-leg.yaml")


def _render(path_or_report, capsys, details=False) -> str:
    report = check_file(path_or_report) if not hasattr(path_or_report, "findings") else path_or_report
    terminal.render(report, sys.stdout, details=details)
    return capsys.readouterr().out


@pytest.fixture
def columns_80(monkeypatch):
    monkeypatch.setenv("COLUMNS", "80")


def test_status_words_verdict_and_cautions(capsys):
    out = _render(CONTRACT_FILE, capsys)
    assert "FAIL" in out and "PASS" in out
    assert out.index("Q1: switch") < out.index("Q2: switch")  # the subject with a failure comes first
    # 784.2 V against 0.8 x 650 V = 520 V: 264.2 V over, 50.8 % of the limit (hand arithmetic); the summary
    # takes the short form where the words would not fit one line of 80 columns
    assert "784.2 V <= 520 V fails by 264.2 V (50.8 %)" in " ".join(out.split())
    assert "store 8.82 J at 420 V" in out
    assert out.rstrip().splitlines()[-1].startswith("verdict")
    assert out.rstrip().endswith("exit code 1")
    assert "qualified review" in out


@pytest.mark.parametrize("example", sorted(EXAMPLE_LINES))
def test_every_example_fits_80_columns_in_a_bounded_number_of_lines(example, capsys, columns_80, monkeypatch):
    monkeypatch.chdir(EXAMPLES.parent)  # as the README runs it: margincheck check examples/...
    report = check_file(EXAMPLES.relative_to(EXAMPLES.parent) / example)
    low, high, low_details, high_details = EXAMPLE_LINES[example]
    for details, bounds in ((False, (low, high)), (True, (low_details, high_details))):
        lines = _render(report, capsys, details).rstrip("\n").splitlines()
        assert bounds[0] <= len(lines) <= bounds[1], (example, details, len(lines), "\n".join(lines))
        assert max(len(line) for line in lines) <= 80, (example, details)
        assert "verdict" in lines[-1] and "exit code" in lines[-1]


def test_the_summary_comes_first_and_lists_what_needs_attention(solar_report, capsys, columns_80):
    out = _render(solar_report, capsys)
    lines = out.splitlines()
    first_section = next(number for number, line in enumerate(lines) if SECTION.match(line))
    summary = " ".join(" ".join(lines[:first_section]).split())
    assert "verdict FAIL 2 fail, 6 marginal, 21 pass" in summary
    # -9.968 V against 0.9 x -8 V = -7.2 V: 2.768 V beyond the floor, 2.768/7.2 = 38.4 % (hand arithmetic)
    # (the short form: the words would not fit one line of 80 columns)
    assert "FAIL Q1, Q2 gate-off-voltage: -9.968 V >= -7.2 V fails by 2.768 V (38.4 %)" in summary
    assert "MARGINAL Q1, Q2 turn-off-overshoot: 927.2 V <= 960 V by 32.85 V (3.42 %)" in summary
    assert "MARGINAL Q1, Q2 soa: 60 A <= 60 A: at the limit" in summary
    assert "bus-voltage" not in summary  # a pass is not in the summary


def test_identical_switches_share_one_set_of_details(solar_report, capsys):
    out = _render(solar_report, capsys)
    sections = [line for line in out.splitlines() if SECTION.match(line)]
    assert sections[0].startswith("Q1, Q2: same inputs; switch, demo-sic1200 (sic-mosfet, kelvin source)")
    assert not any(line.startswith("Q2:") for line in sections)
    assert out.count("gate-off-voltage") == 2  # once in the summary, once in the shared details


def test_switches_that_differ_are_not_grouped(capsys):
    sections = [line for line in _render(CONTRACT_FILE, capsys).splitlines() if SECTION.match(line)]
    assert any(line.startswith("Q1: switch") for line in sections)
    assert any(line.startswith("Q2: switch") for line in sections)  # kelvin and shared source


def test_passing_findings_take_one_line_unless_details_are_asked_for(solar_report, capsys, columns_80):
    lines = _render(solar_report, capsys).splitlines()
    bus = next(number for number, line in enumerate(lines) if line.startswith("PASS     bus-voltage"))
    # 850 V against 0.75 x 1200 V = 900 V: 50 V, 5.56 % of the limit (hand arithmetic)
    assert lines[bus] == "PASS     bus-voltage           850 V <= 900 V by 50 V (5.56 %)"
    assert lines[bus + 1].startswith("PASS ")
    detailed = _render(solar_report, capsys, details=True).splitlines()
    bus = next(number for number, line in enumerate(detailed) if line.startswith("PASS     bus-voltage"))
    assert detailed[bus + 1].strip() == "V_bus,max <= steady_voltage * v_ds_max"
    assert any(line.strip().startswith("source: margincheck criterion") for line in detailed[bus:bus + 6])
    assert any("switching figures" in line for line in detailed)


def test_a_corner_lists_the_toleranced_inputs_by_end(solar_report, capsys, columns_80):
    out = " ".join(_render(solar_report, capsys).split())
    overshoot = out[out.index("turn-off-overshoot 927.2 V"):]
    corner = overshoot[overshoot.index("corner: "):overshoot.index("MARGINAL soa")]
    assert corner.startswith("corner: max bus_voltage, loop_inductance, v_gs_th, transconductance, gate_drive.on;"
                             " min gate_drive.off, opposite.v_gs_th")
    assert "c_iss" not in corner and "turn_off_current" not in corner  # exact inputs: not per finding


def test_details_give_corner_values_and_the_exact_inputs_once(solar_report, capsys, columns_80):
    out = " ".join(_render(solar_report, capsys, details=True).split())
    assert "corner: max bus_voltage 850 V, loop_inductance 8.4 nH," in out
    assert len(re.findall(r"(?<![.\w])c_iss 2\.8 nF", out)) == 1
    assert "exact inputs (one value in every corner): turn_off_current 60 A, c_iss 2.8 nF" in out


def test_a_point_between_the_ends_is_marked_interior_with_its_value(capsys, columns_80):
    """The threshold search of the cell rules tries the midpoint of v_gs_th (3 V to 4 V in the contract
    design's device): Q2's growing oscillation is worst there."""
    out = " ".join(_render(CONTRACT_FILE, capsys).split())
    oscillation = out[out.index("parasitic-oscillation 187.5 <= 10"):]
    assert "interior v_gs_th 3.5 V" in oscillation[:400]
    assert "fails by 177.5 (18.7× the limit)" in oscillation[:80]


def test_the_what_if_names_the_connection_as_designed(run_cli, monkeypatch):
    monkeypatch.setenv("COLUMNS", "80")
    code, out, _ = run_cli("check", CONTRACT_FILE, "--what-if-source", "2 nH")
    lines = out.splitlines()
    assert any(re.fullmatch(r" +Q1: kelvin -> shared +as designed +what-if", line) for line in lines)
    assert any(re.fullmatch(r" +Q2: shared -> kelvin +as designed +what-if", line) for line in lines)
    margins = lines[next(number for number, line in enumerate(lines) if line.strip().startswith("margins")):]
    assert re.fullmatch(r" +Q1 turn-off-overshoot +fail -50\.8 % +fail -\d+\.\d %", margins[3])
    for line in margins[1:]:
        if not line.strip() or "\u2500" in line:   # the end of the table: a blank line or the next section rule
            break
        label, *cells = re.split(r" {2,}", line.strip())
        assert len(cells) == 2 and all(re.fullmatch(r"(pass|marginal|fail|waived) [-+][\d.]+ %|not evaluated|n/a",
                                                    cell) for cell in cells), line


def test_fits_an_80_column_log_without_escapes(capsys, columns_80):
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
