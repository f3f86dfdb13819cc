"""Shared helpers: the contract design as data, writing designs to files, and running the CLI."""

from __future__ import annotations

import copy
import os
from pathlib import Path

import pytest
import yaml
from hypothesis import settings

from margincheck.cli import main
from margincheck.loading import load_document

#: In CI (CI set in the environment) hypothesis draws the same examples every run, so that a submission's gate
#: does not depend on the luck of a seed; by hand the examples stay random and explore further.
settings.register_profile("ci", derandomize=True, deadline=None)
if os.environ.get("CI"):
    settings.load_profile("ci")

EXAMPLES = Path(__file__).resolve().parent.parent / "examples"
#: The design file of design.md section 3, kept verbatim as an example.
CONTRACT_FILE = EXAMPLES / "pump-drive-leg.yaml"


@pytest.fixture
def contract_data() -> dict:
    """The contract design as plain data (a fresh copy each time)."""
    return copy.deepcopy(load_document(CONTRACT_FILE).data)


@pytest.fixture
def write_design(tmp_path):
    """Write a design (data or text) to a file in a temporary folder and return its path."""

    def write(content: dict | str, name: str = "leg.yaml") -> Path:
        path = tmp_path / name
        path.parent.mkdir(parents=True, exist_ok=True)
        text = content if isinstance(content, str) else yaml.safe_dump(content, sort_keys=False)
        path.write_text(text, encoding="utf-8")
        return path

    return write


@pytest.fixture
def run_cli(capsys):
    """Run the command line in-process; returns (exit code, stdout, stderr)."""

    def run(*arguments: str) -> tuple[int, str, str]:
        code = main([str(argument) for argument in arguments])
        captured = capsys.readouterr()
        return code, captured.out, captured.err

    return run
