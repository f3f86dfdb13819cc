"""The sign-off sheet as HTML (``--report signoff:PATH.html``): one self-contained page, printed and signed.

No scripts and nothing fetched (the review record's content security policy); an ``@media print`` stylesheet
that fits the sheet of the bundled examples on one A4 or Letter page. Every piece of text from the design is
HTML-escaped.
"""

from __future__ import annotations

from typing import TextIO

from margincheck.checking import Report
from margincheck.report.html_report import escape, page
from margincheck.report.signoff import DECISIONS, REVIEWER_FIELDS, Line, Sheet, sheet_of

__all__ = ["render"]

_VERDICT_CLASS = {"PASS": "pass", "MARGINAL": "marginal", "FAIL": "fail", "INCOMPLETE": "incomplete"}
_STATUS_CLASS = {"FAIL": "fail", "NOT EVALUATED": "incomplete", "WAIVED": "waived", "MARGINAL": "marginal"}
_STYLE = """
body { font: 13px/1.3 system-ui, sans-serif; color: #111; margin: 1.5em auto; max-width: 60em; padding: 0 1em; }
h1 { font-size: 1.35em; margin: 0 0 .15em; } h2 { font-size: 1em; margin: .75em 0 .25em; text-transform: uppercase;
  letter-spacing: .04em; border-bottom: 1px solid #999; }
p { margin: .2em 0; } .meta { color: #333; }
.verdict { border: 2px solid currentColor; padding: .3em .6em; margin: .5em 0; font-size: 1.05em; }
.verdict b { font-size: 1.2em; letter-spacing: .03em; }
.fail { color: #8f1d21; } .incomplete { color: #6b2d86; } .waived { color: #1f5f7a; }
.marginal { color: #7a5200; } .pass { color: #265c3f; }
table { border-collapse: collapse; width: 100%; } td, th { text-align: left; vertical-align: top;
  padding: .1em .35em; border-bottom: 1px solid #ccc; } th { background: #eee; }
td.num { text-align: right; font-variant-numeric: tabular-nums; }
td.status { font-weight: 700; } td.status, td.rule, td.subject, td.num { width: 1%; white-space: nowrap; }
.note { font-size: .9em; color: #333; }
.hash { font-family: ui-monospace, monospace; font-size: .85em; word-break: break-all; }
.columns { display: flex; gap: 1.5em; } .columns > div { flex: 1; }
ol.cautions { margin: .2em 0; padding-left: 1.6em; font-size: .88em; }
.fields { display: grid; grid-template-columns: 1fr 1fr; gap: .9em 2em; margin-top: .6em; }
.field { display: flex; gap: .5em; } .field span:last-child { flex: 1; border-bottom: 1px solid #000; }
.decisions { margin: .9em 0 .2em; } .decisions > span { margin-left: 1.5em; white-space: nowrap; }
.box { display: inline-block; width: .9em; height: .9em; border: 1px solid #000; vertical-align: -.1em;
  margin-right: .35em; }
.lines div { border-bottom: 1px solid #000; height: 1.7em; }
@page { margin: 11mm; }
@media print { body { margin: 0; max-width: none; padding: 0; font-size: 10px; }
  h2 { break-after: avoid; } tr { break-inside: avoid; }
  .fail, .incomplete, .waived, .marginal, .pass { print-color-adjust: exact; -webkit-print-color-adjust: exact; } }
"""


def _header(sheet: Sheet) -> list[str]:
    revision = f", revision {escape(sheet.revision)}" if sheet.revision else ""
    verdict_class = _VERDICT_CLASS[sheet.verdict]
    overrides = "".join(f"<p class='fail'><b>Checked with an override, not as the file is written:</b> "
                        f"<code>{escape(text)}</code></p>" for text in sheet.overrides)
    return [f"<h1>Sign-off sheet: {escape(sheet.title)}{revision}</h1>",
            f"<p class='meta'>Design file <b>{escape(sheet.design_file)}</b>, checked {escape(sheet.checked_at)} "
            f"by margincheck {escape(sheet.tool_version)}.</p>",
            f'<div id="verdict" class="verdict {verdict_class}">Verdict: <b>{sheet.verdict}</b> '
            f"(exit code {sheet.exit_code}): {escape(sheet.verdict_meaning)}.</div>", overrides]


def _row(line: Line) -> str:
    """A finding's row; one not evaluated has no numbers, so its note takes their columns."""
    numbers = "" if line.margin == "n/a" else (
        f"<td class='num'>{escape(line.value)}</td><td class='num'>{escape(line.limit)}</td>"
        f"<td class='num'>{escape(line.margin)}</td>")
    span = ' colspan="4"' if not numbers else ""
    return (f'<tr><td class="status {_STATUS_CLASS[line.status]}">{line.status}</td>'
            f'<td class="rule">{escape(line.rule)}</td><td class="subject">{escape(line.subject)}</td>{numbers}'
            f"<td class='note'{span}>{escape(line.note)}</td></tr>")


def _findings(sheet: Sheet) -> list[str]:
    parts = [f"<h2>Findings needing attention ({len(sheet.findings)})</h2>",
             f'<p id="counts">{sheet.passes} pass; {sheet.not_evaluated} not evaluated '
             "(each blocks sign-off).</p>"]
    if not sheet.findings:
        return parts + ["<p>None: every finding passes.</p>"]
    rows = "".join(_row(line) for line in sheet.findings)
    return parts + ["<table><tr><th>status</th><th>rule</th><th>subject</th><th>value</th><th>limit</th>"
                    f"<th>margin</th><th>note</th></tr>{rows}</table>"]


def _record(sheet: Sheet) -> list[str]:
    point = "".join(f"<tr><td>{label}</td><td>{escape(text)}</td></tr>" for label, text in sheet.operating_point)
    files = "".join(f"<tr><td>{escape(role)}</td><td>{escape(name)}<br><span class='hash'>{digest}</span></td></tr>"
                    for role, name, digest in sheet.inputs)
    return ['<div class="columns"><div><h2>Worst-case operating point</h2>',
            "<p class='note'>As the rules' worst corners used it.</p>", f"<table>{point}</table></div>",
            "<div><h2>Inputs (SHA-256) and policy</h2>", f"<table>{files}</table>",
            f"<p>Derating policy <b>{escape(sheet.policy)}</b>: {escape(sheet.policy_basis)}</p>",
            f"<p>Standard: {escape(sheet.standard)}</p></div></div>"]


def _review() -> list[str]:
    fields = "".join(f'<div class="field"><span>{name}:</span><span></span></div>' for name in REVIEWER_FIELDS)
    decisions = "".join(f'<span><span class="box"></span>{choice}</span>' for choice in DECISIONS)
    return ["<h2>Review</h2>", f'<div class="fields">{fields}</div>',
            f'<p class="decisions">Decision (tick one): {decisions}</p>',
            "<p>Conditions or reasons:</p>", '<div class="lines"><div></div><div></div></div>']


def _document(sheet: Sheet) -> str:
    cautions = "".join(f"<li>{escape(caution)}</li>" for caution in sheet.cautions)
    body = [*_header(sheet), *_findings(sheet), *_record(sheet), "<h2>Cautions</h2>",
            f'<ol class="cautions">{cautions}</ol>', *_review()]
    return page(f"Sign-off: {sheet.title}", _STYLE, body)


def render(report: Report, stream: TextIO) -> None:
    """Write the HTML sign-off sheet of ``report``."""
    stream.write(_document(sheet_of(report)))
