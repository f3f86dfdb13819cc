"""The safe-operating-area rule and the short-circuit rule (design.md section 5, "Thermal, SOA, avalanche").

Each switch's SOA boundary is built at its hottest case temperature from the pulsed current rating, the
R_ds(on) line at T_j,max, the thermal line of its Z_th and, where one applies, the datasheet chart. Every
operating point of the design and the turn-off transient (V_pk, I_off, t_fi) are checked against it; a short
circuit is checked against the withstand rating, or against the SOA for a device that has none. Rule ids are
contract.
"""

from __future__ import annotations

import dataclasses
import math
from dataclasses import dataclass

import numpy as np

from margincheck.design import Design, OperatingPoint, Switch
from margincheck.devices import SoaCurve
from margincheck.errors import format_path
from margincheck.findings import Finding, Status
from margincheck.intervals import Interval, Side
from margincheck.physics.safe_operating_area import (
    Boundary,
    boundary_current,
    scaled_chart_current,
    thermal_line_current,
)
from margincheck.physics.thermal import periodic_pulse_impedance
from margincheck.rules.core import turn_off_overshoot
from margincheck.rules.registry import Scope, rule
from margincheck.rules.thermal import case_temperature, hot_on_resistance, steady_thermal_resistance
from margincheck.rules.worst_case import Check, Input, not_evaluated, worst_case_finding
from margincheck.units import format_value

__all__ = ["SoaPoint", "SoaView", "short_circuit_pulse_finding", "soa_view"]

_SOURCE = ("SOA boundary min(I_DM, V/R_ds(on)(T_j,max), (T_j,max - T_c)/(V*Z_th(t_p)), chart scaled to T_c): Baliga "
           "2008, ch. 6 (from memory); Foster Z_th, JEDEC JESD51-14 (from memory); soa factor common practice")
_BASIS = "I_D <= soa * I_boundary(V_DS, t_p, T_c,max) and V_DS <= v_ds_max"
_SHORT_CIRCUIT_BASIS = "t_detect + t_off <= short_circuit * t_sc"
_TINY_CURRENT = 1e-9  # a boundary that has closed (T_c at T_j,max) still gives a finite, failing margin


@dataclass(frozen=True)
class SoaPoint:
    """One checked point at its worst corner: V_DS [V], I_D [A], pulse [s] (inf: dc), period [s] (inf:
    single), status and the part of the boundary that governs it."""

    name: str
    voltage: float | None
    current: float | None
    pulse: float
    period: float
    status: Status
    governing: str = ""


@dataclass(frozen=True)
class SoaView:
    """What the SOA chart of one switch draws: its boundaries at the hottest case (rated; ``factor`` is the
    policy's share of them that a point may use) and the checked points."""

    subject: str
    case_temperature: float
    v_ds_max: float
    factor: float
    boundaries: tuple[tuple[str, np.ndarray, np.ndarray], ...]
    points: tuple[SoaPoint, ...]


class _Boundary:
    """A switch's SOA boundary: what it lacks, and its parts for one pulse (``for_pulse``)."""

    def __init__(self, switch: Switch):
        device = switch.device
        self.device = device
        self.hot_on_resistance = hot_on_resistance(switch)
        steady = steady_thermal_resistance(device)
        self.steady = steady.high if steady is not None and steady.has_high else None
        self.missing = [f"devices.{device.name}.{name}" for name, value in (
            ("ratings.i_d_pulse", device.i_d_pulse), ("ratings.t_j_max", device.t_j_max)) if value is None]
        if device.foster is None and device.r_th_jc is None and device.soa_chart is None:
            self.missing.append(f"devices.{device.name}.thermal (foster, z_th_curve or r_th_jc) or soa_chart")
        self.notes = [] if self.hot_on_resistance is not None else [
            "no R_ds(on) temperature model: the on-resistance line is left out (it only marks where the device "
            "cannot carry the current)"]

    def for_pulse(self, pulse: float, period: float) -> _PulseBoundary:
        """The boundary for one pulse: its Z_th and datasheet curve resolved once, with what was assumed."""
        notes: list[str] = []
        return _PulseBoundary(self, self._impedance(pulse, period, notes), self._chart_curve(pulse, period, notes),
                              tuple(notes))

    def _impedance(self, pulse: float, period: float, notes: list[str]) -> float | None:
        """Z_th for this pulse [K/W]: the Foster network at the largest end of its scale, else the steady
        R_th,jc (conservative)."""
        if math.isinf(pulse) or self.device.foster is None:
            if not math.isinf(pulse) and self.steady is not None:
                notes.append("no transient Z_th given: the steady R_th,jc is used for every pulse (conservative)")
            return self.steady
        return float(periodic_pulse_impedance(pulse, period, *self.device.foster)) * self.device.foster_scale.high

    def _chart_curve(self, pulse: float, period: float, notes: list[str]) -> SoaCurve | None:
        """The datasheet curve for the shortest pulse not shorter than this one (single pulses only)."""
        if self.device.soa_chart is None:
            return None
        if not math.isinf(period):
            notes.append("the datasheet chart is single-pulse: not used for a periodic point")
            return None
        curve = next((curve for curve in self.device.soa_chart.curves if curve.pulse >= pulse), None)
        if curve is None:
            notes.append("no datasheet curve for a pulse this long")
        return curve


