"""SARIF 2.1.0 (the OASIS Static Analysis Results Interchange Format) for code hosts and review tools.

One result per failing, not-evaluated, marginal or waived finding, at the design-file line of the finding's
subject (its ``ref``), with the fields of its inputs as related locations, so that a pull request shows the
finding on the lines that produced it. Waived findings carry an in-source suppression with the waiver's
justification. Levels: fail ``error``, not evaluated ``warning``, marginal ``note``; a waived finding keeps
the level of what it waives.
"""

from __future__ import annotations

import json
from pathlib import Path
from typing import Any, Sequence, TextIO

from margincheck import __version__
from margincheck.checking import Report
from margincheck.findings import Finding, Status
from margincheck.report.common import Unchecked, finding_summary, run_time
from margincheck.report.locations import FieldLocation, finding_locations
from margincheck.rules import RULES

__all__ = ["SARIF_SCHEMA", "render", "render_batch"]

SARIF_SCHEMA = "https://json.schemastore.org/sarif-2.1.0.json"
_LEVELS = {Status.FAIL: "error", Status.NOT_EVALUATED: "warning", Status.MARGINAL: "note"}
_REPORTED = (Status.FAIL, Status.NOT_EVALUATED, Status.MARGINAL, Status.WAIVED)


def _uri(name: str) -> str:
    """The file as a relative URI (forward slashes), as code hosts match it against the repository."""
    return Path(name).as_posix()


def _rule_metadata(rule_id: str) -> dict[str, Any]:
    registered = RULES[rule_id]
    description = " ".join((registered.check.__doc__ or registered.title).split()).replace("``", "")
    return {
        "id": rule_id,
        "name": "".join(part.capitalize() for part in rule_id.split("-")),
        "shortDescription": {"text": registered.title},
        "fullDescription": {"text": description},
        "help": {"text": f"{description} Each result states the value, the derated limit and the margin at the "
                         "worst tolerance corner, with the formula and its source. Derating factors come from "
                         "the design's policy; confirm margins by measurement."},
        "defaultConfiguration": {"level": "error"},
    }


def _location(uri: str, place: FieldLocation, index: int | None = None) -> dict[str, Any]:
    location: dict[str, Any] = {
        "physicalLocation": {"artifactLocation": {"uri": uri},
                             "region": {"startLine": place.location.line, "startColumn": place.location.column}},
        "message": {"text": place.field},
    }
    if index is not None:
        location["id"] = index
    return location


def _result(report: Report, finding: Finding, rule_index: int) -> dict[str, Any]:
    uri = _uri(report.design.inputs[0].name)
    places = finding_locations(report.design, finding)
    level = _LEVELS[finding.waived_status or finding.status]
    result: dict[str, Any] = {
        "ruleId": finding.rule, "ruleIndex": rule_index, "level": level,
        "message": {"text": finding_summary(finding)},
        "locations": [_location(uri, places[0])] if places else [],
        "relatedLocations": [_location(uri, place, index) for index, place in enumerate(places[1:], start=1)],
        "properties": {"subject": finding.subject, "status": finding.status.value, "basis": finding.basis},
    }
    if finding.status is Status.WAIVED:
        result["suppressions"] = [{"kind": "inSource", "status": "accepted", "justification": finding.waiver}]
    return result


def _run(report: Report) -> dict[str, Any]:
    rule_ids = list(RULES)
    return {
        "tool": {"driver": {"name": "margincheck", "version": report.tool_version, "semanticVersion":
                            report.tool_version, "rules": [_rule_metadata(rule_id) for rule_id in rule_ids]}},
        "invocations": [{"executionSuccessful": True, "endTimeUtc": run_time(report)}],
        "artifacts": [{"location": {"uri": _uri(item.name)}, "roles": ["analysisTarget"] if item.role == "design"
                       else ["referencedOnCommandLine"], "hashes": {"sha-256": item.sha256}}
                      for item in report.design.inputs],
        "results": [_result(report, finding, rule_ids.index(finding.rule)) for finding in report.findings
                    if finding.status in _REPORTED],
        "properties": {"verdict": report.verdict.value, "design": report.design.title,
                       "policy": report.design.policy.name, "cautions": list(report.cautions)},
    }


def _unchecked_run(unchecked: Sequence[Unchecked], version: str) -> dict[str, Any]:
    """A run without results whose invocation lists the files not checked: an error notification per design
    that could not be read or validated (the run did not succeed), a note per file skipped as no design."""
    notifications = [{"level": "error" if item.error else "note",
                      "message": {"text": f"{'not checked' if item.error else 'skipped'}: {item.reason}"},
                      "locations": [{"physicalLocation": {"artifactLocation": {"uri": _uri(item.file)}}}]}
                     for item in unchecked]
    return {"tool": {"driver": {"name": "margincheck", "version": version, "semanticVersion": version}},
            "invocations": [{"executionSuccessful": not any(item.error for item in unchecked),
                             "toolExecutionNotifications": notifications}],
            "results": []}


def render_batch(reports: Sequence[Report], stream: TextIO, unchecked: Sequence[Unchecked] = ()) -> None:
    """Write one SARIF log with a run per report (and one listing the files not checked)."""
    runs = [_run(report) for report in reports]
    if unchecked:
        runs.append(_unchecked_run(unchecked, __version__))
    log = {"$schema": SARIF_SCHEMA, "version": "2.1.0", "runs": runs}
    json.dump(log, stream, indent=2, ensure_ascii=True)
    stream.write("\n")


def render(report: Report, stream: TextIO) -> None:
    """Write the SARIF log of one report."""
    render_batch([report], stream)
