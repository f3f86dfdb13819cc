"""Rules exactly at a derating limit, just inside and just beyond it; monotonicity; never a pass for what
could not be computed. Expected values are hand arithmetic on the default policy (design.md section 4)."""

import dataclasses
import math

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from margincheck.checking import check_file
from margincheck.design import load_design
from margincheck.findings import Status
from margincheck.intervals import Interval
from margincheck.rules import RULES


def _finding(path, rule, subject="Q1"):
    return next(f for f in check_file(path).findings if (f.rule, f.subject) == (rule, subject))


@pytest.fixture
def simple_design(contract_data):
    """The contract design with exact inputs, so that a limit can be hit exactly."""
    data = contract_data
    data["conditions"]["bus_voltage"] = "420 V"
    data["commutation_loop"]["inductance"] = "25 nH"
    data["switches"] = data["switches"][:1]
    data["switches"][0]["turn_off_di_dt"] = "4 A/ns"  # sets the simulated fall; first order 420 + 25 nH x 4 A/ns
    return data


@pytest.mark.parametrize("v_ds_max, status", [
    ("600 V", Status.PASS),       # 450 V limit, margin 6.7 %
    ("561 V", Status.MARGINAL),   # 420.75 V limit, just inside
    ("560 V", Status.MARGINAL),   # 420 V limit exactly: margin 0 is marginal, not fail
    ("559 V", Status.FAIL),       # 419.25 V limit, just beyond
])
def test_bus_voltage_around_its_limit(simple_design, write_design, v_ds_max, status):
    simple_design["devices"]["demo-sj650"]["ratings"]["v_ds_max"] = v_ds_max
    simple_design["switches"][0]["turn_off_di_dt"] = "0.1 A/ns"
    assert _finding(write_design(simple_design), "bus-voltage").status is status


@pytest.mark.parametrize("factor, status", [(1.0001, Status.MARGINAL), (1.0, Status.MARGINAL), (0.9999, Status.FAIL)])
def test_turn_off_overshoot_around_its_limit(simple_design, write_design, factor, status):
    """The rating is set so that 0.8 x v_ds_max lands just above, on and just below the simulated peak."""
    peak = _finding(write_design(simple_design), "turn-off-overshoot").value
    simple_design["devices"]["demo-sj650"]["ratings"]["v_ds_max"] = f"{peak / 0.8 * factor!r} V"
    finding = _finding(write_design(simple_design, "rated.yaml"), "turn-off-overshoot")
    assert finding.value == pytest.approx(peak, rel=1e-12)
    assert finding.details["first_order_peak"].value == pytest.approx(520.0)   # 420 V + 25 nH x 4 A/ns
    assert finding.status is status


@pytest.mark.parametrize("off_level, status", [
    ("-17.9 V", Status.MARGINAL), ("-18 V", Status.MARGINAL), ("-18.1 V", Status.FAIL)])
def test_gate_off_level_around_its_lower_limit(simple_design, write_design, off_level, status):
    simple_design["switches"][0]["gate_drive"] = {"on": "15 V", "off": off_level, "r_on": "5 ohm", "r_off": "2 ohm"}
    assert _finding(write_design(simple_design), "gate-off-voltage").status is status


def test_a_tolerance_landing_on_the_limit_is_marginal_despite_float_rounding(contract_data, write_design):
    # 400 V + 5 % is 420.00000000000006 V in floating point; 0.8 x 525 V = 420 V.
    contract_data["capacitors"][0]["rated_voltage"] = "525 V"
    finding = _finding(write_design(contract_data), "capacitor-voltage", "C1")
    assert finding.status is Status.MARGINAL
    assert finding.margin == pytest.approx(0.0, abs=1e-12)


@settings(max_examples=6, deadline=None)
@given(smaller=st.floats(15e-9, 100e-9), extra=st.floats(0.0, 100e-9))  # above the 13 nH of source leads
def test_more_loop_inductance_never_gives_more_margin(smaller, extra):
    from tests.conftest import CONTRACT_FILE

    design = load_design(CONTRACT_FILE)
    check = RULES["turn-off-overshoot"].check
    switch = design.switches[0]
    low = check(switch, dataclasses.replace(design, loop_inductance=Interval.exact(smaller)))
    high = check(switch, dataclasses.replace(design, loop_inductance=Interval.exact(smaller + extra)))
    assert high.margin <= low.margin + 1e-12


