"""The bring-up plan as text (a terminal), Markdown (a bench checklist to print and tick) and JSON
(format ``margincheck-bring-up/1``)."""

from __future__ import annotations

import json
import math
from typing import Any, Callable, TextIO

from margincheck import __version__
from margincheck.bringup import SAFE_VOLTAGE, BringUpPlan, PlanStep
from margincheck.captures.calibration import Calibration
from margincheck.findings import Finding
from margincheck.report.common import result_text
from margincheck.report.json_report import finding_object, magnitude, overrides_object
from margincheck.report.markdown import escape
from margincheck.safe_text import printable
from margincheck.units import format_value

__all__ = ["BRING_UP_FORMAT", "RENDERERS", "plan_object", "render_json", "render_markdown", "render_text"]

BRING_UP_FORMAT = "margincheck-bring-up/1"


def _v(value: float) -> str:
    return format_value(value, "voltage")


def _step_cells(step: PlanStep) -> list[str]:
    """The cells of one step's row: bus, t1, gap, t2, I1/I2, predicted peak, margin, stop above, energy, discharge."""
    pulses = step.pulses
    discharge = "n/a" if step.discharge_time is None else format_value(step.discharge_time, "time")
    energy = "n/a" if step.stored_energy is None else format_value(step.stored_energy, "energy")
    return [_v(step.bus_voltage), format_value(pulses.first_pulse, "time"), format_value(pulses.gap, "time"),
            format_value(pulses.second_pulse, "time"),
            f"{format_value(pulses.first_current, 'current')} / {format_value(pulses.second_current, 'current')}",
            _v(step.predicted_peak), _v(step.margin), _v(step.stop_above), energy, discharge]


_STEP_HEADINGS = ["bus", "pulse 1", "gap", "pulse 2", "I off 1 / 2", "predicted peak", "margin", "stop above",
                  "stored energy", f"discharge to {SAFE_VOLTAGE:g} V"]


def _calibration_lines(calibration: Calibration | None, problem: str) -> list[str]:
    if calibration is None:
        return [f"Calibration: not done ({problem})"]
    lines = [f"Calibration at {_v(calibration.bus_voltage)}, "
             f"{format_value(calibration.turn_off_current, 'current')} turned off "
             f"({calibration.iterations} iterations):"]
    for item in calibration.values:
        where = {True: "inside the design's range", False: "OUTSIDE the design's range", None: "no range given"}
        lines.append(f"  {item.name:<26} {format_value(item.value, item.kind):>12}  "
                     f"(from {format_value(item.start, item.kind)}; {where[item.within_design]})")
    lines.append("  matched figures (measured -> model at the start values -> fitted, residual):")
    for target in calibration.targets:
        lines.append(f"    {target.description:<34} {format_value(target.measured, target.kind)} -> "
                     f"{format_value(target.at_start, target.kind)} -> {format_value(target.fitted, target.kind)}"
                     f" ({target.residual:+.1%})")
    if problem:
        lines.append(f"  NOT TRUSTED: {problem}")
    lines.extend(f"  note: {note}" for note in calibration.notes)
    return lines


def _header(plan: BringUpPlan) -> list[str]:
    """Title, what the plan was made from (every input with its hash, the capture, any --set override and the
    tool's version), and the target."""
    spec, design = plan.spec, plan.design
    revision = f", rev. {design.revision}" if design.revision else ""
    lines = [f"Bring-up plan for {spec.switch} of {design.title}{revision} (margincheck {__version__})"]
    lines += [f"{item.role.capitalize()} file: {item.name} (sha256 {item.sha256[:16]}...)" for item in design.inputs]
    lines += [f"Capture: {spec.name} (sha256 {plan.capture_sha256[:16]}...), {_v(spec.bus_voltage)}, "
              f"L_load {format_value(spec.load_inductance, 'inductance')}"]
    lines += [f"Changed for this run: {item.text} (the file has {item.file_text or 'nothing'} there)"
              for item in design.overrides]
    return lines + [f"Target: {_v(design.conditions.bus_voltage.high)}, "
                    f"{format_value(plan.target_current, 'current')} turned off"]


def finding_line(finding: Finding) -> str:
    """One finding on one line, without its notes: status, rule, subject and its result (``result_text``)."""
    return f"{finding.status.value:<13} {finding.rule} for {finding.subject}: {result_text(finding)}"


