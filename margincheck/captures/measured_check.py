"""The figures measured on a double-pulse capture against the derated limits of the design rules.

``measured_findings`` gives one finding per rule that a capture speaks to, with the design rule's id, the very
derated limit the design rule uses (margincheck.rules.limits) and a basis that begins "measured". The value is
the worst over the capture's edges (the highest peak, the lowest gate...); the details hold each edge's value.

- ``turn-off-overshoot``: the v_ds peaks of both turn-offs (the switch under test);
- ``gate-on-voltage`` / ``gate-off-voltage``: the extremes of the device's measured gate over all three edges;
- ``spurious-turn-on``: the idle gate's maximum over all three edges, for the opposite switch of the leg (the
  design rule's subject is the idle switch, its limit that switch's hot threshold);
- ``driver-cmti``: the largest level-pair |dv/dt| of the edges, for a switch with an isolated driver;
- ``recovery-overshoot``: never evaluated (the opposite device's voltage is not a channel of a capture).

A measured value holds at the test's bus voltage and switched current only, not at the design's worst case:
every finding says so. A figure that could not be measured (NotMeasurable, or not finite) or a limit without its
rating is not evaluated, never a pass. A violation measured on one edge fails even where another edge could not
be measured: the worst of the capture is at least that bad.
"""

from __future__ import annotations

import dataclasses
import math
from dataclasses import dataclass
from operator import attrgetter

from margincheck.captures.design_section import CaptureSpec
from margincheck.captures.edges import NotMeasurable
from margincheck.captures.measurements import DoublePulseFigures, TurnOffFigures, TurnOnFigures, no_trace
from margincheck.design import Design, Switch
from margincheck.errors import format_path
from margincheck.findings import Bound, Finding, Quantity, Status, classify, margin_of
from margincheck.rules.limits import (
    DeratedLimit,
    cmti_limit,
    gate_off_limit,
    gate_on_limit,
    peak_voltage_limit,
    spurious_turn_on_limit,
)
from margincheck.rules.transients import no_partner
from margincheck.rules.worst_case import not_evaluated
from margincheck.units import format_value

__all__ = ["EDGE_NAMES", "measured_findings"]

Edge = TurnOffFigures | TurnOnFigures | NotMeasurable
#: The capture's edges as they are named in the findings' details.
EDGE_NAMES = ("first_turn_off", "second_turn_on", "second_turn_off")
_TURN_OFFS = ("first_turn_off", "second_turn_off")

_GATE_NOTE = ("a gate probed at the package's source pin includes the common-source drop L_s*di/dt, which the die "
              "does not see (a Kelvin source pin leaves it out): the value is the gate as probed")
_GATE_CAUTION = ("A gate probe's ground lead picks up the field of the power loop; measure V_GS differentially, "
                 "with a short ground, at the pins nearest the die.")


@dataclass(frozen=True)
class _Capture:
    """What every finding of one capture shares: the design, the entry, its edges and where it came from."""

    design: Design
    spec: CaptureSpec
    edges: dict[str, Edge]
    source: str

    def readings(self, figure: str, edges: tuple[str, ...] = EDGE_NAMES) -> dict[str, float | NotMeasurable]:
        """The named figure (dotted: ``gate.v_gs_max``) of each of ``edges``, or why the edge was not measured."""
        read = attrgetter(figure)
        return {name: self.edges[name] if isinstance(self.edges[name], NotMeasurable) else read(self.edges[name])
                for name in edges}

    def current(self, edge: str | None) -> float | None:
        """The switched current [A] of ``edge``; for None, the largest of the measured edges (None: none)."""
        readings = self.readings("current", EDGE_NAMES if edge is None else (edge,))
        currents = [value for value in map(_value, readings.values()) if value is not None]
        return max(currents) if currents else None