@settings(max_examples=5, deadline=None)
@given(current=st.floats(5.0, 100.0), extra=st.floats(0.0, 100.0))  # plateau stays below the 14.25 V on-level
def test_more_turn_off_current_never_gives_more_margin(current, extra):
    from tests.conftest import CONTRACT_FILE

    design = load_design(CONTRACT_FILE)
    for rule in ("turn-off-overshoot", "turn-off-current"):
        check = RULES[rule].check
        results = [check(design.switches[0], dataclasses.replace(
            design, conditions=dataclasses.replace(design.conditions, turn_off_current=Interval.exact(value))))
            for value in (current, current + extra)]
        assert results[1].margin <= results[0].margin + 1e-12


def test_a_missing_input_is_not_evaluated_and_named(contract_data, write_design):
    del contract_data["conditions"]["turn_off_current"]
    finding = _finding(write_design(contract_data), "turn-off-overshoot")
    assert finding.status is Status.NOT_EVALUATED
    assert finding.missing == ("conditions.turn_off_current",)
    assert finding.value is None and finding.margin is None


def test_a_one_sided_interval_missing_the_needed_end_is_not_evaluated(contract_data, write_design):
    contract_data["conditions"]["turn_off_current"] = {"min": "10 A"}  # the maximum is what matters
    finding = _finding(write_design(contract_data), "turn-off-current")
    assert finding.status is Status.NOT_EVALUATED
    assert finding.missing == ("conditions.turn_off_current (maximum)",)


def test_a_model_out_of_range_is_not_evaluated(contract_data, write_design):
    # An on-level of 5 V cannot carry 40 A: the plateau is 4 V + 40 A / 20 S = 6 V.
    contract_data["switches"][0]["gate_drive"]["on"] = "5 V"
    finding = _finding(write_design(contract_data), "turn-off-overshoot")
    assert finding.status is Status.NOT_EVALUATED
    assert "plateau" in finding.note


def test_a_zero_gate_resistance_is_the_abrupt_limit_not_a_crash(contract_data, write_design):
    """No gate resistance and no common-source inductance: the channel stops at once, the abrupt switch-off
    limit, which the simulation evaluates (the first-order cross-check's slope is infinite)."""
    device = contract_data["devices"]["demo-sj650"]
    del device["characteristics"]["r_g_internal"]
    contract_data["switches"][0]["gate_drive"]["r_off"] = "0 ohm"
    del contract_data["switches"][0]["common_source_inductance"]  # taken as 0 nH
    finding = _finding(write_design(contract_data), "turn-off-overshoot")
    assert finding.status is Status.FAIL
    assert math.isfinite(finding.value) and finding.value > 420.0


def test_assumed_zero_common_source_inductance_is_said(contract_data, write_design):
    del contract_data["switches"][1]["common_source_inductance"]
    finding = _finding(write_design(contract_data), "turn-off-overshoot", "Q2")
    assert "common_source_inductance not given: taken as 0 nH" in finding.note


def test_a_measured_di_dt_does_not_skip_the_carry_check(contract_data, write_design, run_cli):
    """Issue 11, item 6: with a measured turn_off_di_dt the on-level must still reach the plateau
    V_th + I/g_fs = 4 V + 40 A / 20 S = 6 V; at 5 V the switch cannot carry the current: not evaluated, never a
    pass, and the check exits 1."""
    contract_data["switches"][0]["gate_drive"]["on"] = "5 V"
    contract_data["switches"][0]["turn_off_di_dt"] = "4 A/ns"
    path = write_design(contract_data)
    finding = _finding(path, "turn-off-overshoot")
    assert finding.status is Status.NOT_EVALUATED
    assert "the on-level does not reach the plateau V_th + I/g_fs =" in finding.note
    code, out, _ = run_cli("check", path)
    assert code == 1 and "NOT EVALUATED turn-off-overshoot" in out
