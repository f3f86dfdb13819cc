"""Monte Carlo, sensitivities and the corner search, against closed forms and exhaustive loops written here.

Check values: the probability that a uniform (or normal) input lands beyond a limit, computed by hand or with
scipy.stats; the Wilson score interval against scipy.stats.binomtest (Wilson 1927, the method scipy names
"wilson"); the corner search against a scalar loop over every input at its ends and midpoint (closed-form rules)
and against a dense vectorised grid (the simulated turn-off peak).
"""

import dataclasses
import itertools
import json
import math

import numpy as np
import pytest
from scipy import stats

from margincheck.design import load_design
from margincheck.intervals import Interval
from margincheck.montecarlo import monte_carlo, wilson_interval
from margincheck.rules import RULES, evaluate_design
from margincheck.rules.registry import evaluate_at
from margincheck.rules.sampling import given_points, random_plan
from margincheck.sensitivity import with_sensitivities


@pytest.fixture
def bus_design(contract_data, write_design):
    """The contract design with the bus from 360 V to 420 V: the capacitor's derated 400 V (0.8 x 500 V) is
    exceeded on the top third of the interval."""
    contract_data["conditions"]["bus_voltage"] = {"min": "360 V", "max": "420 V"}
    return load_design(write_design(contract_data))


def _capacitor(statistics):
    return next(item for item in statistics if item.rule == "capacitor-voltage")


def _capacitor_finding(design):
    """The capacitor-voltage finding alone (the statistics are listed for the findings given)."""
    return [RULES["capacitor-voltage"].check(design.capacitors[0], design)]


@pytest.mark.reference
@pytest.mark.parametrize("violations, samples", [(0, 100), (3, 100), (50, 100), (1, 20000), (997, 1000)])
def test_wilson_interval_against_scipy(violations, samples):
    """Wilson score interval (Wilson 1927) against scipy.stats.binomtest(...).proportion_ci(method="wilson")."""
    expected = stats.binomtest(violations, samples).proportion_ci(confidence_level=0.95, method="wilson")
    assert wilson_interval(violations, samples) == pytest.approx((expected.low, expected.high), abs=1e-9)


@pytest.mark.reference
def test_uniform_input_violates_on_its_known_fraction(bus_design):
    """P(V_bus > 400 V) for V_bus uniform on [360 V, 420 V] is (420 − 400)/(420 − 360) = 1/3 (hand arithmetic);
    the stated 95 % interval must hold it, and it must be tight at 20,000 samples. (A 95 % interval misses the
    truth for about one seed in twenty; the seed is fixed, so the test is deterministic.)"""
    result = monte_carlo(bus_design, _capacitor_finding(bus_design), samples=20_000, seed=4, simulated=0)
    capacitor = _capacitor(result.statistics)
    low, high = capacitor.interval
    assert low <= 1 / 3 <= high
    assert high - low < 0.015
    assert capacitor.samples == 20_000 and not capacitor.simulated
    # the median margin is at V_bus = 390 V: (400 − 390)/400 = 2.5 % (uniform median), to the sampling noise
    assert capacitor.percentiles[50.0] == pytest.approx(0.025, abs=0.002)


@pytest.mark.reference
def test_normal_input_violates_on_its_tail(bus_design):
    """V_bus normal around 400 V with ±20 V at 3 sigma: P(V_bus > 410 V) = 1 − Φ(1.5) = 0.0668 (scipy.stats.norm)
    against a limit of 410 V (capacitor rated 512.5 V x 0.8)."""
    design = dataclasses.replace(
        bus_design, conditions=dataclasses.replace(bus_design.conditions,
                                                   bus_voltage=Interval(380.0, 400.0, 420.0, "normal", 3.0)),
        capacitors=(dataclasses.replace(bus_design.capacitors[0], rated_voltage=512.5),))
    result = monte_carlo(design, _capacitor_finding(design), samples=40_000, seed=11, simulated=0)
    low, high = _capacitor(result.statistics).interval
    assert low <= stats.norm.sf(1.5) <= high