def measured_findings(design: Design, spec: CaptureSpec, figures: DoublePulseFigures,
                      sha256: str | None = None) -> list[Finding]:
    """The measured figures of one double-pulse capture against the design rules' derated limits.

    Parameters
    ----------
    design : Design
        The design whose ``captures:`` section holds ``spec`` (its devices, switches, pairing and policy).
    spec : CaptureSpec
        The capture's entry: the switch under test, the test's bus voltage, the file's name.
    figures : DoublePulseFigures
        The capture's edges measured (``measure_double_pulse``).
    sha256 : str, optional
        SHA-256 of the capture file (``Capture.sha256``), named in every finding's source.

    Returns
    -------
    list of Finding
        In the order of the rule catalogue: turn-off-overshoot, gate-on-voltage, gate-off-voltage (subject: the
        switch under test), spurious-turn-on (subject: the opposite switch, the idle device), driver-cmti (the
        switch under test; only when its driver is isolated), recovery-overshoot (not evaluated; subject: the
        opposite switch).

    Raises
    ------
    ValueError
        When the design has no switch ``spec.switch`` (a loaded design never has such an entry).
    """
    switch = next((item for item in design.switches if item.ref == spec.switch), None)
    if switch is None:
        raise ValueError(f'the design has no switch "{spec.switch}" (the capture {spec.name} names it)')
    edges = dict(zip(EDGE_NAMES, (figures.first_turn_off, figures.turn_on, figures.turn_off)))
    capture = _Capture(design, spec, edges, _source(spec, sha256))
    partner = design.opposite_of(switch)
    findings = [_turn_off_overshoot(capture, switch), _gate_on(capture, switch), _gate_off(capture, switch),
                _spurious_turn_on(capture, switch, partner)]
    if switch.driver_isolated:
        findings.append(_driver_cmti(capture, switch))
    findings.append(_recovery_overshoot(switch, partner))
    return [_at_the_test_point(capture, finding) for finding in findings]


def _source(spec: CaptureSpec, sha256: str | None) -> str:
    digest = f"sha256 {sha256}" if sha256 else "sha256 not given"
    return f"measured on the capture {spec.name} ({digest}); limit: the design rule's (margincheck.rules.limits)"


def _value(reading: float | NotMeasurable) -> float | None:
    """A finite reading as a float, else None."""
    if isinstance(reading, NotMeasurable):
        return None
    value = float(reading)
    return value if math.isfinite(value) else None


def _why(reading: float | NotMeasurable) -> str:
    return reading.reason if isinstance(reading, NotMeasurable) else f"not a finite number ({reading})"


def _finding(capture: _Capture, rule_id: str, subject: str, limit: DeratedLimit, figure: str,
             readings: dict[str, float | NotMeasurable], **text) -> Finding:
    """The worst of ``readings`` against ``limit``: the highest for an upper limit, the lowest for a lower one.

    ``text`` holds the finding's ``kind``, ``basis``, and optionally ``note`` and ``caution``.
    """
    values = {edge: value for edge, value in ((edge, _value(r)) for edge, r in readings.items()) if value is not None}
    unmeasured = "; ".join(f"{edge}: {_why(reading)}" for edge, reading in readings.items() if edge not in values)
    notes = [*limit.notes, text.pop("note", "")]
    details = {f"{figure}_{edge}": Quantity(value, text["kind"]) for edge, value in values.items()}
    common = dict(rule=rule_id, subject=subject, source=capture.source, bound=limit.bound, details=details, **text)
    if limit.value is None:
        return Finding(status=Status.NOT_EVALUATED, missing=(limit.needs,), note=_joined(notes), **common)
    if not values:
        return Finding(status=Status.NOT_EVALUATED, limit=limit.value, note=_joined([f"not measured: {unmeasured}",
                                                                                       *notes]), **common)
    pick = max if limit.bound is Bound.UPPER else min
    worst = pick(values, key=values.get)
    margin = float(margin_of(values[worst], limit.value, limit.bound, limit.scale))
    status = classify(margin, capture.design.policy.marginal_band)
    corner = {"bus_voltage": Quantity(capture.spec.bus_voltage, "voltage")}
    current = capture.current(worst)
    if current is not None:
        corner["switched_current"] = Quantity(current, "current")
    if unmeasured and status is not Status.FAIL:    # the edge not measured may be the worst: never a pass
        return Finding(status=Status.NOT_EVALUATED, limit=limit.value, corner=corner,
                       note=_joined([f"not measured: {unmeasured}", *notes]), **common)
    if unmeasured:
        notes.append(f"worst of the edges measured ({worst}); not measured: {unmeasured}")
    return Finding(status=status, value=values[worst], limit=limit.value, margin=margin, corner=corner,
                   note=_joined(notes), **common)


def _joined(notes: list[str]) -> str:
    return "; ".join(note for note in notes if note)


def _at_the_test_point(capture: _Capture, finding: Finding) -> Finding:
    """``finding`` with its source, and the note that a measured value holds at the test's conditions only."""
    design, spec = capture.design, capture.spec
    current = capture.current(None)
    if "switched_current" in finding.corner:
        current = finding.corner["switched_current"].value
    test = f"bus voltage {format_value(spec.bus_voltage, 'voltage')}, switched current " + (
        format_value(current, "current") if current is not None else "not measured")
    worst = [f"bus voltage up to {format_value(design.conditions.bus_voltage.high, 'voltage')}"]
    if design.conditions.turn_off_current is not None:
        worst.append(f"turn-off current up to {format_value(design.conditions.turn_off_current.high, 'current')}")
    note = (f"a measured value holds at the test's conditions only ({test}), not at the design's worst case "
            f"({', '.join(worst)})")
    return dataclasses.replace(finding, source=capture.source, note=_joined([finding.note, note]))


