"""The one-page sign-off sheet (``--report signoff:PATH.md`` or ``.html``): its content in both formats, escaping,
a finding not evaluated, the usage error of an unknown suffix, and the HTML sheet printed by headless Chromium on
one A4 and one Letter page.

Expected hashes are computed here with hashlib from the files themselves; expected worst-case values are read
from the example's own text (its conditions), not from the tool.
"""

from __future__ import annotations

import datetime
import hashlib
import html
import io
import re
from html.parser import HTMLParser

import pytest
import yaml

from margincheck.checking import check_file
from margincheck.findings import Bound, Status, Verdict
from margincheck.loading import load_document
from margincheck.report.markdown import escape as markdown_escape
from margincheck.report.signoff_html import render as render_html
from margincheck.report.signoff_markdown import render as render_markdown
from margincheck.units import format_value
from tests.conftest import EXAMPLES
from tests.report.test_html_browser import BROWSER, HOSTILE, _browser

SOLAR = EXAMPLES / "solar-string-sic-leg.yaml"
DRAFT = EXAMPLES / "charger-leg-draft.yaml"
TODAY = datetime.datetime(2026, 12, 1, 12, 0, tzinfo=datetime.timezone.utc)
needs_browser = pytest.mark.skipif(BROWSER is None, reason="no Chromium installed (apt-get install chromium)")


class _Rows(HTMLParser):
    """The text of every table row of a page, cell by cell."""

    def __init__(self) -> None:
        super().__init__()
        self.rows: list[list[str]] = []
        self._cell: list[str] | None = None

    def handle_starttag(self, tag, attrs) -> None:
        if tag == "tr":
            self.rows.append([])
        elif tag in ("td", "th"):
            self._cell = []

    def handle_endtag(self, tag) -> None:
        if tag in ("td", "th") and self._cell is not None:
            self.rows[-1].append("".join(self._cell).strip())
            self._cell = None

    def handle_data(self, data) -> None:
        if self._cell is not None:
            self._cell.append(data)


def _html_rows(page: str) -> list[list[str]]:
    parser = _Rows()
    parser.feed(page)
    return parser.rows


def _markdown_rows(text: str) -> list[list[str]]:
    """Table rows of a Markdown text, split at the unescaped pipes, escapes left in."""
    return [[cell.strip() for cell in re.split(r"(?<!\\)\|", line)[1:-1]]
            for line in text.splitlines() if line.startswith("|")]


@pytest.fixture(scope="module")
def solar_sheets(tmp_path_factory):
    """The solar example's sheet in both formats, written through the command line, and its report."""
    from margincheck.cli import main

    folder = tmp_path_factory.mktemp("sheets")
    code = main(["check", str(SOLAR), "--report", f"signoff:{folder / 'sheet.md'}",
                 "--report", f"signoff:{folder / 'sheet.html'}", "--output", str(folder / "report.txt")])
    assert code == 1
    return ((folder / "sheet.md").read_text(encoding="utf-8"), (folder / "sheet.html").read_text(encoding="utf-8"),
            check_file(SOLAR))


def _text_of(page: str) -> str:
    """The visible text of an HTML page, entities decoded, whitespace collapsed."""
    return " ".join(html.unescape(re.sub(r"<[^>]+>", " ", page.split("<body>", 1)[1])).split())


@pytest.mark.parametrize("kind", ["markdown", "html"])
def test_the_sheet_names_what_was_checked_with_every_hash(solar_sheets, kind):
    markdown, page, report = solar_sheets
    text = markdown if kind == "markdown" else _text_of(page)
    assert "Solar string inverter, 800 V SiC phase leg (illustrative), revision A" in text
    assert str(SOLAR) in text.replace("\\", "")
    assert f"margincheck {report.tool_version}" in text
    for path in (SOLAR, EXAMPLES / "devices" / "demo-sic1200.yaml"):  # the design and the device file it read
        assert hashlib.sha256(path.read_bytes()).hexdigest() in text, path.name
    assert "Derating policy" in text and "default" in text and "common practice" in text


@pytest.mark.parametrize("kind", ["markdown", "html"])
def test_every_finding_needing_attention_is_one_line(solar_sheets, kind):
    markdown, page, report = solar_sheets
    rows = _markdown_rows(markdown) if kind == "markdown" else _html_rows(page)
    listed = [f for f in report.findings if f.status in (Status.FAIL, Status.MARGINAL, Status.WAIVED,
                                                          Status.NOT_EVALUATED)]
    assert {f.status for f in listed} == {Status.FAIL, Status.MARGINAL}
    finding_rows = [row for row in rows if row and row[0] in ("FAIL", "MARGINAL")]
    assert len(finding_rows) == len(listed)
    for finding in listed:
        row = next(row for row in finding_rows if row[1:3] == [finding.rule, finding.subject])
        assert row[0] == finding.status.value.upper() and row[5] == f"{finding.margin:+.1%}"
        limit = f"{'<=' if finding.bound is Bound.UPPER else '>='} {format_value(finding.limit, finding.kind)}"
        assert [row[3], row[4].replace("\\", "")] == [format_value(finding.value, finding.kind), limit]
    assert [row[0] for row in finding_rows] == sorted((row[0] for row in finding_rows), key=["FAIL",
                                                                                              "MARGINAL"].index)


