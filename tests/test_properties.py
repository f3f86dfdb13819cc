"""Properties every rule must have, over generated valid designs (hypothesis):

- monotonicity: more bus voltage, loop inductance or turn-off current, or a lower rating, never raises a
  margin, so a fail never turns into a pass;
- unit-scale invariance: the same design written in mV/uH/kA/megaohm/pF/mS/K gives the same findings;
- order invariance: permuting switches, capacitors, devices or mapping keys changes nothing;
- no finding is ever pass or marginal with a non-finite value, limit or margin.
"""

from __future__ import annotations

import math
import os
import random
import tempfile
from pathlib import Path

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from margincheck.checking import check_file
from margincheck.findings import Status
from tests.strategies import SCALED_UNITS, design_data, design_specs, design_text, scaled

#: Examples per property: 25 in CI; raise it for a long run by hand, e.g.
#: MARGINCHECK_PROPERTY_EXAMPLES=400 python -m pytest tests/test_properties.py -q
PROPERTY_EXAMPLES = int(os.environ.get("MARGINCHECK_PROPERTY_EXAMPLES", "6"))  # each example simulates a cell
SETTINGS = settings(max_examples=PROPERTY_EXAMPLES, deadline=None, suppress_health_check=[HealthCheck.too_slow])
PASSING = (Status.PASS, Status.MARGINAL)


def _findings(data: dict) -> dict:
    with tempfile.TemporaryDirectory() as folder:
        path = Path(folder) / "generated.yaml"
        path.write_text(design_text(data), encoding="utf-8")
        findings = check_file(path).findings
    _assert_nothing_non_finite_passes(findings)
    return {(finding.rule, finding.subject): finding for finding in findings}


def _assert_nothing_non_finite_passes(findings) -> None:
    for finding in findings:
        if finding.status in PASSING:
            assert all(value is not None and math.isfinite(value)
                       for value in (finding.value, finding.limit, finding.margin)), finding


#: Rules whose value rises with the bus voltage, the loop inductance and the current in every cell. The
#: simulated gate extremes, dv/dt, the idle gate and the growth of a mode need not: a larger loop slows the
#: voltage edge and so the Miller injection, and an oscillation can lock in at one current and not another.
MONOTONE_IN_STRESS = ("bus-voltage", "turn-off-current", "capacitor-voltage", "turn-off-overshoot")


#: The simulated turn-off peak is not monotone in the loop inductance in every cell: the current fall can slow
#: as the loop grows (hypothesis found a GaN cell whose peak falls from 0.5 nH to 0.77 nH, the first-order
#: V_bus + L·di/dt with it; tests/rules/test_transient_rules.py keeps that case). For the loop the property
#: holds for the closed-form rules; the peak itself is checked against the independent reference, the
#: closed forms and a dense grid (tests/test_statistics.py).
CLOSED_FORM_IN_STRESS = ("bus-voltage", "turn-off-current", "capacitor-voltage")

#: Rules whose value is a simulated waveform figure, and how far their margin may move the wrong way for a tiny
#: change of stress: the integrator's relative tolerance per step (1e-3 of the limit; hypothesis found a rise of
#: 7e-7 when the current rose by a hair on an already failing design: step-size noise, not physics).
SIMULATED = ("turn-off-overshoot",)
_SIMULATION_SLACK = 1e-3


def _assert_no_margin_rises(before: dict, after: dict, rules: tuple[str, ...] | None = None) -> None:
    assert before.keys() == after.keys()
    for key, old in before.items():
        if rules is not None and key[0] not in rules:
            continue
        new = after[key]
        if old.status is Status.FAIL:
            assert new.status not in PASSING, (key, old, new)
        if old.margin is not None and new.margin is not None:
            slack = _SIMULATION_SLACK if key[0] in SIMULATED else 1e-12
            assert new.margin <= old.margin + slack, (key, old.margin, new.margin)


@pytest.mark.parametrize("quantity", ["bus_voltage", "loop_inductance", "turn_off_current"])
@SETTINGS
@given(spec=design_specs(), increase=st.floats(0.0, 1.0))
def test_more_stress_never_raises_a_margin(quantity, spec, increase):
    rules = CLOSED_FORM_IN_STRESS if quantity == "loop_inductance" else MONOTONE_IN_STRESS
    _assert_no_margin_rises(_findings(design_data(spec)),
                            _findings(design_data(scaled(spec, **{quantity: 1.0 + increase}))), rules)


@pytest.mark.parametrize("rating", ["v_ds_max", "v_gs_max", "v_gs_min", "i_d_pulse"])
@SETTINGS
@given(spec=design_specs(), decrease=st.floats(0.0, 0.5))
def test_a_lower_rating_never_raises_a_margin(rating, spec, decrease):
    _assert_no_margin_rises(_findings(design_data(spec)),
                            _findings(design_data(scaled(spec, **{rating: 1.0 - decrease}))))


@SETTINGS
@given(spec=design_specs())
def test_a_lower_capacitor_rating_never_raises_a_margin(spec):
    lowered = spec.__class__(**{**spec.__dict__, "capacitors": tuple(
        (ref, rated * 0.9, capacitance) for ref, rated, capacitance in spec.capacitors)})
    _assert_no_margin_rises(_findings(design_data(spec)), _findings(design_data(lowered)))


#: Rules whose value comes from the cell simulation: its adaptive steps follow the last bits of the inputs, so
#: two spellings of one value agree to the accuracy checked against the reference (2 %), not to the last bit.
SIMULATED = ("turn-off-overshoot", "gate-on-voltage", "gate-off-voltage", "spurious-turn-on", "driver-cmti",
             "recovery-overshoot", "parasitic-oscillation", "junction-temperature", "soa", "avalanche-energy")


def _same_findings(first: dict, second: dict, relative: float) -> None:
    assert first.keys() == second.keys()
    for key, one in first.items():
        other = second[key]
        tolerance = max(relative, 0.02) if key[0] in SIMULATED else relative   # the 2 % of tests/reference
        for name in ("value", "limit", "margin"):
            a, b = getattr(one, name), getattr(other, name)
            assert (a is None) == (b is None), (key, name)
            if a is not None:
                assert a == pytest.approx(b, rel=tolerance, abs=1e-9 if key[0] in SIMULATED else 1e-12), (key, name)
        if key[0] not in SIMULATED or one.value is None:
            assert one.status is other.status, key
        elif one.status is not other.status:   # only where equal values sit on a status boundary
            assert {one.status, other.status} <= {Status.PASS, Status.MARGINAL}, key


@SETTINGS
@given(spec=design_specs())
def test_findings_do_not_depend_on_the_units_written(spec):
    _same_findings(_findings(design_data(spec)), _findings(design_data(spec, SCALED_UNITS)), 1e-9)


def _shuffled(data, generator: random.Random):
    if isinstance(data, dict):
        items = list(data.items())
        generator.shuffle(items)
        return {key: _shuffled(value, generator) for key, value in items}
    return data


@SETTINGS
@given(spec=design_specs(), seed=st.integers(0, 2**32 - 1))
def test_order_of_switches_capacitors_and_keys_changes_nothing(spec, seed):
    generator = random.Random(seed)
    data = design_data(spec)
    permuted = _shuffled(data, generator)
    for listed in ("switches", "capacitors"):
        items = [_shuffled(item, generator) for item in data[listed]]
        generator.shuffle(items)
        permuted[listed] = items
    permuted["format"] = "margincheck/1"
    _same_findings(_findings(data), _findings(permuted), 0.0)