@dataclass(frozen=True)
class _PulseBoundary:
    """The SOA boundary of one switch for one pulse, as a function of V_DS and the case temperature."""

    whole: _Boundary
    impedance: float | None
    chart_curve: SoaCurve | None
    notes: tuple[str, ...]

    def current(self, voltage, case):
        """(boundary current [A], governing ``Boundary``) at V_DS and the case temperature (arrays)."""
        device = self.whole.device
        thermal = np.nan if self.impedance is None else thermal_line_current(voltage, device.t_j_max, case,
                                                                             self.impedance)
        curve, chart = self.chart_curve, device.soa_chart
        chart_current = None if curve is None else scaled_chart_current(voltage, curve.voltages, curve.currents,
                                                                        chart.t_c, device.t_j_max, case)
        return boundary_current(voltage, device.i_d_pulse, self.whole.hot_on_resistance, thermal, chart_current)


def _pulse_text(pulse: float, period: float) -> str:
    if math.isinf(pulse):
        return "dc"
    train = "single pulse" if math.isinf(period) else f"every {format_value(period, 'time')}"
    return f"{format_value(pulse, 'time')} {train}"


def _point_finding(switch: Switch, design: Design, point: OperatingPoint, case: Input, rule_id: str,
                   boundary: _Boundary) -> tuple[Finding, str, tuple[str, ...]]:
    """The finding of one point (its voltage edge first, then its current), what governs it, and what the
    boundary for its pulse assumed."""
    device, (voltage_field, current_field) = switch.device, point.field_names
    pulse = boundary.for_pulse(point.pulse, point.period)
    voltage = {"v_ds": Input(point.v_ds, "voltage", Side.BOTH, voltage_field)}
    edge = worst_case_finding(Check(
        rule=rule_id, subject=switch.ref, kind="voltage", basis=_BASIS, source=_SOURCE, inputs=voltage,
        model=lambda grid: grid["v_ds"], limit=device.v_ds_max), design.policy.marginal_band)
    if edge.status is Status.FAIL:
        return dataclasses.replace(edge, note="beyond the voltage edge of the SOA (v_ds_max)"), "v_ds_max", ()
    inputs = voltage | {"case_temperature": case,
                        "i_d": Input(point.i_d, "current", Side.MAX, current_field)}
    factor = design.policy_for(switch).soa

    def limit(grid: dict) -> np.ndarray:
        current, _ = pulse.current(grid["v_ds"], grid["case_temperature"])
        return factor * np.maximum(current, _TINY_CURRENT)

    def details(grid: dict) -> dict:
        return {"boundary_current": (pulse.current(grid["v_ds"], grid["case_temperature"])[0], "current")}

    limit_needs = tuple(boundary.missing)
    finding = worst_case_finding(Check(
        rule=rule_id, subject=switch.ref, kind="current", basis=_BASIS, source=_SOURCE, inputs=inputs,
        model=lambda grid: grid["i_d"], limit=None if limit_needs else limit, limit_needs=limit_needs,
        details=details), design.policy.marginal_band)
    if finding.status is Status.NOT_EVALUATED:
        return finding, "", pulse.notes
    if edge.margin is not None and edge.margin < finding.margin:  # closer to V(BR)DSS than to the current limit
        return dataclasses.replace(edge, note="nearest the voltage edge of the SOA (v_ds_max)"), "v_ds_max", ()
    at = {name: np.array([item.value]) for name, item in finding.corner.items()}
    governing = Boundary(int(pulse.current(at["v_ds"], at["case_temperature"])[1][0]))
    return finding, governing.label, pulse.notes


def _case_input(switch: Switch, design: Design) -> Input:
    """The hottest case temperature alone: every part of the boundary shrinks as the case heats up."""
    interval, field = case_temperature(switch, design)
    hottest = Interval.exact(interval.high) if interval is not None and interval.has_high else interval
    return Input(hottest, "temperature", Side.MAX, field)


