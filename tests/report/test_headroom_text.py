"""How a margin reads: the headroom in the quantity's own unit and as a share of the limit (hand arithmetic)."""

import pytest

from margincheck.findings import Bound, Finding, Status, margin_of
from margincheck.report.common import finding_summary, headroom, result_text, short_headroom


def _finding(value, limit, kind="voltage", bound=Bound.UPPER, margin=None) -> Finding:
    margin = float(margin_of(value, limit, bound)) if margin is None else margin
    return Finding(rule="bus-voltage", subject="Q1", status=Status.PASS if margin >= 0 else Status.FAIL,
                   kind=kind, basis="", source="", value=value, limit=limit, margin=margin, bound=bound)


@pytest.mark.parametrize("value, limit, bound, text", [
    # 646 V under a 730 V ceiling: 84 V left, 84/730 = 11.5 % of the limit
    (646.0, 730.0, Bound.UPPER, "84 V below the limit, 11.5 % of the limit"),
    # 784.2 V over a 520 V ceiling: 264.2 V, 50.8 % of the limit
    (784.2, 520.0, Bound.UPPER, "264.2 V above the limit, 50.8 % of the limit"),
    # a floor of -7.2 V reached at -9.968 V: 2.768 V below it, 38.4 %
    (-9.968, -7.2, Bound.LOWER, "2.768 V below the limit, 38.4 % of the limit"),
    # a floor of 10 V with 12 V: 2 V above it, 20 %
    (12.0, 10.0, Bound.LOWER, "2 V above the limit, 20 % of the limit"),
    # a margin beyond -100 %: 126 V against 10 V is 12.6 times the limit
    (126.0, 10.0, Bound.UPPER, "116 V above the limit, 12.6\u00d7 the limit"),
    # beyond +100 % on a floor: 25 V against 10 V
    (25.0, 10.0, Bound.LOWER, "15 V above the limit, 2.5\u00d7 the limit"),
    (520.0, 520.0, Bound.UPPER, "at the limit"),
])
def test_headroom_in_unit_and_share(value, limit, bound, text):
    assert headroom(_finding(value, limit, bound=bound)) == text


def test_a_temperature_headroom_is_a_difference_and_a_margin_of_another_scale_says_so():
    """Junction temperature 130.2 degC against 150 degC, margin normalised by the allowed rise (50 K above a
    100 degC case): 19.8 K below the limit, margin 19.8/50 = 39.6 %, not 13.2 % of the limit."""
    finding = _finding(403.35, 423.15, kind="temperature", margin=19.8 / 50)
    assert headroom(finding) == "19.8 K below the limit, margin +39.6 %"
    assert short_headroom(finding) == "by 19.8 K (margin 39.6 %)"


def test_short_headroom_and_result_text():
    assert short_headroom(_finding(850.0, 900.0)) == "by 50 V (5.56 %)"
    assert short_headroom(_finding(930.0, 900.0)) == "fails by 30 V (3.33 %)"
    assert result_text(_finding(1100.0, 900.0)) == "1.1 kV <= 900 V: 200 V above the limit, 22.2 % of the limit"


def test_a_finding_not_evaluated_says_what_it_needs():
    finding = Finding(rule="soa", subject="Q1", status=Status.NOT_EVALUATED, kind="current", basis="", source="",
                      missing=("devices.x.ratings.i_d_pulse",))
    assert result_text(finding) == "needs devices.x.ratings.i_d_pulse"
    assert finding_summary(finding) == "soa for Q1: not evaluated: needs devices.x.ratings.i_d_pulse"
