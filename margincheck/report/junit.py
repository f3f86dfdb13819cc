"""JUnit XML: one test suite per design, one test case per finding, for CI systems that show test results.

A test case's ``classname`` is the finding's subject (Q1, C1) and its ``name`` the rule id. A failing or
not-evaluated finding is a ``failure`` whose message holds the value, limit and margin (or what is missing);
a waived one is ``skipped`` with the waiver on record; a marginal one passes with the margin in its
``system-out``. The suite's properties carry the tool version, the time of the run and every input file
with its SHA-256; its ``system-out`` carries the cautions. Design-file text goes through ``printable`` (XML
1.0 allows no control characters); ElementTree does the XML escaping.
"""

from __future__ import annotations

import xml.etree.ElementTree as ElementTree
from typing import Sequence, TextIO

from margincheck.checking import Report
from margincheck.findings import Finding, Status
from margincheck.report.common import Unchecked, finding_summary, run_time, status_counts
from margincheck.safe_text import printable

__all__ = ["render", "render_batch"]


def _testcase(suite: ElementTree.Element, finding: Finding) -> None:
    case = ElementTree.SubElement(suite, "testcase", classname=printable(finding.subject), name=finding.rule, time="0")
    summary = printable(finding_summary(finding))
    details = "\n".join(printable(part) for part in (finding.basis, finding.source, finding.caution) if part)
    if finding.status in (Status.FAIL, Status.NOT_EVALUATED):
        failure = ElementTree.SubElement(case, "failure", message=summary, type=finding.status.value)
        failure.text = details
    elif finding.status is Status.WAIVED:
        ElementTree.SubElement(case, "skipped", message=summary)
    elif finding.status is Status.MARGINAL:
        ElementTree.SubElement(case, "system-out").text = printable(f"marginal: {summary}")


def _suite(parent: ElementTree.Element, report: Report) -> None:
    counts = status_counts(report.findings)
    design = report.design
    suite = ElementTree.SubElement(
        parent, "testsuite", name=printable(design.inputs[0].name), tests=str(len(report.findings)),
        failures=str(counts[Status.FAIL] + counts[Status.NOT_EVALUATED]), errors="0",
        skipped=str(counts[Status.WAIVED]), time="0", timestamp=run_time(report).rstrip("Z"))
    properties = ElementTree.SubElement(suite, "properties")
    records = [("tool", f"margincheck {report.tool_version}"), ("generated", run_time(report)),
               ("title", design.title), ("verdict", report.verdict.value), ("policy", design.policy.name)]
    records += [(f"{item.role}:{item.name}", f"sha256:{item.sha256}") for item in design.inputs]
    for name, value in records:
        ElementTree.SubElement(properties, "property", name=printable(name), value=printable(value))
    for finding in report.findings:
        _testcase(suite, finding)
    ElementTree.SubElement(suite, "system-out").text = "\n".join(
        f"CAUTION {number}: {printable(caution)}" for number, caution in enumerate(report.cautions, start=1))


def _unchecked_suite(parent: ElementTree.Element, unchecked: Sequence[Unchecked]) -> None:
    """A suite of the files without a report: an error case per design that could not be checked, a skipped
    case per file that is no design."""
    errors = sum(item.error for item in unchecked)
    suite = ElementTree.SubElement(parent, "testsuite", name="margincheck: files not checked",
                                   tests=str(len(unchecked)), failures="0", errors=str(errors),
                                   skipped=str(len(unchecked) - errors), time="0")
    for item in unchecked:
        case = ElementTree.SubElement(suite, "testcase", classname="file", name=printable(item.file), time="0")
        ElementTree.SubElement(case, "error" if item.error else "skipped", message=printable(item.reason))


def render_batch(reports: Sequence[Report], stream: TextIO, unchecked: Sequence[Unchecked] = ()) -> None:
    """Write one ``testsuites`` document with a suite per report (and one for the files not checked)."""
    counts = [status_counts(report.findings) for report in reports]
    errors = sum(item.error for item in unchecked)
    root = ElementTree.Element(
        "testsuites", name="margincheck",
        tests=str(sum(len(report.findings) for report in reports) + len(unchecked)),
        failures=str(sum(item[Status.FAIL] + item[Status.NOT_EVALUATED] for item in counts)), errors=str(errors),
        skipped=str(sum(item[Status.WAIVED] for item in counts) + len(unchecked) - errors), time="0")
    for report in reports:
        _suite(root, report)
    if unchecked:
        _unchecked_suite(root, unchecked)
    ElementTree.indent(root)
    stream.write('<?xml version="1.0" encoding="UTF-8"?>\n')
    stream.write(ElementTree.tostring(root, encoding="unicode"))
    stream.write("\n")


def render(report: Report, stream: TextIO) -> None:
    """Write the JUnit XML of one report."""
    render_batch([report], stream)