def _findings_lines(title: str, findings: tuple[Finding, ...]) -> list[str]:
    return [title, *(f"  {finding_line(finding)}" for finding in findings)] if findings else [title, "  (none)"]


def _planned_text(plan: BringUpPlan) -> list[str]:
    if not plan.steps:
        return [f"No steps: {plan.stop_reason}."]
    widths = [max(len(heading), *(len(cells[k]) for cells in map(_step_cells, plan.steps)))
              for k, heading in enumerate(_STEP_HEADINGS)]
    rows = ["  " + "  ".join(text.ljust(width) for text, width in zip(_STEP_HEADINGS, widths)).rstrip()]
    for index, step in enumerate(plan.steps):
        mark = "  " if index < plan.planned else "x "
        rows.append(mark + "  ".join(text.ljust(width) for text, width in zip(_step_cells(step), widths)).rstrip())
    return ["Steps (x: not planned):", *rows, f"{_ending(plan)}: {plan.stop_reason}.",
            *_failure_lines(plan), *_discharge_lines(plan)]


def _ending(plan: BringUpPlan) -> str:
    return "No step is planned" if plan.planned == 0 else f"The plan stops after step {plan.planned}"


def _discharge_lines(plan: BringUpPlan) -> list[str]:
    """A warning where the bleeder takes longer than the 5 s IEC 60204-1:2016, 6.2.4 allows to reach 60 V."""
    slow = [step for step in plan.steps if step.discharge_time is not None and step.discharge_time > 5.0]
    if not slow:
        return []
    return [f"The bleeder takes more than 5 s to bring the bus to {SAFE_VOLTAGE:g} V from {_v(slow[0].bus_voltage)} "
            "up (IEC 60204-1:2016, 6.2.4 allows 5 s): wait the stated time and measure before touching."]


def _failure_lines(plan: BringUpPlan) -> list[str]:
    """The predicted fails, which the voltage steps (judged on the peak v_ds) do not cover."""
    if not plan.predicted_failures:
        return []
    listed = "; ".join(f"{finding.rule} for {finding.subject}" for finding in plan.predicted_failures)
    return [f"The steps are judged on the peak v_ds only. The calibrated model predicts fails at the design's "
            f"worst case ({listed}): resolve them before running at the full voltage."]


def _limit_lines(plan: BringUpPlan) -> list[str]:
    """The derated peak-voltage limit the steps are judged against, and the stop rule."""
    limit = plan.limit
    if limit is None or limit.limit is None:
        return []
    return [f"Derated peak-voltage limit: {_v(limit.limit)} ({limit.basis}). Predicted peaks: the fitted cell at "
            "the design's nominal device values, the larger of the step's two turn-offs. Stop rule: stop when a "
            f"measured peak exceeds the bus plus the predicted overshoot raised by {plan.settings.stop_tolerance:.0%}."]


def text_lines(plan: BringUpPlan) -> list[str]:
    """Every line of the text rendering."""
    lines = [*_header(plan), ""]
    lines += _findings_lines("Measured at the test voltage (basis: measured):", plan.measured) + [""]
    lines += _calibration_lines(plan.calibration, plan.calibration_problem) + [""]
    lines += _findings_lines("Predicted at the design's worst case with the calibrated model:", plan.predicted)
    lines += ["", *_limit_lines(plan)]
    lines += ["", *_planned_text(plan), "", "Cautions:", *(f"  - {caution}" for caution in plan.cautions)]
    return [printable(line) for line in lines]


def render_text(plan: BringUpPlan, stream: TextIO) -> None:
    """The plan for a terminal."""
    stream.write("\n".join(text_lines(plan)) + "\n")


def render_markdown(plan: BringUpPlan, stream: TextIO) -> None:
    """The plan as a bench checklist: one box to tick per step."""
    header = _header(plan)
    lines = [f"# {escape(header[0])}", "", *(f"{escape(line)}  " for line in header[1:]), "",
             "## Measured at the test voltage", "",
             *(f"- {escape(finding_line(finding))}" for finding in plan.measured), "",
             "## Calibration", "", "```", *_calibration_lines(plan.calibration, plan.calibration_problem), "```", "",
             "## Predicted at the design's worst case", "",
             *(f"- {escape(finding_line(finding))}" for finding in plan.predicted), "",
             "## Steps", "", *_limit_lines(plan), ""]
    if plan.steps:
        lines += ["| done | " + " | ".join(_STEP_HEADINGS) + " |", "|" + "---|" * (len(_STEP_HEADINGS) + 1)]
        for index, step in enumerate(plan.steps):
            box = "[ ]" if index < plan.planned else "not planned"
            lines.append(f"| {box} | " + " | ".join(escape(cell) for cell in _step_cells(step)) + " |")
    lines += ["", f"**{_ending(plan)}:** {escape(plan.stop_reason)}.",
              *(f"**{escape(line)}**" for line in (*_failure_lines(plan), *_discharge_lines(plan))), "",
              "## Cautions", "", *(f"- {escape(caution)}" for caution in plan.cautions), ""]
    stream.write("\n".join(lines))


