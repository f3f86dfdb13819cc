"""The design file of design.md section 3, checked as written: every core finding computed by hand.

How the expected values were computed (default policy, design.md section 4):
- bus voltage: 400 V + 5 % = 420 V at the top corner.
- loop inductance: 25 nH + 20 % = 30 nH.
- Q1 turn-off (Kelvin, L_s = 1 nH): worst corner V_th = 4.0 V (max), V_off = -3 V - 5 % = -3.15 V,
  R_g = 2 + 1 ohm, C_iss = 2.5 nF, g_fs = 20 S, I = 40 A.
  tau = 3 x 2.5 nF + 20 S x 1 nH = 27.5 ns; |di/dt| = (20 x 7.15 + 40)/27.5 ns = 6.6545 A/ns;
  V_pk = 420 + 30 nH x 6.6545 A/ns = 619.64 V; limit 0.8 x 650 = 520 V; margin (520 - 619.64)/520 = -0.1916.
- Q2 turn-off (shared, L_s = 12 nH): V_off = 0 V, R_g = 10 + 1 ohm:
  tau = 11 x 2.5 nF + 20 S x 12 nH = 267.5 ns; |di/dt| = (20 x 4 + 40)/267.5 ns = 0.44860 A/ns;
  V_pk = 420 + 13.458 = 433.46 V; margin (520 - 433.46)/520 = 0.16643.
- bus-voltage: limit 0.75 x 650 = 487.5 V; margin 67.5/487.5 = 0.13846.
- gate-on: 15 V + 5 % = 15.75 V vs 0.9 x 20 = 18 V; margin 2.25/18 = 0.125.
- gate-off: Q1 -3.15 V vs 0.9 x -20 = -18 V; margin 14.85/18 = 0.825. Q2 0 V: margin 18/18 = 1.
- turn-off-current: 40 A vs 0.8 x 120 = 96 A; margin 56/96 = 0.58333.
- capacitor-voltage: 420 V vs 0.8 x 500 = 400 V; margin -20/400 = -0.05; stored energy 0.5 x 100 uF x 420^2
  = 8.82 J.
"""

import pytest

from margincheck.checking import check_file
from margincheck.findings import Status, Verdict
from tests.conftest import CONTRACT_FILE

EXPECTED = {
    ("bus-voltage", "Q1"): (420.0, 487.5, 0.138462, Status.PASS),
    ("bus-voltage", "Q2"): (420.0, 487.5, 0.138462, Status.PASS),
    ("turn-off-overshoot", "Q1"): (619.636, 520.0, -0.191608, Status.FAIL),
    ("turn-off-overshoot", "Q2"): (433.458, 520.0, 0.166427, Status.PASS),
    ("gate-on-voltage", "Q1"): (15.75, 18.0, 0.125, Status.PASS),
    ("gate-on-voltage", "Q2"): (15.75, 18.0, 0.125, Status.PASS),
    ("gate-off-voltage", "Q1"): (-3.15, -18.0, 0.825, Status.PASS),
    ("gate-off-voltage", "Q2"): (0.0, -18.0, 1.0, Status.PASS),
    ("turn-off-current", "Q1"): (40.0, 96.0, 0.583333, Status.PASS),
    ("turn-off-current", "Q2"): (40.0, 96.0, 0.583333, Status.PASS),
    ("capacitor-voltage", "C1"): (420.0, 400.0, -0.05, Status.FAIL),
}


@pytest.fixture(scope="module")
def report():
    return check_file(CONTRACT_FILE)


def test_every_core_finding_is_there_once(report):
    assert sorted((f.rule, f.subject) for f in report.findings) == sorted(EXPECTED)


@pytest.mark.parametrize("key", EXPECTED, ids=[f"{rule}-{subject}" for rule, subject in EXPECTED])
def test_finding_matches_the_hand_calculation(report, key):
    value, limit, margin, status = EXPECTED[key]
    finding = next(f for f in report.findings if (f.rule, f.subject) == key)
    # hand values are rounded to 6 significant figures
    assert finding.value == pytest.approx(value, rel=1e-5, abs=1e-9)
    assert finding.limit == pytest.approx(limit, rel=1e-9)
    assert finding.margin == pytest.approx(margin, rel=1e-5)
    assert finding.status is status


def test_worst_corner_of_the_q1_overshoot(report):
    finding = next(f for f in report.findings if (f.rule, f.subject) == ("turn-off-overshoot", "Q1"))
    corner = {name: quantity.value for name, quantity in finding.corner.items()}
    assert corner["bus_voltage"] == pytest.approx(420.0)
    assert corner["loop_inductance"] == pytest.approx(30e-9)
    assert corner["v_gs_th"] == pytest.approx(4.0)
    assert corner["gate_drive.off"] == pytest.approx(-3.15)
    assert finding.details["turn_off_di_dt"].value == pytest.approx(6.65455e9, rel=1e-5)


def test_stored_energy_of_the_bus_capacitor(report):
    finding = next(f for f in report.findings if f.rule == "capacitor-voltage")
    assert finding.details["stored_energy"].value == pytest.approx(8.82, rel=1e-9)


def test_verdict_is_fail(report):
    assert report.verdict is Verdict.FAIL
    assert report.exit_code == 1
