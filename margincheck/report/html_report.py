"""The review record: one self-contained HTML file (no network, no scripts, no external assets), printable.

It holds the verdict, every finding grouped by subject with its worst-case corner, the policy and its basis,
every input file with its SHA-256, the time of the run, the waivers and the cautions, and the SOA chart as
inline SVG when the plot extra is installed. Every piece of text from the design is HTML-escaped, and the
page's content security policy forbids scripts, so a title carrying markup is shown as text.
"""

from __future__ import annotations

import html
import re
from typing import TextIO

from margincheck.checking import Report
from margincheck.findings import Finding, Status
from margincheck.policy import FACTOR_KEYS, Policy
from margincheck.report.common import (
    DETAIL_LABELS,
    STATUS_WORDS,
    counts_text,
    grouped_by_subject,
    relation,
    run_time,
    soa_rows,
    subject_title,
)
from margincheck.rules.figures import SwitchingFigures
from margincheck.safe_text import printable
from margincheck.units import format_value

__all__ = ["escape", "page", "render"]

_POLICY = "default-src 'none'; style-src 'unsafe-inline'; img-src data:; base-uri 'none'; form-action 'none'"
_STYLE = """
body { font: 14px/1.45 system-ui, sans-serif; color: #1d2327; margin: 2em auto; max-width: 62em; padding: 0 1em; }
h1 { font-size: 1.5em; margin-bottom: .2em; } h2 { font-size: 1.2em; border-bottom: 1px solid #b8c0c8;
  padding-bottom: .2em; margin-top: 1.8em; } h3 { font-size: 1.05em; margin: 1.4em 0 .4em; }
table { border-collapse: collapse; width: 100%; margin: .4em 0 1em; } td, th { text-align: left;
  vertical-align: top; padding: .25em .5em; border-bottom: 1px solid #dde2e6; }
th { background: #eef1f4; font-weight: 600; } td.num { text-align: right; font-variant-numeric: tabular-nums; }
.status { font-weight: 700; letter-spacing: .02em; white-space: nowrap; }
.fail { color: #8f1d21; } .not-evaluated { color: #6b2d86; } .waived { color: #1f5f7a; }
.marginal { color: #7a5200; } .pass { color: #265c3f; }
.verdict { display: inline-block; border: 2px solid currentColor; padding: .15em .6em; font-size: 1.2em; }
.detail { color: #3b444b; font-size: .92em; } .detail dt { font-weight: 600; float: left; clear: left;
  width: 7.5em; } .detail dd { margin: 0 0 .15em 8em; }
.hash { font-family: ui-monospace, monospace; font-size: .85em; word-break: break-all; }
.caution { border-left: 4px solid #8f1d21; padding: .3em .8em; background: #faf3f3; }
figure { margin: 1em 0; } figure svg { max-width: 100%; height: auto; }
@media print { body { margin: 0; max-width: none; font-size: 11px; } h2 { break-after: avoid; }
  tr, .caution li { break-inside: avoid; } }
"""


def escape(text: object) -> str:
    """Untrusted text as HTML text: control characters shown as escapes, markup characters as entities."""
    return html.escape(printable(text), quote=True)


_e = escape  # short, for the many uses below


def _status(status: Status) -> str:
    return f'<span class="status {status.value}">{STATUS_WORDS[status]}</span>'


def _value_cells(finding: Finding) -> str:
    if finding.margin is None:
        return '<td class="num">n/a</td><td class="num">n/a</td><td class="num">n/a</td>'
    sign = {"<=": "&le;", ">=": "&ge;"}[relation(finding)]
    return (f'<td class="num">{_e(format_value(finding.value, finding.kind))}</td>'
            f'<td class="num">{sign} {_e(format_value(finding.limit, finding.kind))}</td>'
            f'<td class="num">{finding.margin:+.1%}</td>')


def _quantities(quantities: dict, labels: dict[str, str] | None = None) -> str:
    labels = labels or {}
    return ", ".join(f"{_e(labels.get(name, name))} {_e(format_value(item.value, item.kind))}"
                     for name, item in quantities.items())


