"""The cosmic-ray-fit rule on the contract design: its worst corner, its limit from the policy's budget, the
paths where it is not evaluated, and where it does not apply. Expected values come from the equation typed out in
tests/physics/test_cosmic_ray.py (Zeller 1995, from memory)."""

import pytest

from margincheck.design import load_design
from margincheck.findings import Status
from margincheck.rules.cosmic_ray import cosmic_ray_fit
from tests.physics.test_cosmic_ray import zeller_by_hand

FIT = 1.0 / 3.6e12   # 1 failure in 1e9 h [1/s]

#: Constants for the contract's 650 V device (invented): λ = 1000 FIT·exp(240/(300 − V)) above 300 V.
CONSTANTS = {"c1": "300 V", "c2": "240 V", "c3": "1000 FIT", "reference": "invented for the test"}

# The contract's conditions: bus 400 V ± 5 % (380 to 420 V), case -20 to 90 degC; the altitude below.
# Worst corner: 420 V, 1000 m, -20 degC: 1000 x e^(240/(300 - 420)) = 135.34 FIT, x 2.2065 (1000 m)
# x exp(45/47.6) = 2.5740 (-20 degC): about 768.6 FIT.
WORST = zeller_by_hand(420.0, 1000.0, -20.0, 300.0, 240.0, 1000.0)


@pytest.fixture
def cosmic(contract_data):
    """The contract design with cosmic-ray constants on its device and an altitude of 0 to 1000 m."""
    contract_data["devices"]["demo-sj650"]["cosmic_ray"] = dict(CONSTANTS)
    contract_data["conditions"]["altitude"] = {"min": "0 m", "max": "1000 m"}
    return contract_data


@pytest.fixture
def finding_of(write_design):
    """The cosmic-ray-fit finding of Q1 for a design, under a policy with the given budget (none: default)."""

    def finding(data: dict, budget: str | None = "1000 FIT"):
        if budget is not None:
            write_design(f"format: margincheck-policy/1\nname: t\nbasis: a test policy\ncosmic_ray_fit_budget: "
                         f"{budget}\n", "policy.yaml")
            data = {**data, "derating": "policy.yaml"}
        design = load_design(write_design(data))
        return cosmic_ray_fit(design.switches[0], design)

    return finding


def test_worst_corner_is_highest_bus_highest_altitude_coldest_case(cosmic, finding_of):
    finding = finding_of(cosmic)
    assert pytest.approx(768.6, rel=1e-4) == WORST
    assert finding.value / FIT == pytest.approx(WORST, rel=1e-9)
    assert finding.limit / FIT == pytest.approx(1000.0)
    assert finding.margin == pytest.approx((1000.0 - WORST) / 1000.0, rel=1e-9)
    assert finding.status is Status.PASS
    corner = {name: quantity.value for name, quantity in finding.corner.items()}
    assert corner == pytest.approx({"bus_voltage": 420.0, "altitude": 1000.0, "case_temperature": 253.15})


def test_exactly_at_the_budget_is_marginal_and_just_beyond_fails(cosmic, finding_of):
    assert finding_of(cosmic, f"{WORST!r} FIT").status is Status.MARGINAL
    assert finding_of(cosmic, f"{WORST * 0.999!r} FIT").status is Status.FAIL


@pytest.mark.parametrize("field, values", [
    ("altitude", ["0 m", "500 m", "1000 m", "3000 m"]),
    ("bus_voltage", ["350 V", "400 V", "450 V", "500 V"]),
    ("case_temperature", ["90 degC", "25 degC", "-20 degC", "-40 degC"]),
])
def test_margin_never_grows_toward_the_worse_end(cosmic, finding_of, field, values):
    margins = []
    for value in values:
        cosmic["conditions"][field] = value
        margins.append(finding_of(cosmic).margin)
    assert margins == sorted(margins, reverse=True) and margins[0] > margins[-1]


def test_altitude_left_out_is_sea_level_and_said_so(cosmic, finding_of):
    del cosmic["conditions"]["altitude"]
    finding = finding_of(cosmic)
    assert finding.value / FIT == pytest.approx(zeller_by_hand(420.0, 0.0, -20.0, 300.0, 240.0, 1000.0))
    assert "conditions.altitude not given: sea level (0 m) assumed" in finding.note


def test_heat_sink_stands_for_the_case_when_no_case_temperature_is_given(cosmic, finding_of):
    del cosmic["conditions"]["case_temperature"]
    cosmic["conditions"]["heatsink_temperature"] = {"min": "-30 degC", "max": "60 degC"}
    finding = finding_of(cosmic)
    assert finding.value / FIT == pytest.approx(zeller_by_hand(420.0, 1000.0, -30.0, 300.0, 240.0, 1000.0))


def test_bus_at_or_below_c1_gives_no_failures(cosmic, finding_of):
    cosmic["conditions"]["bus_voltage"] = "300 V"
    finding = finding_of(cosmic)
    assert (finding.value, finding.status) == (0.0, Status.PASS)
    assert "the bus stays at or below c1 = 300 V" in finding.note


def test_without_a_budget_not_evaluated_naming_the_policy_key_and_stating_the_rate(cosmic, finding_of):
    finding = finding_of(cosmic, budget=None)
    assert finding.status is Status.NOT_EVALUATED
    assert finding.missing == ("policy key cosmic_ray_fit_budget (a budget per switch)",)
    assert f"highest failure rate over the corners {WORST:.4g} FIT" in finding.note


def test_without_the_device_constants_but_with_a_budget_not_evaluated_naming_the_field(cosmic, finding_of):
    del cosmic["devices"]["demo-sj650"]["cosmic_ray"]
    finding = finding_of(cosmic)
    assert finding.status is Status.NOT_EVALUATED
    assert finding.missing == ("devices.demo-sj650.cosmic_ray",)


def test_neither_constants_nor_budget_is_no_finding(contract_data, finding_of):
    """The model is optional: a design that asks nothing of it gets no finding (and no not-evaluated one)."""
    assert finding_of(contract_data, budget=None) is None


def test_without_any_case_or_heat_sink_temperature_not_evaluated(cosmic, finding_of):
    del cosmic["conditions"]["case_temperature"]
    finding = finding_of(cosmic)
    assert finding.status is Status.NOT_EVALUATED
    assert finding.missing == ("conditions.case_temperature (or heatsink_temperature)",)


def test_case_temperature_without_its_minimum_not_evaluated(cosmic, finding_of):
    cosmic["conditions"]["case_temperature"] = {"max": "90 degC"}
    finding = finding_of(cosmic)
    assert finding.status is Status.NOT_EVALUATED
    assert finding.missing[0].startswith("conditions.case_temperature")


def test_altitude_beyond_the_model_range_not_evaluated(cosmic, finding_of):
    cosmic["conditions"]["altitude"] = {"max": "12 km"}
    finding = finding_of(cosmic)
    assert finding.status is Status.NOT_EVALUATED
    assert "altitude 12000 m is outside the model's range -500 m to 11000 m" in finding.note


def test_low_voltage_device_with_constants_is_evaluated(cosmic, finding_of):
    cosmic["devices"]["demo-sj650"]["ratings"]["v_ds_max"] = "100 V"
    cosmic["devices"]["demo-sj650"]["cosmic_ray"].update(c1="40 V", c2="10 V")
    cosmic["conditions"]["bus_voltage"] = "50 V"
    finding = finding_of(cosmic)
    assert finding.value / FIT == pytest.approx(zeller_by_hand(50.0, 1000.0, -20.0, 40.0, 10.0, 1000.0))
