"""The design file of design.md section 3, checked as written: every level finding computed by hand, every
transient finding against the independent Radau model of tests/reference at the finding's own corner.

How the expected values were computed (default policy, design.md section 4):
- bus voltage: 400 V + 5 % = 420 V at the top corner.
- loop inductance: 25 nH + 20 % = 30 nH.
- turn-off-overshoot: the peak of the independent reference (tests/reference/kirchhoff_cell.py, scipy Radau)
  of the same cell at the finding's corner, within 2 %; Q1 (Kelvin, 2 + 1 ohm) rings to about 784 V, Q2
  (shared, 12 nH in its gate loop) oscillates and reaches about 930 V; limit 0.8 x 650 = 520 V.
- spurious-turn-on, driver-cmti, recovery-overshoot: not evaluated, the design gives no hot threshold, no
  driver CMTI and no diode recovery data.
- bus-voltage: limit 0.75 x 650 = 487.5 V; margin 67.5/487.5 = 0.13846.
- gate-on: Q1 15 V + 5 % = 15.75 V vs 0.9 x 20 = 18 V (its simulated gate stays below its driver level);
  Q2, idle while Q1 turns off, is pulled above 18 V by L_s x di/dt of its 12 nH source lead: a failure.
- gate-off: Q1's lowest gate, idle while Q2 switches, about -3.9 V, passes; Q2's is pulled below -18 V.
- turn-off-current: 40 A vs 0.8 x 120 = 96 A; margin 56/96 = 0.58333.
- capacitor-voltage: 420 V vs 0.8 x 500 = 400 V; margin -20/400 = -0.05; stored energy 0.5 x 100 uF x 420^2
  = 8.82 J.
- soa: both turn-off transient points sit beyond the SOA's voltage edge v_ds_max = 650 V: failures whatever
  the thermal data.
- avalanche-energy: both peaks reach V(BR)DSS and the device states no avalanche rating: not evaluated.
- parasitic-oscillation: Q1's modes decay; Q2's grows during the current fall: a failure.
- junction-temperature (no R_ds(on)) and short-circuit (no short-circuit case): not evaluated.
- cosmic-ray-fit: no finding (the device gives no cosmic-ray model and the policy sets no budget).
"""

import pytest

from margincheck.checking import check_file
from margincheck.findings import Status, Verdict
from tests.conftest import CONTRACT_FILE

EXPECTED = {
    ("bus-voltage", "Q1"): (420.0, 487.5, 0.138462, Status.PASS),
    ("bus-voltage", "Q2"): (420.0, 487.5, 0.138462, Status.PASS),
    ("gate-on-voltage", "Q1"): (15.75, 18.0, 0.125, Status.PASS),
    ("turn-off-current", "Q1"): (40.0, 96.0, 0.583333, Status.PASS),
    ("turn-off-current", "Q2"): (40.0, 96.0, 0.583333, Status.PASS),
    ("capacitor-voltage", "C1"): (420.0, 400.0, -0.05, Status.FAIL),
}
STATUS = {
    ("gate-on-voltage", "Q2"): Status.FAIL, ("gate-off-voltage", "Q1"): Status.PASS,
    ("gate-off-voltage", "Q2"): Status.FAIL, ("soa", "Q1"): Status.FAIL, ("soa", "Q2"): Status.FAIL,
    ("parasitic-oscillation", "Q1"): Status.PASS, ("parasitic-oscillation", "Q2"): Status.FAIL,
    ("turn-off-overshoot", "Q1"): Status.FAIL, ("turn-off-overshoot", "Q2"): Status.FAIL,
}
NOT_EVALUATED = {
    ("spurious-turn-on", "Q1"): "devices.demo-sj650.characteristics.v_gs_th_hot",
    ("spurious-turn-on", "Q2"): "devices.demo-sj650.characteristics.v_gs_th_hot",
    ("driver-cmti", "Q1"): "switches[0].driver_cmti",
    ("driver-cmti", "Q2"): "switches[1].driver_cmti",
    ("recovery-overshoot", "Q1"): "devices.demo-sj650.characteristics.reverse_recovery",
    ("recovery-overshoot", "Q2"): "devices.demo-sj650.characteristics.reverse_recovery",
    ("junction-temperature", "Q1"): "devices.demo-sj650.characteristics.r_ds_on",
    ("junction-temperature", "Q2"): "devices.demo-sj650.characteristics.r_ds_on",
    ("avalanche-energy", "Q1"): "devices.demo-sj650.ratings.avalanche",
    ("avalanche-energy", "Q2"): "devices.demo-sj650.ratings.avalanche",
    ("short-circuit", "Q1"): "switches[0].short_circuit",
    ("short-circuit", "Q2"): "switches[1].short_circuit",
}


@pytest.fixture(scope="module")
def report():
    return check_file(CONTRACT_FILE)


