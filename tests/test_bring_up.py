"""The bring-up plan (margincheck.bringup) and its command, from a 100 V capture of the independent double-pulse
circuit (tests/captures/double_pulse_circuit.py, scipy Radau, driven gate) written as a scope CSV."""

from __future__ import annotations

import copy
import json
import math

import numpy as np
import pytest
from scipy.integrate import solve_ivp

from margincheck.bringup import SAFE_VOLTAGE, discharge_time, pulse_settings, step_voltages
from tests.captures.double_pulse_circuit import scope
from tests.captures.test_calibration import LEG


def test_the_first_pulse_charges_the_load_to_the_target_current():
    """t1 = L·I/V by hand: 50 uH · 20 A / 400 V = 2.5 us; t2 = t1/10 turns off 20 A + 400 V · 0.25 us / 50 uH."""
    pulses = pulse_settings(400.0, 20.0, 50e-6, 5e-6)
    assert pulses.first_pulse == pytest.approx(2.5e-6)
    assert pulses.second_pulse == pytest.approx(0.25e-6)
    assert pulses.second_current == pytest.approx(22.0)
    assert pulse_settings(400.0, 20.0, 50e-6, 5e-6, 1e-6).second_current == pytest.approx(28.0)


def test_the_discharge_time_matches_an_integrated_rc_discharge():
    """Against scipy's solve_ivp of C·dv/dt = −v/R, stopped at 60 V (IEC 60204-1:2016, 6.2.4)."""
    capacitance, resistance, voltage = 60e-6, 47e3, 850.0
    reached = lambda t, v: v[0] - SAFE_VOLTAGE  # noqa: E731
    reached.terminal = True
    solution = solve_ivp(lambda t, v: -v / (resistance * capacitance), (0.0, 100.0), [voltage], events=reached,
                         rtol=1e-10, atol=1e-9)
    assert discharge_time(capacitance, resistance, voltage) == pytest.approx(solution.t_events[0][0], rel=1e-6)
    assert discharge_time(capacitance, resistance, 48.0) == 0.0


def test_steps_rise_evenly_to_the_target_in_whole_5_volt_steps():
    assert step_voltages(100.0, 400.0, 5) == (160.0, 220.0, 280.0, 340.0, 400.0)
    assert step_voltages(100.0, 397.0, 4) == (175.0, 250.0, 325.0, 397.0)
    assert step_voltages(400.0, 400.0, 5) == (400.0,)


@pytest.fixture(scope="module")
def bench_capture(tmp_path_factory):
    """A 100 V capture of the driven-gate circuit as a CSV in a captures folder (the design's relative path)."""
    from tests.captures.double_pulse_circuit import Circuit, simulate
    from tests.captures.test_calibration import DRIVEN

    channels = scope(simulate(Circuit(bus_voltage=100.0, start_current=19.4, **DRIVEN)))
    folder = tmp_path_factory.mktemp("bench")
    (folder / "captures").mkdir()
    rows = np.column_stack([channels[name] for name in ("time", "v_ds", "i_d", "v_gs")])
    np.savetxt(folder / "captures" / "q1-100v.csv", rows, delimiter=",", header="time,v_ds,i_d,v_gs", comments="")
    return folder


def _design(folder, v_ds_max: str = "1200 V", v_gs_min: str = "-10 V") -> str:
    """The leg with the capture; its gate's negative rating wide enough for the shared source's spike."""
    data = copy.deepcopy(LEG)
    data["devices"]["dut"]["ratings"] |= {"v_ds_max": v_ds_max, "v_gs_min": v_gs_min}
    data["capacitors"] = [{"ref": "C1", "rated_voltage": "500 V", "capacitance": "100 uF"}]
    data["captures"] = [{"file": "captures/q1-100v.csv", "switch": "Q1", "bus_voltage": "100 V",
                         "load_inductance": "50 uH"}]
    import yaml

    path = folder / f"leg-{v_ds_max.replace(' ', '')}{v_gs_min.replace(' ', '')}.yaml"
    path.write_text(yaml.safe_dump(data, sort_keys=False), encoding="utf-8")
    return str(path)