def test_same_seed_same_samples_and_blocks_agree():
    """A plan's values depend on the seed, and the first points of a block do not depend on its length."""
    interval = Interval(1.0, 2.0, 3.0)
    from margincheck.intervals import Side

    short = random_plan(10, 0, seed=5).values("conditions.bus_voltage", interval, Side.MAX)
    long = random_plan(1000, 0, seed=5).values("conditions.bus_voltage", interval, Side.MAX)
    other = random_plan(10, 0, seed=6).values("conditions.bus_voltage", interval, Side.MAX)
    np.testing.assert_array_equal(short, long[:10])
    assert not np.array_equal(short, other)
    assert ((short >= 1.0) & (short <= 3.0)).all()


def test_sensitivity_of_the_capacitor_voltage_by_hand(bus_design):
    """Margin (400 − V)/400 at V = 360 V and 420 V: +10 % and −5 % (hand arithmetic); the worst corner's own
    margin is reproduced by the re-evaluation."""
    (capacitor,) = with_sensitivities(bus_design, _capacitor_finding(bus_design))
    (swing,) = [item for item in capacitor.sensitivities if item.name == "bus_voltage"]
    assert (swing.margin_at_low, swing.margin_at_high) == pytest.approx((0.10, -0.05))
    assert swing.swing == pytest.approx(0.15)


def test_sensitivities_rank_the_loop_above_the_threshold_for_the_peak(contract_data, write_design):
    """The simulated turn-off peak: the loop inductance (±20 %) moves it more than the threshold spread (the
    ring is V + I·√(L/C)); the worst corner's margin is reproduced by the re-simulation within the integrator's
    tolerance."""
    contract_data["switches"] = contract_data["switches"][:1]
    design = load_design(write_design(contract_data))
    findings = with_sensitivities(design, evaluate_design(design))
    peak = next(finding for finding in findings if finding.rule == "turn-off-overshoot")
    names = [item.name for item in peak.sensitivities]
    assert names.index("loop_inductance") < names.index("v_gs_th")
    at_worst = {item.name: item for item in peak.sensitivities}["loop_inductance"].margin_at_high
    assert at_worst == pytest.approx(peak.margin, abs=0.01)


def _scalar_margins(design, finding):
    """The rule's margin at every combination of each toleranced input's ends and midpoint, one point at a
    time in a Python loop (each point its own evaluation)."""
    axes = [(spread.key, (spread.low, 0.5 * (spread.low + spread.high), spread.high))
            for spread in finding.spreads.values()]
    margins = []
    for values in itertools.product(*(ends for _, ends in axes)):
        point = dict(zip((key for key, _ in axes), values))
        recorded, _ = evaluate_at(design, given_points([point], simulate=False))
        margins.append(float(recorded[finding.rule, finding.subject][0]))
    return margins


def test_corner_search_finds_the_worst_of_a_scalar_loop(contract_data, write_design):
    """Every closed-form finding of the contract design with illustrative thermal data and datasheet switching
    energies (so that the junction temperature is a closed form of six toleranced inputs): the worst corner of
    the search is the worst of an exhaustive scalar loop over every toleranced input's ends and midpoint."""
    device = contract_data["devices"]["demo-sj650"]
    device["characteristics"].update({
        "r_ds_on": {"value": {"nominal": "80 mohm", "max": "100 mohm"}, "t_j": "25 degC", "v_gs": "10 V"},
        "r_ds_on_temperature_coefficient": "0.7 %/K",
        "switching_energy": {"e_on": "100 uJ", "e_off": "50 uJ", "v_ds": "400 V", "i_d": "20 A", "r_g": "10 ohm"}})
    device["thermal"] = {"r_th_jc": {"min": "0.4 K/W", "max": "0.5 K/W"}}
    contract_data["conditions"]["switching_frequency"] = {"min": "38 kHz", "max": "42 kHz"}
    for switch in contract_data["switches"]:
        switch.update({"rms_current": {"nominal": "10 A", "max": "12 A"}, "switched_current": {"min": "15 A",
                                                                                             "max": "20 A"}})
    design = load_design(write_design(contract_data))
    _, needs_cell = evaluate_at(design, given_points([{}], simulate=False))
    closed_form = [finding for finding in evaluate_design(design) if finding.margin is not None
                   and finding.spreads and (finding.rule, finding.subject) not in needs_cell]
    thermal = [finding for finding in closed_form if finding.rule == "junction-temperature"]
    assert thermal and len(thermal[0].spreads) >= 5
    assert {finding.rule for finding in closed_form} >= {"bus-voltage", "capacitor-voltage"}
    for finding in closed_form:
        assert min(_scalar_margins(design, finding)) == pytest.approx(finding.margin, rel=1e-9, abs=1e-12), finding