def _details(finding: Finding) -> str:
    rows = [("formula", _e(finding.basis)), ("missing", _e(", ".join(finding.missing))),
            ("corner", _quantities(finding.corner)), ("model", _quantities(finding.details, DETAIL_LABELS)),
            ("waiver", _e(finding.waiver)), ("note", _e(finding.note)), ("source", _e(finding.source)),
            ("caution", _e(finding.caution))]
    items = "".join(f"<dt>{label}</dt><dd>{text}</dd>" for label, text in rows if text)
    return f'<dl class="detail">{items}</dl>'


def _findings_section(report: Report) -> list[str]:
    parts = ["<h2>Findings</h2>"]
    for subject, findings in grouped_by_subject(report.findings):
        parts.append(f"<h3>{_e(subject_title(report, subject))}</h3>")
        parts.append("<table><tr><th>status</th><th>rule</th><th>value</th><th>limit</th><th>margin</th></tr>")
        for finding in findings:
            parts.append(f'<tr id="{_e(finding.subject)}--{finding.rule}"><td>{_status(finding.status)}</td>'
                         f"<td>{finding.rule}</td>{_value_cells(finding)}</tr>"
                         f'<tr><td></td><td colspan="4">{_details(finding)}</td></tr>')
        parts.append("</table>")
        figures = next((item for item in report.figures if item.subject == subject), None)
        if figures is not None:
            parts += _figures_table(figures)
        view = next((item for item in report.soa if item.subject == subject), None)
        if view is not None:
            rows = "".join("<tr>" + "".join(f"<td>{_e(cell)}</td>" for cell in row) + "</tr>" for row in soa_rows(view))
            parts.append(f"<table><tr><th>SOA point of {_e(subject)}</th><th>V_DS</th><th>I_D</th><th>pulse</th>"
                         f"<th>status</th><th>governed by</th></tr>{rows}</table>")
    return parts


def _figures_table(figures: SwitchingFigures) -> list[str]:
    rows = "".join(f"<tr><td>{_e(DETAIL_LABELS.get(name, name))}</td>"
                   f'<td class="num">{_e(format_value(item.value, item.kind))}</td><td class="num">'
                   f"{_e(format_value(figures.nominal[name].value, item.kind)) if name in figures.nominal else 'n/a'}"
                   "</td></tr>" for name, item in figures.worst.items())
    notes = "".join(f"<li>{_e(note)}</li>" for note in figures.notes)
    return [f"<table><tr><th>switching figures of {_e(figures.subject)}</th><th>worst case</th><th>nominal</th>"
            f"</tr>{rows}</table>", f'<ul class="detail">{notes}</ul>' if notes else ""]


def _header(report: Report) -> list[str]:
    design, summary = report.design, counts_text(report.findings)
    revision = f" (revision {_e(design.revision)})" if design.revision else ""
    verdict = report.verdict.value
    css = {"pass": "pass", "marginal": "marginal", "fail": "fail", "incomplete": "not-evaluated"}[verdict]
    return [f"<h1>{_e(design.title)}{revision}</h1>",
            f"<p>Worst-case derating check by margincheck {_e(report.tool_version)}, run {run_time(report)}.</p>",
            f'<p id="verdict">Verdict: <span class="verdict status {css}">{verdict.upper()}</span> '
            f"&nbsp; exit code {report.exit_code} &nbsp; ({summary})</p>", *_overrides(report)]


def _overrides(report: Report) -> list[str]:
    """The ``--set`` overrides of the run, so that the record is not taken for the file as written."""
    items = "".join(f"<li><code>--set {_e(item.text)}</code> (the file: "
                    f"{'not written' if item.file_text is None else _e(item.file_text)})</li>"
                    for item in report.design.overrides)
    return [f'<div class="caution"><b>Checked with overrides, not as the file is written:</b><ul>{items}</ul></div>'
            ] if items else []