@pytest.mark.parametrize("kind", ["markdown", "html"])
def test_verdict_counts_operating_point_cautions_and_review_fields(solar_sheets, kind):
    markdown, page, report = solar_sheets
    text = markdown if kind == "markdown" else _text_of(page)
    assert re.search(r"Verdict: \**FAIL\**", text)
    passes = sum(f.status is Status.PASS for f in report.findings)
    assert f"{passes} pass; 0 not evaluated" in text
    conditions = yaml.safe_load(SOLAR.read_text(encoding="utf-8"))["conditions"]
    # The worst ends as the example writes them: the highest bus voltage and turn-off current, and both ends of
    # the case temperature (the hottest for the thermal rules, the coldest for cosmic-ray-fit)
    case = conditions["case_temperature"]
    for label, value in (("bus voltage", conditions["bus_voltage"]["max"]),
                         ("turn-off current", conditions["turn_off_current"]["max"]),
                         ("switching frequency", conditions["switching_frequency"]),
                         ("case temperature", f"{case['min']} and {case['max']}"),
                         ("altitude", conditions["altitude"]["max"])):
        assert re.search(rf"{label}:? {value}", text), label
    for caution in report.cautions:
        assert (markdown_escape(caution) if kind == "markdown" else " ".join(caution.split())) in text
    for field in ("Reviewer:", "Role:", "Date:", "approve", "approve with conditions", "reject"):
        assert field in text


def _waived_report(contract_data, write_design):
    """The contract design with its Q1 turn-off overshoot waived (the fail kept on record)."""
    contract_data["waivers"] = [{"rule": "turn-off-overshoot", "subject": "Q1", "reason": "bench build only",
                                 "accepted_by": "lead engineer (JK)", "expires": "2027-06-30"}]
    return check_file(write_design(contract_data), now=TODAY)


@pytest.mark.parametrize("render", [render_markdown, render_html])
def test_a_waived_finding_says_who_waived_it_until_when(contract_data, write_design, render):
    report = _waived_report(contract_data, write_design)
    text = _rendered(render, report)
    waived = next(f for f in report.findings if f.status is Status.WAIVED)
    assert (waived.rule, waived.subject) == ("turn-off-overshoot", "Q1")
    assert "WAIVED" in text and f"{waived.margin:+.1%}" in text
    assert "waived (fail) by lead engineer (JK) until 2027-06-30" in text


def _rendered(render, report) -> str:
    buffer = io.StringIO()
    render(report, buffer)
    return buffer.getvalue() if render is render_markdown else _text_of(buffer.getvalue())


def test_a_hostile_design_name_is_escaped_in_html(contract_data, write_design):
    contract_data["design"]["title"] = HOSTILE
    contract_data["design"]["revision"] = "<i>B</i>"
    buffer = io.StringIO()
    render_html(check_file(write_design(contract_data)), buffer)
    page = buffer.getvalue()
    assert "<script" not in page and "<img" not in page and "<b>bold" not in page and "<i>B" not in page
    assert "&lt;script&gt;document.body.setAttribute(&quot;data-pwned&quot;, &quot;1&quot;)&lt;/script&gt;" in page
    assert "revision &lt;i&gt;B&lt;/i&gt;" in page


def test_a_hostile_design_name_is_escaped_in_markdown(contract_data, write_design):
    contract_data["design"]["title"] = "[click](http://example.test) | <b>x</b> *y* `z`"
    text = _rendered(render_markdown, check_file(write_design(contract_data)))
    heading = text.splitlines()[0]
    assert heading == ("# Sign-off sheet: \\[click\\](http\\://example.test) \\| \\<b\\>x\\</b\\> \\*y\\* \\`z\\`, "
                       "revision B")


@pytest.mark.parametrize("suffix", [".md", ".html"])
def test_a_set_override_is_on_the_sheet(tmp_path, run_cli, suffix):
    target = tmp_path / f"sheet{suffix}"
    run_cli("check", SOLAR, "--set", "conditions.bus_voltage=800 V", "--report", f"signoff:{target}")
    text = target.read_text(encoding="utf-8")
    assert "Checked with an override, not as the file is written" in text
    assert "conditions.bus" in text and "voltage=800 V" in text


def _incomplete_design(write_design):
    """The GaN example (it passes under the default policy) with one switch's driver CMTI left out."""
    data = load_document(EXAMPLES / "gan-48v-stage.yaml").data  # YAML 1.2: "on" and "off" stay keys
    data["derating"] = "default"  # its policy file stays behind in examples/
    del data["switches"][0]["driver_cmti"]
    return write_design(data)


