"""Batch runs: a folder of mixed files gives one summary row per design and the worst exit code."""

import json

import yaml

from tests.conftest import EXAMPLES


def _folder(tmp_path, contract_data):
    """A hardware repository's design folder: a failing design, a passing one (the GaN example with its
    policy file), an unreadable one, a device file, and another tool's YAML."""
    folder = tmp_path / "designs"
    (folder / "policies").mkdir(parents=True)
    (folder / "nested").mkdir()
    (folder / "pump.yaml").write_text(yaml.safe_dump(contract_data, sort_keys=False), encoding="utf-8")
    (folder / "nested" / "gan.yaml").write_bytes((EXAMPLES / "gan-48v-stage.yaml").read_bytes())
    (folder / "nested" / "policies").mkdir()
    (folder / "nested" / "policies" / "bench-lab.yaml").write_bytes(
        (EXAMPLES / "policies" / "bench-lab.yaml").read_bytes())
    (folder / "broken.yaml").write_text("format: margincheck/1\nconditions: [\n", encoding="utf-8")
    (folder / "part.yml").write_bytes((EXAMPLES / "devices" / "demo-sic1200.yaml").read_bytes())
    (folder / "ci.yaml").write_text("jobs:\n  test: {runs-on: linux}\n", encoding="utf-8")
    (folder / ".hidden").mkdir()
    (folder / ".hidden" / "old.yaml").write_text("format: margincheck/1\n", encoding="utf-8")
    return folder


def test_a_folder_of_mixed_files(tmp_path, contract_data, run_cli):
    folder = _folder(tmp_path, contract_data)
    code, out, err = run_cli("check", folder, "--format", "json")
    summary = json.loads(out)
    rows = {row["file"].replace(str(folder) + "/", ""): row for row in summary["designs"]}
    assert set(rows) == {"broken.yaml", "pump.yaml", "nested/gan.yaml"}
    assert rows["pump.yaml"]["verdict"] == "fail" and rows["pump.yaml"]["exit_code"] == 1
    assert rows["nested/gan.yaml"]["verdict"] == "pass" and rows["nested/gan.yaml"]["exit_code"] == 0
    assert rows["broken.yaml"]["exit_code"] == 2 and "broken.yaml:3:1" in err
    skipped = {entry["file"].replace(str(folder) + "/", ""): entry["reason"] for entry in summary["skipped"]}
    assert skipped == {"ci.yaml": "not a margincheck design (no format: margincheck/1, no switches or "
                                  "conditions)",
                       "part.yml": "a device file", "nested/policies/bench-lab.yaml": "a policy file"}
    assert code == 2 == summary["exit_code"]  # the worst of 1, 0 and 2
    assert any("LETHAL VOLTAGE" in caution for caution in summary["cautions"])


def test_text_summary_and_combined_reports(tmp_path, contract_data, run_cli):
    folder = _folder(tmp_path, contract_data)
    (folder / "broken.yaml").unlink()
    out_dir = tmp_path / "out"
    code, out, _ = run_cli("check", folder, "--report", f"junit:{out_dir / 'all.xml'}",
                           "--report", f"html:{out_dir / '{name}.html'}")
    assert code == 1
    assert "batch of 2 design(s), 3 file(s) skipped" in out and "worst exit code 1" in out
    assert out.count("FAIL") >= 1 and "PASS" in out
    junit = (out_dir / "all.xml").read_text(encoding="utf-8")
    assert junit.count("<testsuite ") == 3  # two designs, and the files not checked
    assert '<testsuite name="margincheck: files not checked" tests="3" failures="0" errors="0" skipped="3"' in junit
    assert sorted(path.name for path in out_dir.glob("*.html")) == ["gan.html", "pump.html"]


def test_several_files_are_a_batch_and_one_file_can_be(tmp_path, contract_data, run_cli):
    folder = _folder(tmp_path, contract_data)
    code, out, _ = run_cli("check", folder / "pump.yaml", folder / "ci.yaml", folder / "nested" / "gan.yaml")
    assert code == 1 and "batch of 2 design(s), 1 file(s) skipped" in out
    code, out, _ = run_cli("check", "--batch", folder / "ci.yaml", folder / "pump.yaml")
    assert code == 1 and "batch of 1 design(s)" in out


def test_a_per_design_format_needs_a_name_in_its_path(tmp_path, contract_data, run_cli):
    folder = _folder(tmp_path, contract_data)
    code, _, err = run_cli("check", folder, "--report", f"html:{tmp_path / 'one.html'}")
    assert code == 2 and "{name}" in err
    assert not (tmp_path / "one.html").exists()