def _transient_point(switch: Switch, design: Design) -> OperatingPoint | str:
    """The turn-off transient as a point: (V_pk, I_off, t_fi) at the worst overshoot corner."""
    peak = turn_off_overshoot(switch, design)
    current = peak.corner.get("turn_off_current")
    fall = peak.details.get("current_fall_time")
    if fall is None and current is not None and "turn_off_di_dt" in peak.details:
        fall = dataclasses.replace(current, value=current.value / peak.details["turn_off_di_dt"].value, kind="time")
    if peak.value is None or current is None or fall is None or not math.isfinite(fall.value):
        return "the turn-off peak, current and fall time (see turn-off-overshoot)"
    return OperatingPoint("turn-off transient", Interval.exact(peak.value), Interval.exact(current.value),
                          fall.value, math.inf, switch.path,
                          ("turn-off-overshoot (its V_pk)", "conditions.turn_off_current"))


_PointResult = tuple[OperatingPoint | None, Finding, str]


def _evaluated_points(switch: Switch, design: Design) -> tuple[list[_PointResult], list[str]]:
    """Every point of the switch with its finding and governing boundary, and the notes they raised."""
    boundary, case = _Boundary(switch), _case_input(switch, design)
    notes, results = list(boundary.notes), []
    for point in (*switch.soa_points, _transient_point(switch, design)):
        if isinstance(point, str):  # what the turn-off transient needs and lacks
            results.append((None, not_evaluated("soa", switch.ref, "current", _BASIS, point), ""))
            continue
        finding, governing, assumed = _point_finding(switch, design, point, case, "soa", boundary)
        results.append((point, finding, governing))
        notes += assumed
    return results, notes


def _points_of(switch: Switch, design: Design) -> tuple[list[_PointResult], list[str]]:
    return design.remembered(("soa points", switch.ref), lambda: _evaluated_points(switch, design))


def _worst(results: list[_PointResult]) -> _PointResult:
    """The deciding point: the worst failure, else a point not evaluated, else the smallest margin."""
    def rank(item):
        finding = item[1]
        order = {Status.FAIL: 0, Status.NOT_EVALUATED: 1}.get(finding.status, 2)
        return order, finding.margin if finding.margin is not None else 0.0

    return min(results, key=rank)


@rule("soa", title="Operating points and the turn-off transient inside the safe operating area", scope=Scope.SWITCH)
def safe_operating_area(switch: Switch, design: Design) -> Finding:
    """Every point's I_D ≤ ``soa`` × the boundary current at its V_DS, pulse and the hottest case."""
    results, notes = _points_of(switch, design)
    point, finding, governing = _worst(results)
    where = "" if point is None else (f"deciding point: {point.name} ({_pulse_text(point.pulse, point.period)})"
                                      + (f", governed by {governing}" if governing else ""))
    checked = f"{len(results)} point{'s' if len(results) != 1 else ''} checked (operating points and the turn-off " \
              "transient at V_pk, I_off for t_fi)"
    note = "; ".join(dict.fromkeys(filter(None, [where, finding.note, checked, *notes])))
    return dataclasses.replace(finding, note=note, caution=(
        "A datasheet SOA is for a single pulse at its stated case temperature; the boundary here is carried to "
        "the hottest case. Measure the case temperature during the test."))


def soa_view(switch: Switch, design: Design) -> SoaView | None:
    """The boundaries (one per pulse of the checked points) and the points of ``switch``, for the chart."""
    device = switch.device
    results, _ = _points_of(switch, design)
    case = _case_input(switch, design).interval
    if case is None or not case.has_high or device.t_j_max is None or device.i_d_pulse is None:
        return None
    boundary = _Boundary(switch)
    voltages = np.logspace(0.0, math.log10(device.v_ds_max), 200)
    pulses = dict.fromkeys((point.pulse, point.period) for point, _, _ in results if point is not None)
    curves = tuple((_pulse_text(pulse, period), voltages, current) for pulse, period in pulses
                   if np.isfinite(current := boundary.for_pulse(pulse, period).current(voltages, case.high)[0]).any())
    points = tuple(SoaPoint(point.name if point else "not evaluated", _corner(finding, "v_ds"),
                            _point_current(point, finding), point.pulse if point else math.nan,
                            point.period if point else math.inf, finding.status, governing)
                   for point, finding, governing in results)
    if not curves:
        return None  # no part of the boundary is known (see the soa finding for what is missing)
    return SoaView(switch.ref, case.high, device.v_ds_max, design.policy_for(switch).soa, curves, points)


def _point_current(point: OperatingPoint | None, finding: Finding) -> float | None:
    """The point's current at its worst corner (a finding on the voltage edge holds the voltage instead)."""
    if finding.kind == "current":
        return finding.value
    return point.i_d.high if point is not None and point.i_d.has_high else None


def _corner(finding: Finding, name: str) -> float | None:
    item = finding.corner.get(name)
    return None if item is None else item.value