def test_the_plan_reaches_the_target_when_every_predicted_peak_is_inside(bench_capture, run_cli):
    code, out, err = run_cli("bring-up", _design(bench_capture), "--format", "json", "--bleeder", "47 kohm")
    plan = json.loads(out)
    assert (code, err) == (0, "")
    assert plan["format"] == "margincheck-bring-up/1"
    assert plan["planned_steps"] == len(plan["steps"]) == 5
    assert [step["bus_voltage"]["magnitude"] for step in plan["steps"]] == [160, 220, 280, 340, 400]
    last = plan["steps"][-1]
    assert last["first_pulse"] == {"magnitude": pytest.approx(2.5e-6), "units": "s"}
    # 0.5 * 100 uF * (400 V)^2 = 8 J; 47 kohm * 100 uF * ln(400/60)
    assert last["stored_energy"]["magnitude"] == pytest.approx(8.0)
    assert last["discharge_time"]["magnitude"] == pytest.approx(4.7 * math.log(400 / 60), rel=1e-4)
    assert {finding["rule"] for finding in plan["measured"]} >= {"turn-off-overshoot", "gate-on-voltage"}
    assert all(finding["basis"].startswith("measured") for finding in plan["measured"])
    assert {item["name"] for item in plan["calibration"]["values"]} == {
        "loop_inductance", "quality_factor", "common_source_inductance"}
    assert any(finding["rule"] == "turn-off-overshoot" for finding in plan["predicted"])
    assert plan["predicted_failures"] == []
    assert any("discharge" in caution.lower() for caution in plan["cautions"])


def test_a_predicted_fail_of_another_rule_is_named_and_fails_the_gate(bench_capture, run_cli):
    """-8 V rating: the calibrated model's gate-off spike (about -8.4 V) fails its -7.2 V derated limit at the
    worst case, although every step's peak is inside."""
    code, out, _ = run_cli("bring-up", _design(bench_capture, v_gs_min="-8 V"), "--format", "json")
    plan = json.loads(out)
    assert code == 1
    assert plan["planned_steps"] == len(plan["steps"])
    assert "gate-off-voltage for Q1" in plan["predicted_failures"]


def test_the_plan_stops_at_the_last_step_inside_the_derated_limit(bench_capture, run_cli):
    """v_ds_max 475 V: a derated limit of 380 V (0.8 x) lies between the predicted peaks of two steps."""
    code, out, _ = run_cli("bring-up", _design(bench_capture, "475 V"), "--format", "json", "--set",
                           "design.revision=B")
    plan = json.loads(out)
    limit = plan["limit"]["magnitude"]
    assert (code, limit) == (1, pytest.approx(380.0))
    planned = [step for step in plan["steps"] if step["planned"]]
    refused = [step for step in plan["steps"] if not step["planned"]]
    assert planned and refused
    def threshold(step):  # the bus plus the predicted overshoot raised by the 20 % stop tolerance
        bus = step["bus_voltage"]["magnitude"]
        return bus + 1.2 * (step["predicted_peak"]["magnitude"] - bus)

    assert all(threshold(step) <= limit for step in planned)
    assert threshold(refused[0]) > limit
    for step in plan["steps"]:
        assert step["stop_above"]["magnitude"] == pytest.approx(min(threshold(step), limit))
    assert f"{refused[0]['bus_voltage']['magnitude']:g} V" in plan["stop_reason"]
    # traceable: every input with its hash, and the override of this run
    assert plan["design"]["inputs"][0]["sha256"] and plan["overrides"][0]["set"] == "design.revision=B"


def test_a_capture_whose_level_disagrees_with_its_declared_bus_is_not_a_basis(bench_capture, run_cli):
    """The 100 V capture declared as a 300 V test (a wrong bus_voltage, unit or attenuation): no step."""
    code, out, _ = run_cli("bring-up", _design(bench_capture), "--format", "json", "--set",
                           "captures[0].bus_voltage=300 V")
    plan = json.loads(out)
    assert (code, plan["planned_steps"]) == (1, 0)
    assert "settles at" in plan["stop_reason"] and "check bus_voltage" in plan["stop_reason"]


def test_steps_above_the_design_are_refused(bench_capture, run_cli):
    code, out, _ = run_cli("bring-up", _design(bench_capture), "--format", "json", "--voltages", "200,600")
    plan = json.loads(out)
    assert (code, plan["planned_steps"], plan["steps"]) == (1, 0, [])
    assert "600 V, is above the design's highest bus voltage 400 V" in plan["stop_reason"]


def test_the_plan_as_a_markdown_checklist(bench_capture, run_cli):
    code, out, _ = run_cli("bring-up", _design(bench_capture), "--format", "markdown", "--voltages", "200,400")
    assert code == 0
    assert out.count("| [ ] |") == 2
    assert "## Cautions" in out and "The plan stops after step 2" in out


def test_a_design_without_captures_is_a_located_error(write_design, run_cli):
    code, _, err = run_cli("bring-up", write_design(LEG))
    assert code == 2
    assert "captures: the design has no captures: section" in err
    assert len(err.strip().splitlines()) == 1


def test_the_picture_overlays_the_fitted_model(bench_capture, run_cli, tmp_path):
    pytest.importorskip("matplotlib")
    picture = tmp_path / "plan.svg"
    code, _, err = run_cli("bring-up", _design(bench_capture), "--voltages", "400", "--plot", picture)
    assert (code, err) == (0, "")
    text = picture.read_text(encoding="utf-8")
    assert "fitted model, turn-off" in text and "fitted model, turn-on" in text