def test_every_finding_is_there_once(report):
    assert sorted((f.rule, f.subject) for f in report.findings) == sorted([*EXPECTED, *NOT_EVALUATED, *STATUS])


@pytest.mark.parametrize("key", NOT_EVALUATED, ids=[f"{rule}-{subject}" for rule, subject in NOT_EVALUATED])
def test_rules_without_their_data_are_not_evaluated(report, key):
    finding = next(f for f in report.findings if (f.rule, f.subject) == key)
    assert finding.status is Status.NOT_EVALUATED
    assert any(item.startswith(NOT_EVALUATED[key]) for item in finding.missing), finding.missing


@pytest.mark.parametrize("key", EXPECTED, ids=[f"{rule}-{subject}" for rule, subject in EXPECTED])
def test_finding_matches_the_hand_calculation(report, key):
    value, limit, margin, status = EXPECTED[key]
    finding = next(f for f in report.findings if (f.rule, f.subject) == key)
    # hand values are rounded to 6 significant figures; the RK4 ring to 1e-4 of the solve_ivp reference
    assert finding.value == pytest.approx(value, rel=1e-4, abs=1e-9)
    assert finding.limit == pytest.approx(limit, rel=1e-9)
    assert finding.margin == pytest.approx(margin, rel=2e-3)
    assert finding.status is status


@pytest.mark.parametrize("key", STATUS, ids=[f"{rule}-{subject}" for rule, subject in STATUS])
def test_status_of_the_simulated_findings(report, key):
    finding = next(f for f in report.findings if (f.rule, f.subject) == key)
    assert finding.status is STATUS[key], finding


def _reference_cell(corner: dict, kelvin: bool, partner_kelvin: bool):
    """The contract cell at a finding's corner, for the independent reference (its own statement of the
    design-to-circuit mapping: R_g = external + internal; the partner held off through its r_off)."""
    from tests.reference.kirchhoff_cell import Cell, Device

    def device(prefix: str, own_kelvin: bool, v_on: float) -> Device:
        value = {name.removeprefix(prefix): quantity.value for name, quantity in corner.items()
                 if name.startswith(prefix) or (not prefix and "." not in name.replace("gate_drive.", ""))}
        return Device(v_th=value["v_gs_th"], g_fs=value["transconductance"], r_on=1.0 / 40.0, c_iss=value["c_iss"],
                      c_rss=((0.0,), (value["c_rss"],)), c_oss=((0.0,), (value["c_oss"],)),
                      r_gate=value["gate_drive.r_off"] + value["r_g_internal"], l_gate=1e-12, v_on=v_on,
                      v_off=value["gate_drive.off"], l_source=value["common_source_inductance"], kelvin=own_kelvin,
                      v_f=0.9, r_diode=0.02)

    dut = device("", kelvin, corner["gate_drive.on"].value)
    return Cell(bus_voltage=corner["bus_voltage"].value, load_current=corner["turn_off_current"].value,
                loop_inductance=corner["loop_inductance"].value, loop_resistance=0.0, dut=dut,
                opposite=device("opposite.", partner_kelvin, 0.0))


@pytest.mark.parametrize("subject, kelvin", [("Q1", True), ("Q2", False)])
def test_turn_off_peak_against_the_independent_reference(report, subject, kelvin):
    """The simulated peak at the finding's corner against scipy Radau on the cell written apart (within 2 %;
    the gate loop has no inductance in the design, 1 pH in the reference, whose states are all differential)."""
    from margincheck.physics.cell_edges import simulated_time
    from tests.physics.cell_builders import CELL, DEVICE, cell_arrays, with_changes
    from tests.reference.kirchhoff_cell import measure, simulate

    finding = next(f for f in report.findings if (f.rule, f.subject) == ("turn-off-overshoot", subject))
    cell = _reference_cell(finding.corner, kelvin, not kelvin)
    ours = cell_arrays(with_changes(CELL, bus_voltage=cell.bus_voltage, load_current=cell.load_current,
                                    loop_inductance=cell.loop_inductance),
                       with_changes(DEVICE, **cell.dut.__dict__), with_changes(DEVICE, **cell.opposite.__dict__))
    end = float(simulated_time(ours, "turn_off")[0])
    peak = measure(cell, "turn_off", simulate(cell, "turn_off", end))["peak_v_ds"]
    assert finding.value == pytest.approx(peak, rel=0.02)
    assert finding.details["first_order_peak"].value < finding.value   # the cross-check misses the ring


def test_stored_energy_of_the_bus_capacitor(report):
    finding = next(f for f in report.findings if f.rule == "capacitor-voltage")
    assert finding.details["stored_energy"].value == pytest.approx(8.82, rel=1e-9)


def test_verdict_is_fail(report):
    assert report.verdict is Verdict.FAIL
    assert report.exit_code == 1
