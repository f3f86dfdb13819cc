"""``margincheck headroom``: the limits it reports hold when re-checked through the rules on their own, the
outcomes (limited, already failing, fails throughout, not limited, not searched), the JSON shape and the CLI.

Two small designs keep this fast: ``SMALL`` (exact inputs, so each cell simulation has one corner) and ``CHEAP``
(the same without c_oss, so no cell is simulated and only the arithmetic rules count).
"""

from __future__ import annotations

import dataclasses
import json

import pytest

from margincheck.design import load_design
from margincheck.findings import Status
from margincheck.headroom import (
    DOWN,
    LOOP_REACH,
    RESOLUTION,
    STRESS_FLOOR,
    UP,
    Outcome,
    find_headroom,
    headroom_rows,
    scaled_design,
)
from margincheck.intervals import Interval
from margincheck.rules import RULES, evaluate_design
from tests.conftest import EXAMPLES

SMALL = """\
format: margincheck/1
design:
  title: Small GaN half-bridge for the headroom tests (illustrative)
conditions:
  bus_voltage: {bus}
  turn_off_current: 30 A
commutation_loop:
  inductance: 1.0 nH
  resistance: 15 mohm
devices:
  demo-gan100:
    technology: gan-hemt
    ratings:
      v_ds_max: 100 V
      v_gs_max: 7 V
      v_gs_min: -4 V
      i_d_pulse: 120 A
    characteristics:
      v_gs_th: 1.5 V
      v_gs_th_hot: {{v_gs_th: 1.3 V, t_j: 150 degC}}
      transconductance: 50 S
      c_iss: 1.0 nF
      c_rss: 8 pF
{c_oss}      r_g_internal: 0.4 ohm
switches:
  - ref: Q1
    device: demo-gan100
    leg: HB
    source_connection: kelvin
    common_source_inductance: 0.1 nH
    driver_cmti: 300 kV/us
    gate_drive: {{on: {on}, off: 0 V, r_on: 15 ohm, r_off: 1 ohm}}
  - ref: Q2
    device: demo-gan100
    leg: HB
    source_connection: kelvin
    common_source_inductance: 0.1 nH
    driver_cmti: 300 kV/us
    gate_drive: {{on: 5 V, off: 0 V, r_on: 15 ohm, r_off: 1 ohm}}
capacitors:
  - ref: C1
    rated_voltage: 100 V
"""
#: The steady-voltage limit of the default policy: 0.75 * v_ds_max (design.md section 4).
STEADY_LIMIT = 0.75 * 100.0


def small_text(bus: str = "48 V", on: str = "5 V", simulated: bool = True) -> str:
    """The small design; without ``simulated`` it has no c_oss, so no cell simulation runs."""
    return SMALL.format(bus=bus, on=on, c_oss="      c_oss: 300 pF\n" if simulated else "")


@pytest.fixture(scope="module")
def folder(tmp_path_factory):
    return tmp_path_factory.mktemp("headroom")


def _design(folder, name: str, text: str):
    path = folder / name
    path.write_text(text, encoding="utf-8")
    return load_design(path)


def _limit(design, subject: str, parameter: str, direction: int = UP):
    rows = [row for row in headroom_rows(design, evaluate_design(design))
            if (row.subject, row.parameter, row.direction) == (subject, parameter, direction)]
    return find_headroom(design, rows).limits[0]


@pytest.fixture(scope="module")
def small(folder):
    return _design(folder, "small.yaml", small_text())


@pytest.fixture(scope="module")
def bus_limit(small):
    return _limit(small, "Q1", "bus_voltage")


def _at_bus(design, factor: float):
    """The design at ``factor`` times its bus voltage, evaluated through the rules (not the search code)."""
    bus = design.conditions.bus_voltage
    what_if = dataclasses.replace(design, conditions=dataclasses.replace(
        design.conditions, bus_voltage=Interval(bus.low * factor, bus.nominal * factor, bus.high * factor)))
    return {(finding.rule, finding.subject): finding for finding in evaluate_design(what_if)}


