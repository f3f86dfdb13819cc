"""Technology gate and transient ratings: the recommended gate range of a SiC MOSFET (pass inside, marginal
between it and the derated absolute maximum, fail beyond), and the transient ratings of a GaN HEMT (simulated
excursions against the transient limit within its pulse, steady levels and long excursions against the
continuous one). Statuses are checked exactly at, just inside and just outside every boundary; the values are
the driver levels themselves or the simulated figures read first (arithmetic only: the simulated figures are
checked in tests/physics and tests/reference)."""

import dataclasses

import numpy as np
import pytest

from margincheck.checking import check_file
from margincheck.design import load_design
from margincheck.findings import Status
from margincheck.loading import load_document
from margincheck.policy import DEFAULT_POLICY
from margincheck.rules.limits import gate_off_limit, gate_on_limit
from tests.conftest import EXAMPLES


def _finding(path, rule, subject="Q1"):
    return next(f for f in check_file(path).findings if (f.rule, f.subject) == (rule, subject))


@pytest.fixture
def sic(contract_data):
    """The contract design with a SiC device rated -8 V / 22 V absolute, -4 V / 18 V recommended (derated by the
    default 0.9: -7.2 V / 19.8 V); no C_oss, so the gate findings are the exact driver levels alone."""
    device = contract_data["devices"]["demo-sj650"]
    device["technology"] = "sic-mosfet"
    device["ratings"].update({"v_gs_max": "22 V", "v_gs_min": "-8 V",
                              "v_gs_recommended": {"min": "-4 V", "max": "18 V"}})
    del device["characteristics"]["c_oss"]
    for switch in contract_data["switches"]:
        switch["gate_drive"] = {"on": "15 V", "off": "-3 V", "r_on": "5 ohm", "r_off": "2 ohm"}
    return contract_data


ON_LEVELS = [("17.99 V", Status.PASS), ("18 V", Status.PASS), ("18.01 V", Status.MARGINAL),
             ("19.79 V", Status.MARGINAL), ("19.8 V", Status.MARGINAL), ("19.81 V", Status.FAIL)]
OFF_LEVELS = [("-3.99 V", Status.PASS), ("-4 V", Status.PASS), ("-4.01 V", Status.MARGINAL),
              ("-7.19 V", Status.MARGINAL), ("-7.2 V", Status.MARGINAL), ("-7.21 V", Status.FAIL)]


@pytest.mark.parametrize("level, status", ON_LEVELS)
def test_on_level_around_the_recommended_and_the_derated_absolute_maximum(sic, write_design, level, status):
    sic["switches"][0]["gate_drive"]["on"] = level
    finding = _finding(write_design(sic), "gate-on-voltage")
    assert finding.status is status
    assert finding.limit == pytest.approx(19.8)
    assert ("above the recommended operating range -4 V to 18 V" in finding.note) is (status is Status.MARGINAL)


@pytest.mark.parametrize("level, status", OFF_LEVELS)
def test_off_level_around_the_recommended_and_the_derated_absolute_minimum(sic, write_design, level, status):
    sic["switches"][0]["gate_drive"]["off"] = level
    finding = _finding(write_design(sic), "gate-off-voltage")
    assert finding.status is status
    assert finding.limit == pytest.approx(-7.2)
    if status is Status.MARGINAL:
        assert "below the recommended operating range -4 V to 18 V" in finding.note


def test_without_a_recommended_range_the_band_alone_decides(sic, write_design):
    """18.01 V has 9 % margin to 19.8 V: a pass when the device states no recommended range."""
    del sic["devices"]["demo-sj650"]["ratings"]["v_gs_recommended"]
    sic["switches"][0]["gate_drive"]["on"] = "18.01 V"
    assert _finding(write_design(sic), "gate-on-voltage").status is Status.PASS


def test_a_sic_gate_finding_cautions_about_threshold_drift_under_negative_bias(sic, write_design):
    finding = _finding(write_design(sic), "gate-off-voltage")
    assert "negative gate bias shifts the threshold" in finding.caution
    assert "10.1109/TED.2014.2356172" in finding.caution


# ---- GaN: transient ratings ------------------------------------------------------------------------------

GAN = EXAMPLES / "gan-48v-stage.yaml"
AROUND = [(1.0001, Status.MARGINAL), (1.0, Status.MARGINAL), (0.9999, Status.FAIL)]


@pytest.fixture
def gan(tmp_path):
    """The bundled GaN stage as data (its bench-lab policy: peak_voltage 0.9, gate_voltage 0.9, copied beside the
    written designs)."""
    (tmp_path / "policies").mkdir()
    (tmp_path / "policies" / "bench-lab.yaml").write_bytes((EXAMPLES / "policies" / "bench-lab.yaml").read_bytes())
    return load_document(GAN).data


def _ratings(data):
    return data["devices"]["demo-gan100"]["ratings"]


@pytest.fixture
def peak(gan, write_design):
    """The simulated turn-off peak of the GaN stage [V] (below the derated continuous limit 0.9 x 100 V)."""
    value = _finding(write_design(gan), "turn-off-overshoot").value
    assert value < 90.0
    return value


