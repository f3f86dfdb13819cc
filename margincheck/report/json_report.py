"""The JSON report, format ``margincheck-report/1`` (design.md section 6, a contract).

The output is ASCII: text from the design file is escaped by JSON itself. Magnitudes are given in the
fixed display unit of each quantity kind (V, A, nH, A/ns, degC...), with the unit beside them, and rounded
to 12 significant figures so unit conversions leave no float noise.
"""

from __future__ import annotations

import json
import math
from typing import Any, TextIO

from margincheck.checking import Report, WhatIf
from margincheck.design import Design
from margincheck.errors import Problem, format_path
from margincheck.findings import Finding, Sensitivity
from margincheck.montecarlo import MonteCarloResult
from margincheck.policy import FACTOR_KEYS
from margincheck.report.common import run_time
from margincheck.rules.figures import SwitchingFigures
from margincheck.rules.soa import SoaView
from margincheck.units import KINDS, format_value

__all__ = ["REPORT_FORMAT", "finding_object", "magnitude", "overrides_object", "render", "report_object"]

REPORT_FORMAT = "margincheck-report/1"


def magnitude(value: float | None, kind: str) -> dict[str, Any] | None:
    """``{"magnitude": ..., "units": ...}`` in the SI unit of ``kind`` (a ring frequency in Hz, an inductance in
    H, a temperature in K: a tool reads every magnitude without unit arithmetic); None for a missing or non-finite
    value."""
    if value is None or not math.isfinite(value):
        return None
    return {"magnitude": float(f"{value:.12g}"), "units": KINDS[kind].si_unit}


def finding_object(finding: Finding) -> dict[str, Any]:
    return {
        "rule": finding.rule,
        "subject": finding.subject,
        "status": finding.status.value,
        "value": magnitude(finding.value, finding.kind),
        "limit": magnitude(finding.limit, finding.kind),
        "bound": finding.bound.value,
        "margin": _number(finding.margin),
        "corner": {name: format_value(item.value, item.kind, digits=6) for name, item in finding.corner.items()},
        "details": {name: magnitude(item.value, item.kind) for name, item in finding.details.items()},
        "missing": list(finding.missing),
        "basis": finding.basis,
        "source": finding.source,
        "note": finding.note,
        "caution": finding.caution,
        "waiver": finding.waiver,
        "waived_status": None if finding.waived_status is None else finding.waived_status.value,
        "fields": dict(finding.fields),
        "sensitivities": [_sensitivity_object(item) for item in finding.sensitivities],
    }


def _number(value: float | None) -> float | None:
    """A plain number rounded to 12 significant figures; None where it is not finite (JSON has no infinity)."""
    return None if value is None or not math.isfinite(value) else float(f"{value:.12g}")


def _sensitivity_object(item: Sensitivity) -> dict[str, Any]:
    return {"input": item.name, "field": item.field, "low": magnitude(item.low, item.kind),
            "high": magnitude(item.high, item.kind), "margin_at_low": _number(item.margin_at_low),
            "margin_at_high": _number(item.margin_at_high), "swing": _number(item.swing)}


def _monte_carlo_object(result: MonteCarloResult) -> dict[str, Any]:
    """Per rule and subject: samples, violations, probability with its Wilson interval, margin percentiles
    (null where the percentile falls on a sample that fails outright or could not be computed)."""
    return {"samples": result.samples, "simulated_samples": result.simulated_samples, "seed": result.seed,
            "confidence": result.confidence, "notes": list(result.notes),
            "rules": [{"rule": item.rule, "subject": item.subject, "samples": item.samples,
                       "violations": item.violations, "not_computed": item.not_computed,
                       "probability": _number(item.probability),
                       "interval": [_number(end) for end in item.interval],
                       "margin_percentiles": {f"{level:g}": _number(value)
                                              for level, value in item.percentiles.items()},
                       "cell_simulated": item.simulated} for item in result.statistics]}


def _problem_object(problem: Problem) -> dict[str, Any]:
    location = problem.location
    return {"file": problem.file, "line": location.line if location else None,
            "column": location.column if location else None, "path": problem.path, "message": problem.message}