def test_at_the_highest_bus_voltage_every_counted_finding_of_the_switch_passes(small, bus_limit):
    assert bus_limit.outcome is Outcome.LIMITED
    at_design = _at_bus(small, 1.0)
    at_limit = _at_bus(small, bus_limit.factor)
    counted = [key for key, finding in at_design.items() if key[1] == "Q1" and finding.status is not
               Status.NOT_EVALUATED]
    assert counted and set(counted) == set(bus_limit.row.counted)
    assert {key: at_limit[key].status for key in counted if at_limit[key].status not in
            (Status.PASS, Status.MARGINAL)} == {}


def test_one_percent_above_the_highest_bus_voltage_the_named_rule_fails(small, bus_limit):
    binding = bus_limit.binding
    above = _at_bus(small, bus_limit.factor * 1.01)
    assert above[(binding.rule, binding.subject)].status is Status.FAIL, binding


def test_the_limit_is_bisected_to_the_stated_resolution(bus_limit):
    assert 1.0 < bus_limit.beyond / bus_limit.factor <= 1.0 + RESOLUTION


def test_the_steady_voltage_limit_is_bracketed_when_nothing_else_counts(folder):
    """Without a cell simulation the bus is bounded by the bus-voltage rule alone: 0.75 * 100 V."""
    design = _design(folder, "cheap.yaml", small_text(simulated=False))
    limit = _limit(design, "Q1", "bus_voltage")
    assert limit.binding.rule == "bus-voltage"
    assert 48.0 * limit.factor <= STEADY_LIMIT <= 48.0 * limit.beyond
    assert limit.value.high == pytest.approx(48.0 * limit.factor)


def test_a_design_above_its_limit_is_already_failing_with_the_highest_passing_value_below(folder):
    design = _design(folder, "over.yaml", small_text(bus="80 V", simulated=False))
    headroom = find_headroom(design, [row for row in headroom_rows(design, evaluate_design(design))
                                      if row.parameter == "bus_voltage" and row.subject == "Q1"])
    limit = headroom.limits[0]
    assert limit.outcome is Outcome.ALREADY_FAILING
    assert 80.0 * limit.factor <= STEADY_LIMIT <= 80.0 * limit.beyond < 80.0
    assert (limit.binding.rule, limit.binding.subject) == ("bus-voltage", "Q1")
    assert headroom.exit_code == 1


def test_a_fail_no_bus_voltage_cures_fails_throughout_the_searched_range(folder):
    """An on-level above 0.9 * v_gs_max fails at every bus voltage."""
    design = _design(folder, "gate.yaml", small_text(on="7 V", simulated=False))
    limit = _limit(design, "Q1", "bus_voltage")
    assert limit.outcome is Outcome.FAILS_THROUGHOUT
    assert limit.beyond == STRESS_FLOOR and limit.factor is None
    assert limit.binding.rule == "gate-on-voltage"


def test_a_faster_turn_on_is_limited_by_a_finding_of_the_leg(small):
    limit = _limit(small, "Q1", "r_on", DOWN)
    assert limit.outcome is Outcome.LIMITED
    assert limit.factor < 1.0 and limit.beyond < limit.factor
    assert limit.binding.subject in ("Q1", "Q2") and limit.binding.status is Status.FAIL


def test_findings_not_evaluated_at_the_design_are_not_counted_and_nothing_else_limits_the_loop(folder):
    """Without c_oss no cell is simulated: no counted finding reads the loop inductance."""
    design = _design(folder, "cheap.yaml", small_text(simulated=False))
    limit = _limit(design, "Q1", "loop_inductance")
    assert "turn-off-overshoot" in {finding.rule for finding in limit.row.not_counted}
    assert all(rule != "turn-off-overshoot" for rule, _ in limit.row.counted)
    assert limit.outcome is Outcome.NOT_LIMITED and limit.factor == LOOP_REACH and limit.binding is None
    assert limit.at_limit.status in (Status.PASS, Status.MARGINAL)


def test_an_input_the_design_does_not_give_is_not_searched(folder):
    design = _design(folder, "no-current.yaml", small_text(simulated=False).replace("  turn_off_current: 30 A\n", ""))
    limit = _limit(design, "Q1", "turn_off_current")
    assert limit.outcome is Outcome.NOT_SEARCHED
    assert "no turn-off current" in limit.reason


