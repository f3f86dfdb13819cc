"""The pre-commit hook definitions: well-formed in pre-commit's open hook format, and runnable as written."""

import shlex
from pathlib import Path

import yaml

HOOKS = Path(__file__).resolve().parent.parent / ".pre-commit-hooks.yaml"
REQUIRED = {"id", "name", "entry", "language"}  # the keys pre-commit's hook format requires


def test_hooks_are_well_formed():
    hooks = yaml.safe_load(HOOKS.read_text(encoding="utf-8"))
    assert isinstance(hooks, list) and hooks
    for hook in hooks:
        assert set(hook) >= REQUIRED
        assert hook["language"] == "python" and hook["entry"].split()[0] == "margincheck"


def test_the_hook_entry_skips_files_that_are_not_designs(run_cli, tmp_path, contract_data):
    other = tmp_path / ".pre-commit-config.yaml"
    other.write_text("repos: []\n", encoding="utf-8")
    design = tmp_path / "leg.yaml"
    design.write_text(yaml.safe_dump(contract_data, sort_keys=False), encoding="utf-8")
    entry = shlex.split(yaml.safe_load(HOOKS.read_text(encoding="utf-8"))[0]["entry"])[1:]
    code, out, _ = run_cli(*entry, other, design)  # as pre-commit passes the changed files
    assert code == 1 and "1 file(s) skipped" in out


def test_a_commit_without_design_files_passes_the_hook(run_cli, tmp_path):
    other = tmp_path / "ci.yaml"
    other.write_text("jobs: {}\n", encoding="utf-8")
    code, out, _ = run_cli("check", "--batch", other)
    assert code == 0 and "batch of 0 design(s), 1 file(s) skipped" in out