@pytest.mark.parametrize("render", [render_markdown, render_html])
def test_a_finding_not_evaluated_is_listed_and_blocks_a_pass(write_design, render):
    report = check_file(_incomplete_design(write_design))
    not_evaluated = [f for f in report.findings if f.status is Status.NOT_EVALUATED]
    assert [(f.rule, f.subject) for f in not_evaluated] == [("driver-cmti", "Q1")]
    assert report.verdict is Verdict.INCOMPLETE
    text = _rendered(render, report)
    assert "PASS" not in text  # neither as the verdict nor anywhere else
    assert re.search(r"Verdict: \**INCOMPLETE\**", text) and "sign-off is blocked" in text
    assert "; 1 not evaluated" in text
    needs = r"needs switches\\?\[0\\?\]\.driver\\?_cmti"  # what it lacks, on its line
    assert re.search(r"NOT EVALUATED \|? ?driver-cmti \|? ?Q1 [^\n]*" + needs, text)


def test_the_draft_example_lists_every_finding_not_evaluated(tmp_path, run_cli):
    target = tmp_path / "draft.md"
    code, _, _ = run_cli("check", DRAFT, "--report", f"signoff:{target}")
    assert code == 1
    rows = [row for row in _markdown_rows(target.read_text(encoding="utf-8")) if row[0] == "NOT EVALUATED"]
    expected = {(f.rule, f.subject) for f in check_file(DRAFT).findings if f.status is Status.NOT_EVALUATED}
    assert {(row[1], row[2]) for row in rows} == expected and len(rows) == len(expected)


@pytest.mark.parametrize("target", ["sheet.pdf", "sheet.txt", "sheet", "sheet.md.bak"])
def test_an_unknown_suffix_is_a_usage_error(tmp_path, run_cli, capsys, target):
    with pytest.raises(SystemExit) as stop:
        run_cli("check", SOLAR, "--report", f"signoff:{tmp_path / target}")
    assert stop.value.code == 2
    assert "a sign-off sheet is written as Markdown (.md) or HTML (.html, .htm)" in capsys.readouterr().err
    assert list(tmp_path.iterdir()) == []


def test_the_htm_suffix_in_any_case_is_html(tmp_path, run_cli):
    target = tmp_path / "SHEET.HTM"
    code, _, _ = run_cli("check", SOLAR, "--report", f"signoff:{target}")
    assert code == 1 and target.read_text(encoding="utf-8").startswith("<!DOCTYPE html>")


def _page_count(pdf: bytes) -> int:
    """Pages of a PDF: its page objects (``/Type /Page``, not the ``/Pages`` tree nodes)."""
    return len(re.findall(rb"/Type\s*/Page(?![A-Za-z])", pdf))


def _printed(tmp_path, page: str, paper: str) -> tuple[tuple[int, int], int]:
    """Print an HTML page to PDF in Chromium on ``paper``: the page size [pt] and the number of pages."""
    sheet = tmp_path / "printed.html"
    # The paper size a printer would give (the sheet names none, so that either paper fits)
    sheet.write_text(page.replace("</style>", f"@page {{ size: {paper}; }}</style>"), encoding="utf-8")
    pdf = tmp_path / "printed.pdf"
    result = _browser(tmp_path, "--no-pdf-header-footer", f"--print-to-pdf={pdf}", sheet.as_uri())
    assert pdf.exists(), result.stderr[-2000:]
    data = pdf.read_bytes()
    box = re.search(rb"/MediaBox\s*\[\s*0 0 ([\d.]+) ([\d.]+)\s*\]", data)
    return tuple(round(float(side)) for side in box.groups()), _page_count(data)


@needs_browser
@pytest.mark.parametrize("paper, media_box", [("A4", (595, 842)), ("letter", (612, 792))])
@pytest.mark.parametrize("example", sorted(path.name for path in EXAMPLES.glob("*.yaml")))
def test_the_html_sheet_prints_on_one_page(tmp_path, run_cli, example, paper, media_box):
    sheet = tmp_path / "sheet.html"
    run_cli("check", EXAMPLES / example, "--report", f"signoff:{sheet}")
    assert _printed(tmp_path, sheet.read_text(encoding="utf-8"), paper) == (media_box, 1)


@needs_browser
def test_the_page_count_sees_a_sheet_that_overflows(tmp_path, run_cli):
    """The counting above is not vacuous: the same sheet pushed down by half a page prints on two."""
    sheet = tmp_path / "sheet.html"
    run_cli("check", EXAMPLES / "pump-drive-leg.yaml", "--report", f"signoff:{sheet}")
    page = sheet.read_text(encoding="utf-8").replace("<body>", '<body><div style="height: 150mm"></div>')
    assert _printed(tmp_path, page, "A4") == ((595, 842), 2)


@needs_browser
def test_markup_in_the_design_is_not_run_in_the_sheet(tmp_path, contract_data, write_design, run_cli):
    contract_data["design"]["title"] = HOSTILE
    sheet = tmp_path / "sheet.html"
    run_cli("check", write_design(contract_data), "--report", f"signoff:{sheet}")
    dom = _browser(tmp_path, "--dump-dom", sheet.as_uri()).stdout
    assert 'id="verdict"' in dom
    assert "data-pwned" not in dom.split("<body", 1)[1].split(">", 1)[0]
    assert "&lt;script&gt;document.body.setAttribute" in dom and "<b>bold</b>" not in dom