def _turn_off_overshoot(capture: _Capture, switch: Switch) -> Finding:
    return _finding(
        capture, "turn-off-overshoot", switch.ref, peak_voltage_limit(switch, capture.design.policy_for(switch)),
        "peak_v_ds", capture.readings("peak_v_ds", _TURN_OFFS), kind="voltage",
        basis="measured: highest v_ds peak of the capture's turn-offs <= peak_voltage * v_ds_max",
        caution="The peak read depends on the probe: one slower than the ring understates it, a long ground lead "
                "adds a ring of its own. Use a probe rated for the voltage, with a short ground connection.")


def _gate_on(capture: _Capture, switch: Switch) -> Finding:
    return _finding(
        capture, "gate-on-voltage", switch.ref, gate_on_limit(switch, capture.design.policy_for(switch)), "v_gs_max",
        capture.readings("gate.v_gs_max"), kind="voltage", note=_GATE_NOTE, caution=_GATE_CAUTION,
        basis="measured: highest v_gs of the device over the capture's edges <= gate_voltage * v_gs_max")


def _gate_off(capture: _Capture, switch: Switch) -> Finding:
    return _finding(
        capture, "gate-off-voltage", switch.ref, gate_off_limit(switch, capture.design.policy_for(switch)), "v_gs_min",
        capture.readings("gate.v_gs_min"), kind="voltage", note=_GATE_NOTE, caution=_GATE_CAUTION,
        basis="measured: lowest v_gs of the device over the capture's edges >= gate_voltage * v_gs_min")


def _spurious_turn_on(capture: _Capture, switch: Switch, partner: Switch | None) -> Finding:
    """The idle gate's highest value, for the partner: the design rule's subject is the idle switch."""
    basis = ("measured: highest v_gs of the idle device over the capture's edges <= spurious_turn_on * "
             "V_th,min(T_j,max)")
    if partner is None:
        return no_partner("spurious-turn-on", switch, "voltage", basis)
    readings = capture.readings("gate.v_gs_idle_max")
    if no_trace("v_gs_idle") in readings.values():
        return not_evaluated("spurious-turn-on", partner.ref, "voltage", basis,
                             f"{format_path(capture.spec.path)}.columns.v_gs_idle",
                             f"the idle device's gate was not probed (the gate of {partner.ref} while {switch.ref} "
                             "switches)")
    return _finding(
        capture, "spurious-turn-on", partner.ref, spurious_turn_on_limit(partner, capture.design.policy_for(partner)),
        "v_gs_idle_max", readings, kind="voltage", basis=basis,
        note=f"the gate of {partner.ref} while {switch.ref} switches, over the whole of each edge (also while "
             f"{partner.ref} conducts rather than blocks: on the safe side)",
        caution="The induced gate pulse is short and small; measure it differentially, with a short ground, at "
                "the idle device's pins.")


def _driver_cmti(capture: _Capture, switch: Switch) -> Finding:
    levels = next((edge.levels.describe() for edge in capture.edges.values()
                   if not isinstance(edge, NotMeasurable)), "level-pair")
    return _finding(
        capture, "driver-cmti", switch.ref, cmti_limit(switch, capture.design.policy_for(switch)), "dv_dt",
        capture.readings("dv_dt"), kind="voltage_slew_rate",
        basis=f"measured: largest |dv/dt| ({levels}) of the switch node over the capture's edges <= cmti * CMTI",
        note=f"the {levels} edge rate; ringing raises the local dv/dt of the switch node above it",
        caution="CMTI is stated at a test condition; confirm the driver's outputs stay clean while the switch node "
                "swings.")


def _recovery_overshoot(switch: Switch, partner: Switch | None) -> Finding:
    basis = "measured: highest v_ds of the opposite device while the switch under test turns on"
    subject = switch if partner is None else partner
    return not_evaluated("recovery-overshoot", subject.ref, "voltage", basis,
                         "v_ds of the opposite device (not a channel of a capture)",
                         f"the opposite device's voltage is not probed: a capture holds v_ds of {switch.ref} only, "
                         "and V_bus - v_ds leaves out the drop across the loop inductance")