def _record_section(report: Report) -> list[str]:
    design, policy = report.design, report.design.policy
    files = "".join(f"<tr><td>{_e(item.role)}</td><td>{_e(item.name)}</td>"
                    f'<td class="hash">{_e(item.sha256)}</td></tr>' for item in design.inputs)
    factors = "".join(f"<tr><td>{key}</td><td class='num'>{getattr(policy, key):g}</td></tr>" for key in FACTOR_KEYS)
    standard = _e(design.standard) if design.standard else "none named (design.standard)"
    return ["<h2>Record</h2>", "<table><tr><th>role</th><th>file</th><th>SHA-256</th></tr>", files, "</table>",
            f"<p>Governing standard: {standard}.</p>",
            f"<p>Derating policy <b>{_e(policy.name)}</b>: {_e(policy.basis)}</p>",
            f"<table><tr><th>policy key</th><th>factor</th></tr>{factors}<tr><td>tj</td>"
            f"<td class='num'>{_e(format_value(policy.tj, 'temperature_difference'))} below T_j,max</td></tr>"
            f"<tr><td>cosmic_ray_fit_budget</td><td class='num'>{_e(_budget(policy))}</td></tr></table>"]


def _budget(policy: Policy) -> str:
    """The policy's cosmic-ray budget as shown, or that it sets none."""
    if policy.cosmic_ray_fit_budget is None:
        return "not set"
    return f"{format_value(policy.cosmic_ray_fit_budget, 'failure_rate')} per switch"


def _chart_section(report: Report) -> list[str]:
    if not report.soa:
        return []
    from margincheck.plot import PlotUnavailable, chart_plan, soa_chart_svg  # matplotlib is imported only inside

    try:
        svg = soa_chart_svg(report.soa)
    except PlotUnavailable:
        return ["<p class='detail'>SOA chart: install the plot extra (pip install \"margincheck[plot]\") to "
                "embed it here.</p>"]
    body = svg[svg.index("<svg"):]  # drop the XML declaration and doctype: inline SVG needs neither
    body = re.sub(r"<metadata>.*?</metadata>", "", body, flags=re.S)  # the file's RDF block, not the chart
    note = chart_plan(report.soa).note
    return ["<h2>Safe operating area</h2>", f"<figure>{body}</figure>", f"<p class='detail'>{_e(note)}</p>" if note
            else ""]


def _waivers_section(report: Report) -> list[str]:
    if not report.waivers:
        return []
    rows = "".join(f"<tr><td>{_e(item.state.value)}</td><td>{_e(item.waiver.rule)}</td>"
                   f"<td>{_e(item.waiver.subject)}</td><td>{_e(item.waiver.accepted_by)}</td>"
                   f"<td>{item.waiver.expires.isoformat()}</td><td>{_e(item.message)}</td></tr>"
                   for item in report.waivers)
    return ["<h2>Waivers</h2>", "<table><tr><th>state</th><th>rule</th><th>subject</th><th>accepted by</th>"
            f"<th>expires</th><th>what it did</th></tr>{rows}</table>"]


def _document(report: Report) -> str:
    warnings = "".join(f"<li>{_e(str(problem))}</li>" for problem in report.design.warnings)
    cautions = "".join(f"<li>{_e(caution)}</li>" for caution in report.cautions)
    body = [*_header(report), f"<ul class='detail'>{warnings}</ul>" if warnings else "",
            *_findings_section(report), *_chart_section(report), *_waivers_section(report),
            *_record_section(report), "<h2>Cautions</h2>", f'<ol class="caution">{cautions}</ol>']
    return page(f"margincheck: {report.design.title}", _STYLE, body)


def page(title: str, style: str, body: list[str]) -> str:
    """A self-contained HTML page: ``title`` (escaped here), the ``style`` sheet and the ``body`` parts (HTML,
    escaped by the caller; empty parts left out), under a content security policy that runs no script and
    fetches nothing."""
    return ("<!DOCTYPE html>\n<html lang=\"en\"><head><meta charset=\"utf-8\">"
            f'<meta http-equiv="Content-Security-Policy" content="{_POLICY}">'
            '<meta name="viewport" content="width=device-width, initial-scale=1">'
            f"<title>{_e(title)}</title><style>{style}</style></head>\n<body>\n"
            + "\n".join(part for part in body if part) + "\n</body></html>\n")


def render(report: Report, stream: TextIO) -> None:
    """Write the HTML review record of ``report``."""
    stream.write(_document(report))
