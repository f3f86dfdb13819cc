"""``margincheck diff A B``: check two designs and write their comparison (exit 1 when B regresses)."""

from __future__ import annotations

import argparse
import sys
from pathlib import Path

from margincheck.diffing import compare_files
from margincheck.output import write_atomically
from margincheck.overrides import parse_overrides
from margincheck.report.diff_report import RENDERERS

__all__ = ["run_diff"]


def run_diff(arguments: argparse.Namespace, options: dict) -> int:
    """Compare ``arguments.files`` (A, B) with the input ``options`` (``--set`` for both); ``--set-b``
    overrides B after them. Returns 1 when B has a fail or not-evaluated finding that A did not have."""
    only_b = parse_overrides(arguments.overrides_b, options["limits"])
    path_a, path_b = arguments.files
    comparison = compare_files(path_a, path_b, options, {**options, "overrides": options["overrides"] + only_b})
    render = RENDERERS[arguments.format]
    if arguments.output is None:
        render(comparison, sys.stdout)
    else:
        read = [Path(item.name) for report in (comparison.a, comparison.b) for item in report.design.inputs]
        write_atomically(arguments.output, lambda stream: render(comparison, stream), read)
    return comparison.exit_code
