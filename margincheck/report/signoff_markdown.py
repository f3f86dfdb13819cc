"""The sign-off sheet as Markdown (``--report signoff:PATH.md``): one page to print, sign and archive.

Text from the design file is escaped as the Markdown report escapes it: it can form no link, image, HTML tag,
emphasis or table break.
"""

from __future__ import annotations

from typing import TextIO

from margincheck.checking import Report
from margincheck.report.markdown import escape
from margincheck.report.signoff import DECISIONS, REVIEWER_FIELDS, Sheet, sheet_of

__all__ = ["render"]

_BLANK = "_" * 40


def _header(sheet: Sheet) -> list[str]:
    revision = f", revision {escape(sheet.revision)}" if sheet.revision else ""
    return [f"# Sign-off sheet: {escape(sheet.title)}{revision}", "",
            f"Design file {escape(sheet.design_file)}, checked {sheet.checked_at} by margincheck "
            f"{escape(sheet.tool_version)}.", "",
            f"**Verdict: {sheet.verdict}** (exit code {sheet.exit_code}): {sheet.verdict_meaning}.", "",
            *[f"**Checked with an override, not as the file is written:** {escape(text)}\n"
              for text in sheet.overrides]]


def _findings(sheet: Sheet) -> list[str]:
    lines = [f"## Findings needing attention ({len(sheet.findings)})", "",
             f"{sheet.passes} pass; {sheet.not_evaluated} not evaluated (each blocks sign-off).", ""]
    if not sheet.findings:
        return lines + ["None: every finding passes.", ""]
    lines += ["| status | rule | subject | value | limit | margin | note |", "|---|---|---|---|---|---|---|"]
    lines += [f"| {line.status} | {line.rule} | {escape(line.subject)} | {escape(line.value)} | {escape(line.limit)} | "
              f"{line.margin} | {escape(line.note)} |" for line in sheet.findings]
    return lines + [""]


def _record(sheet: Sheet) -> list[str]:
    lines = ["## Worst-case operating point (as the rules' worst corners used it)", ""]
    lines += [f"- {label}: {escape(text)}" for label, text in sheet.operating_point]
    lines += ["", "## Inputs and policy", "", "| role | file | SHA-256 |", "|---|---|---|"]
    lines += [f"| {role} | {escape(name)} | `{digest}` |" for role, name, digest in sheet.inputs]
    return lines + ["", f"Derating policy **{escape(sheet.policy)}**: {escape(sheet.policy_basis)}. "
                        f"Standard: {escape(sheet.standard)}.", ""]


def _decision(sheet: Sheet) -> list[str]:
    lines = ["## Cautions", ""]
    lines += [f"{number}. {escape(caution)}" for number, caution in enumerate(sheet.cautions, start=1)]
    lines += ["", "## Review", ""]
    lines += [f"- {field}: {_BLANK}" for field in REVIEWER_FIELDS]
    lines += ["", "Decision (tick one):", "", *[f"- [ ] {choice}" for choice in DECISIONS], "",
              f"Conditions or reasons: {_BLANK}{_BLANK}"]
    return lines


def render(report: Report, stream: TextIO) -> None:
    """Write the Markdown sign-off sheet of ``report``."""
    sheet = sheet_of(report)
    lines = [*_header(sheet), *_findings(sheet), *_record(sheet), *_decision(sheet)]
    stream.write("\n".join(lines) + "\n")