def test_corner_search_of_the_simulated_peak_against_a_dense_grid(contract_data, write_design):
    """The simulated turn-off peak of Q1: no point of a 5 x 5 x 5 grid over bus, loop and threshold gives a
    higher peak than the corner search reports (the threshold is searched at its ends and midpoint because the
    peak is not monotone in it), to the integrator's 0.5 % tolerance."""
    contract_data["switches"] = contract_data["switches"][:1]
    design = load_design(write_design(contract_data))
    peak = next(finding for finding in evaluate_design(design) if finding.rule == "turn-off-overshoot")
    keys = {name: spread for name, spread in peak.spreads.items() if name in ("bus_voltage", "loop_inductance",
                                                                                 "v_gs_th")}
    assert len(keys) == 3
    grid = [dict(zip((spread.key for spread in keys.values()), values)) for values in itertools.product(
        *(np.linspace(spread.low, spread.high, 5) for spread in keys.values()))]
    recorded, _ = evaluate_at(design, given_points(grid))
    assert np.nanmin(recorded["turn-off-overshoot", "Q1"]) >= peak.margin - 0.005 * abs(peak.margin) - 0.004


def test_monte_carlo_and_sensitivities_through_the_cli(run_cli):
    """--monte-carlo and --sensitivities in the JSON report: every finding's statistics, reproducible by seed."""
    from tests.conftest import EXAMPLES

    arguments = ["check", str(EXAMPLES / "gan-48v-stage.yaml"), "--format", "json", "--monte-carlo", "2000",
                 "--simulated-samples", "8", "--seed", "4", "--sensitivities"]
    first, second = (json.loads(run_cli(*arguments)[1]) for _ in range(2))
    assert first["monte_carlo"] == second["monte_carlo"]
    rules = {(item["rule"], item["subject"]): item for item in first["monte_carlo"]["rules"]}
    assert len(rules) == len(first["findings"])
    assert rules["bus-voltage", "Q1"]["samples"] == 2000
    assert rules["turn-off-overshoot", "Q1"]["samples"] == 8 and rules["turn-off-overshoot", "Q1"]["cell_simulated"]
    ranked = [finding for finding in first["findings"] if finding["sensitivities"]]
    assert ranked and all(math.isfinite(item["swing"]) for finding in ranked for item in finding["sensitivities"])


def test_monte_carlo_section_of_the_terminal_report(run_cli):
    """The terminal report states the sample counts, each rule's probability with its interval and the notes."""
    from tests.conftest import EXAMPLES

    code, out, _ = run_cli("check", str(EXAMPLES / "gan-48v-stage.yaml"), "--monte-carlo", "500",
                           "--simulated-samples", "4")
    assert code == 0
    assert "Monte Carlo: 500 samples, seed 0" in out
    assert "Q1 bus-voltage: P 0 % (0 % to" in out and "of 500 samples" in out
    assert "of 4 samples" in out and "waivers are not applied" in out