def _calibration_object(calibration: Calibration | None) -> dict[str, Any] | None:
    if calibration is None:
        return None
    return {"bus_voltage": magnitude(calibration.bus_voltage, "voltage"),
            "turn_off_current": magnitude(calibration.turn_off_current, "current"),
            "turn_on_current": magnitude(calibration.turn_on_current, "current"),
            "iterations": calibration.iterations,
            "values": [{"name": item.name, "field": item.field, "value": magnitude(item.value, item.kind),
                        "start": magnitude(item.start, item.kind), "within_design": item.within_design}
                       for item in calibration.values],
            "targets": [{"name": item.name, "measured": magnitude(item.measured, item.kind),
                         "at_start": magnitude(item.at_start, item.kind), "fitted": magnitude(item.fitted, item.kind),
                         "residual": item.residual if math.isfinite(item.residual) else None}
                        for item in calibration.targets],
            "notes": list(calibration.notes)}


def _step_object(step: PlanStep, planned: bool) -> dict[str, Any]:
    pulses = step.pulses
    return {"planned": planned, "bus_voltage": magnitude(step.bus_voltage, "voltage"),
            "first_pulse": magnitude(pulses.first_pulse, "time"), "gap": magnitude(pulses.gap, "time"),
            "second_pulse": magnitude(pulses.second_pulse, "time"),
            "first_current": magnitude(pulses.first_current, "current"),
            "second_current": magnitude(pulses.second_current, "current"),
            "predicted_peak": magnitude(step.predicted_peak, "voltage"), "margin": magnitude(step.margin, "voltage"),
            "stop_above": magnitude(step.stop_above, "voltage"),
            "stored_energy": magnitude(step.stored_energy, "energy"),
            "discharge_time": magnitude(step.discharge_time, "time")}


def plan_object(plan: BringUpPlan) -> dict[str, Any]:
    """The plan as plain data."""
    limit = plan.limit
    design = plan.design
    return {"format": BRING_UP_FORMAT, "tool": {"name": "margincheck", "version": __version__},
            "design": {"title": design.title, "revision": design.revision,
                       "inputs": [{"role": item.role, "file": item.name, "sha256": item.sha256}
                                  for item in design.inputs]},
            "overrides": overrides_object(design), "switch": plan.spec.switch,
            "capture": {"file": plan.spec.name, "sha256": plan.capture_sha256,
                        "bus_voltage": magnitude(plan.spec.bus_voltage, "voltage"),
                        "load_inductance": magnitude(plan.spec.load_inductance, "inductance")},
            "target": {"bus_voltage": magnitude(plan.design.conditions.bus_voltage.high, "voltage"),
                       "turn_off_current": magnitude(plan.target_current, "current")},
            "measured": [finding_object(finding) for finding in plan.measured],
            "calibration": _calibration_object(plan.calibration), "calibration_problem": plan.calibration_problem,
            "predicted": [finding_object(finding) for finding in plan.predicted],
            "limit": None if limit is None else magnitude(limit.limit, "voltage"),
            "stop_tolerance": plan.settings.stop_tolerance,
            "steps": [_step_object(step, index < plan.planned) for index, step in enumerate(plan.steps)],
            "planned_steps": plan.planned, "stop_reason": plan.stop_reason,
            "predicted_failures": [f"{finding.rule} for {finding.subject}" for finding in plan.predicted_failures],
            "exit_code": plan.exit_code, "cautions": list(plan.cautions)}


def render_json(plan: BringUpPlan, stream: TextIO) -> None:
    """The plan as JSON."""
    stream.write(json.dumps(plan_object(plan), indent=2) + "\n")


RENDERERS: dict[str, Callable[[BringUpPlan, TextIO], None]] = {
    "text": render_text, "markdown": render_markdown, "json": render_json}