@pytest.mark.parametrize("factor, status", AROUND)
def test_turn_off_peak_around_the_derated_transient_rating(gan, write_design, peak, factor, status):
    """v_ds_max 75 V puts the continuous limit (67.5 V) below the peak; the ring lasts nanoseconds, so the peak
    meets 0.9 x v_ds_transient, set just above, at and just below it."""
    ratings = _ratings(gan)
    ratings["v_ds_max"] = "75 V"
    ratings["v_ds_transient"] = {"value": f"{peak / 0.9 * factor!r} V", "pulse": "1 us"}
    finding = _finding(write_design(gan, "transient.yaml"), "turn-off-overshoot")
    assert finding.value == pytest.approx(peak, rel=1e-12)
    assert finding.status is status
    assert "v_ds_transient.value" in finding.basis
    assert "24 of 24 corners on the transient rating" in finding.note


def test_a_ring_longer_than_the_pulse_meets_the_continuous_rating(gan, write_design, peak):
    """The same peak with a transient rating for 1 ps pulses only: where the ring rises above the continuous limit
    0.9 x 75 V it stays there longer, so that limit applies, and the peak fails it (the corners whose peak stays
    below 67.5 V spend no time above it and keep the transient rating)."""
    ratings = _ratings(gan)
    ratings["v_ds_max"] = "75 V"
    ratings["v_ds_transient"] = {"value": "100 V", "pulse": "1 ps"}
    finding = _finding(write_design(gan, "long.yaml"), "turn-off-overshoot")
    assert finding.limit == pytest.approx(67.5)
    assert finding.status is Status.FAIL
    assert "24 of 24 corners on the transient rating" not in finding.note


def test_the_steady_bus_stays_on_the_continuous_rating(gan, write_design):
    finding = _finding(write_design(gan), "bus-voltage")
    assert finding.limit == pytest.approx(0.75 * 100.0)
    assert "current collapse" in finding.caution   # the GaN dynamic R_ds(on) caution


@pytest.fixture
def induced(gan, write_design):
    """The most negative simulated gate voltage of Q1 [V] (its partner's edges), with v_gs_min -0.3 V so that a
    transient rating can sit at it; the driver's 0 V off-level passes the continuous -0.27 V."""
    _ratings(gan)["v_gs_min"] = "-0.3 V"
    _ratings(gan)["v_gs_transient"] = {"max": "8 V", "min": "-0.3 V", "pulse": "1 ps"}
    finding = _finding(write_design(gan, "continuous.yaml"), "gate-off-voltage")
    assert finding.limit == pytest.approx(-0.27)       # a 1 ps pulse: shorter than the edge, the continuous limit
    assert -0.3 < finding.value < 0.0
    return finding


@pytest.mark.parametrize("factor, status", AROUND)
def test_simulated_gate_around_the_derated_transient_rating(gan, write_design, induced, factor, status):
    _ratings(gan)["v_gs_transient"] = {"max": "8 V", "min": f"{induced.value / 0.9 * factor!r} V", "pulse": "1 us"}
    finding = _finding(write_design(gan, "transient.yaml"), "gate-off-voltage")
    assert finding.value == pytest.approx(induced.value, rel=1e-12)
    assert finding.status is status
    assert "v_gs_transient.min within its pulse" in finding.basis


def test_the_driver_level_meets_the_continuous_rating_not_the_transient_one(gan, write_design):
    """An on-level of 6.5 V: above 0.9 x 7 V continuous, below 0.9 x 8 V transient: a steady level, so it
    fails, and the finding names the continuous rating."""
    _ratings(gan)["v_gs_transient"] = {"max": "8 V", "pulse": "1 us"}
    for switch in gan["switches"]:
        switch["gate_drive"].update({"on": "6.5 V", "tolerance": "0 %"})
    finding = _finding(write_design(gan, "steady.yaml"), "gate-on-voltage")
    assert (finding.status, finding.value, finding.limit) == (Status.FAIL, pytest.approx(6.5), pytest.approx(6.3))
    assert finding.basis == "V_gs,max <= gate_voltage * v_gs_max"


def test_the_limit_is_chosen_per_corner_by_the_edge_time():
    """Edges of 0.5 us, 1 us (at the pulse: transient) and 2 us, and one not simulated (NaN: continuous)."""
    switch = load_design(GAN).switches[0]
    device = dataclasses.replace(switch.device, v_gs_transient=dataclasses.replace(
        switch.device.v_gs_transient, pulse=1e-6))
    switch = dataclasses.replace(switch, device=device)
    times = np.array([0.5e-6, 1e-6, 2e-6, np.nan])
    on, off = gate_on_limit(switch, DEFAULT_POLICY, times), gate_off_limit(switch, DEFAULT_POLICY, times)
    assert on.value == pytest.approx([0.9 * 8, 0.9 * 8, 0.9 * 7, 0.9 * 7])
    assert off.value == pytest.approx([-0.9 * 8, -0.9 * 8, -0.9 * 4, -0.9 * 4])
    assert gate_on_limit(switch, DEFAULT_POLICY).value == pytest.approx(0.9 * 7)   # a steady level