def test_a_what_if_design_scales_the_whole_interval_and_starts_with_an_empty_memo():
    design = load_design(EXAMPLES / "gan-48v-stage.yaml")
    RULES["bus-voltage"].check(design.switches[0], design)
    what_if = scaled_design(design, "bus_voltage", 1.5)
    bus = what_if.conditions.bus_voltage
    assert (bus.low, bus.nominal, bus.high) == pytest.approx((60.0, 72.0, 81.0))
    assert bus.distribution == design.conditions.bus_voltage.distribution
    assert what_if.memo == {} and design.memo
    resistor = scaled_design(design, "r_off", 0.5, "Q2")
    assert resistor.switches[1].gate_drive.r_off.nominal == pytest.approx(0.5)
    assert resistor.switches[0].gate_drive == design.switches[0].gate_drive


@pytest.fixture(scope="module")
def cheap_file(folder):
    path = folder / "cli-cheap.yaml"
    path.write_text(small_text(simulated=False), encoding="utf-8")
    return path


def test_json_report_shape(cheap_file, run_cli):
    code, out, _ = run_cli("headroom", cheap_file, "--format", "json")
    assert code == 0 and out.isascii()
    report = json.loads(out)
    assert report["format"] == "margincheck-headroom/1"
    assert report["evaluations"]["rule_evaluations"] > report["evaluations"]["designs"] > 1
    first = report["limits"][0]
    assert (first["subject"], first["parameter"], first["direction"], first["outcome"]) == \
        ("Q1", "bus_voltage", "highest", "limited")
    assert first["value"]["high"]["units"] == "V"
    assert first["value"]["high"]["magnitude"] == pytest.approx(48.0 * first["factor"])
    assert first["binding"]["rule"] == "bus-voltage" and first["binding"]["status"] == "fail"
    assert {"rule": "turn-off-overshoot", "subject": "Q1", "missing": ["devices.demo-gan100.characteristics.c_oss"]} \
        in first["not_counted"]
    assert {item["parameter"] for item in report["design_limits"]} == {"bus_voltage", "turn_off_current"}
    assert report["cautions"] and "LETHAL" in " ".join(report["cautions"])


def test_text_report_fits_80_columns_and_ends_with_the_cautions(cheap_file, run_cli):
    code, out, _ = run_cli("headroom", cheap_file)
    assert code == 0
    assert max(len(line) for line in out.splitlines()) <= 80
    assert "highest bus voltage" in out and "binds: bus-voltage for Q1" in out
    assert out.index("cautions") > out.index("capacitors") and out.rstrip().endswith("exit code    0")


def test_untrusted_text_is_shown_escaped(folder, run_cli):
    path = folder / "hostile.yaml"
    text = small_text(simulated=False).replace("title: Small", 'title: "\\e[2J[red]x[/red]" #', 1)
    path.write_text(text, encoding="utf-8")
    code, out, _ = run_cli("headroom", path)
    assert code == 0 and "\x1b" not in out and "\\x1b[2J[red]x[/red]" in out


def test_cli_exit_code_is_1_when_the_design_already_fails(folder, run_cli):
    path = folder / "cli-over.yaml"
    path.write_text(small_text(bus="80 V", simulated=False), encoding="utf-8")
    code, out, _ = run_cli("headroom", path)
    assert code == 1 and "ALREADY FAILING" in out


def test_bad_input_exits_2_with_a_located_message(folder, run_cli):
    path = folder / "bad.yaml"
    path.write_text(small_text(bus="48 A", simulated=False), encoding="utf-8")
    code, out, err = run_cli("headroom", path)
    assert code == 2 and out == ""
    assert f"{path}:5:" in err and "conditions.bus_voltage" in err


def test_output_file_is_written_and_never_over_an_input(cheap_file, folder, run_cli):
    target = folder / "out" / "headroom.json"
    assert run_cli("headroom", cheap_file, "--format", "json", "--output", target)[0] == 0
    assert json.loads(target.read_text(encoding="utf-8"))["format"] == "margincheck-headroom/1"
    code, _, err = run_cli("headroom", cheap_file, "--output", cheap_file)
    assert code == 2 and "over an input file" in err