def _factors_object(factors: dict[str, float]) -> dict[str, Any]:
    """A policy's factors for one technology: plain numbers, the junction offset as a magnitude with units."""
    return {key: magnitude(value, "temperature_difference") if key == "tj" else value
            for key, value in factors.items()}


def report_object(report: Report) -> dict[str, Any]:
    """The report as plain JSON-ready data."""
    design, policy = report.design, report.design.policy
    return {
        "format": REPORT_FORMAT,
        "tool": {"name": "margincheck", "version": report.tool_version},
        "generated": run_time(report),
        "design": {"file": str(design.file), "sha256": design.inputs[0].sha256, "title": design.title,
                   "revision": design.revision, "standard": design.standard},
        "inputs": [{"role": item.role, "file": item.name, "sha256": item.sha256} for item in design.inputs],
        "overrides": overrides_object(design),
        "policy": {"name": policy.name, "basis": policy.basis,
                   "factors": {key: getattr(policy, key) for key in FACTOR_KEYS},
                   "tj": magnitude(policy.tj, "temperature_difference"),
                   "technologies": {technology: _factors_object(dict(factors))
                                    for technology, factors in policy.technologies},
                   "cosmic_ray_fit_budget": magnitude(policy.cosmic_ray_fit_budget, "failure_rate")},
        "warnings": [_problem_object(warning) for warning in design.warnings],
        "verdict": report.verdict.value,
        "exit_code": report.exit_code,
        "findings": [finding_object(finding) for finding in report.findings],
        "switching": {figures.subject: _figures_object(figures) for figures in report.figures},
        "what_if": None if report.what_if is None else _what_if_object(report.what_if),
        "soa": {view.subject: _soa_object(view) for view in report.soa},
        "waivers": [{"rule": item.waiver.rule, "subject": item.waiver.subject, "reason": item.waiver.reason,
                     "accepted_by": item.waiver.accepted_by, "expires": item.waiver.expires.isoformat(),
                     "state": item.state.value, "message": item.message} for item in report.waivers],
        "monte_carlo": None if report.monte_carlo is None else _monte_carlo_object(report.monte_carlo),
        "cautions": list(report.cautions),
    }


def overrides_object(design: Design) -> list[dict[str, Any]]:
    """The ``--set`` overrides of the run: as given, the field changed, and what the file writes there."""
    return [{"set": item.text, "path": format_path(item.path), "file_value": item.file_text}
            for item in design.overrides]


def _soa_object(view: SoaView) -> dict[str, Any]:
    return {"case_temperature": magnitude(view.case_temperature, "temperature"),
            "factor": view.factor,
            "points": [{"name": point.name, "v_ds": magnitude(point.voltage, "voltage"),
                        "i_d": magnitude(point.current, "current"),
                        "pulse": "dc" if math.isinf(point.pulse) else magnitude(point.pulse, "time"),
                        "period": None if math.isinf(point.period) else magnitude(point.period, "time"),
                        "status": point.status.value, "governing": point.governing} for point in view.points]}


def _figures_object(figures: SwitchingFigures) -> dict[str, Any]:
    return {"worst": {name: magnitude(item.value, item.kind) for name, item in figures.worst.items()},
            "nominal": {name: magnitude(item.value, item.kind) for name, item in figures.nominal.items()},
            "corner": {name: magnitude(item.value, item.kind) for name, item in (figures.corner or {}).items()},
            "notes": list(figures.notes)}


def _what_if_object(what_if: WhatIf) -> dict[str, Any]:
    return {"common_source_inductance": magnitude(what_if.common_source_inductance, "inductance"),
            "source_connection": what_if.connections,
            "findings": [finding_object(finding) for finding in what_if.findings],
            "switching": {figures.subject: _figures_object(figures) for figures in what_if.figures}}


def render(report: Report, stream: TextIO) -> None:
    """Write ``report`` as one JSON object to ``stream``."""
    # ASCII only: every non-ASCII character of the file's text is escaped, bidirectional overrides included
    json.dump(report_object(report), stream, indent=2, ensure_ascii=True)
    stream.write("\n")