def short_circuit_pulse_finding(switch: Switch, design: Design) -> Finding:
    """The short-circuit pulse (V_bus,max, I_sc, t_response) against the SOA, for a device with no withstand
    rating (``short_circuit: none``)."""
    case = switch.short_circuit
    bus = design.conditions.bus_voltage
    response = case.response_time
    if not bus.has_high or not response.has_high:
        missing = "conditions.bus_voltage (maximum)" if not bus.has_high else \
            f"{format_path(case.path)}.response_time (maximum)"
        return not_evaluated("short-circuit", switch.ref, "current", _BASIS, missing)
    point = OperatingPoint("short circuit", Interval.exact(bus.high), case.current, response.high, math.inf,
                           case.path, ("conditions.bus_voltage", f"{format_path(case.path)}.current"))
    boundary = _Boundary(switch)
    finding, governing, assumed = _point_finding(switch, design, point, _case_input(switch, design),
                                                 "short-circuit", boundary)
    note = "; ".join(dict.fromkeys(filter(None, [
        "the device has no short-circuit withstand rating: the fault must be cleared inside the SOA",
        f"governed by {governing}" if governing else "", finding.note, *boundary.notes, *assumed])))
    return dataclasses.replace(finding, note=note)


def _outside_rating(switch: Switch, design: Design) -> Finding | None:
    """Not evaluated, saying why, when the withstand rating may not cover this design: its bus or gate voltage
    goes beyond the rating's test conditions (either shortens the withstand time), or its maximum is not given."""
    rating, bus, on = switch.device.short_circuit, design.conditions.bus_voltage, switch.gate_drive.on
    rated = (f"the short-circuit withstand time of {format_value(rating.withstand_time, 'time')} is rated at a "
             f"{format_value(rating.v_ds, 'voltage')} bus and V_GS {format_value(rating.v_gs, 'voltage')}")
    for field, level in (("conditions.bus_voltage", bus), (f"{format_path(switch.path)}.gate_drive.on", on)):
        if not level.has_high:
            return _short_circuit_not_evaluated(switch, f"{field} (maximum)",
                                                f"{rated}; without this design's maximum it cannot be known to apply")
    reached, needed = [], []
    if bus.high > rating.v_ds + 1e-9:
        reached.append(f"this design's bus reaches {format_value(bus.high, 'voltage')}")
        needed.append(f"a {format_value(bus.high, 'voltage')} bus")
    if on.high > rating.v_gs + 1e-9:
        reached.append(f"its gate drive reaches V_GS {format_value(on.high, 'voltage')}")
        needed.append(f"V_GS {format_value(on.high, 'voltage')}")
    if not reached:
        return None
    needed_text = " and ".join(needed)
    return _short_circuit_not_evaluated(
        switch, f"devices.{switch.device.name}.ratings.short_circuit at {needed_text} or more",
        f"{rated}; {' and '.join(reached)}, beyond the rating's test conditions (a higher voltage shortens the "
        f"withstand time), so the rating does not cover this design: ask for a rating at {needed_text} or more")


def _short_circuit_not_evaluated(switch: Switch, missing: str, note: str = "") -> Finding:
    return not_evaluated("short-circuit", switch.ref, "time", _SHORT_CIRCUIT_BASIS, missing, note)


@rule("short-circuit", title="Protection response time against the short-circuit withstand time",
      scope=Scope.SWITCH)
def short_circuit(switch: Switch, design: Design) -> Finding:
    """Detection plus turn-off time ≤ ``short_circuit`` × the rated withstand time (at the rating's V_DS and
    V_GS or below); for a device with no withstand rating, the fault pulse inside the SOA."""
    case, rating = switch.short_circuit, switch.device.short_circuit
    if case is None:
        return _short_circuit_not_evaluated(switch, f"{format_path(switch.path)}.short_circuit",
                              "no short-circuit case given (fault current and protection response time)")
    if rating is None:
        return _short_circuit_not_evaluated(switch, f"devices.{switch.device.name}.ratings.short_circuit")
    if rating.withstand_time is None:
        return short_circuit_pulse_finding(switch, design)
    outside = _outside_rating(switch, design)
    if outside is not None:
        return outside
    check = Check(
        rule="short-circuit", subject=switch.ref, kind="time", basis=_SHORT_CIRCUIT_BASIS,
        source="margincheck criterion: the protection's response time stays within the policy's fraction of the "
               "device's rated short-circuit withstand time (the factor is common practice)",
        inputs={"response_time": Input(case.response_time, "time", Side.MAX,
                                       f"{format_path(case.path)}.response_time")},
        model=lambda grid: grid["response_time"], limit=design.policy_for(switch).short_circuit * rating.withstand_time,
        caution="Verify the protection with a short-circuit test at reduced bus voltage first; the withstand time "
                "falls with higher bus voltage, gate voltage and temperature.")
    return worst_case_finding(check, design.policy.marginal_band)
