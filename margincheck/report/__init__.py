"""Reporters: one module per output format, each with a function ``render(report, stream)``.

Formats are registered here by name and imported only when asked for, so that a JSON run never pays for
the terminal renderer's imports.
"""

from __future__ import annotations

from importlib import import_module
from typing import TYPE_CHECKING, Callable, TextIO

if TYPE_CHECKING:  # the registry itself stays import-light for the command-line parser
    from margincheck.checking import Report

__all__ = ["FORMATS", "Renderer", "renderer"]

Renderer = Callable[["Report", TextIO], None]

#: Output formats by the name ``--format`` takes, with the module that renders each.
FORMATS: dict[str, str] = {
    "text": "margincheck.report.terminal",
    "json": "margincheck.report.json_report",
}


def renderer(format_name: str) -> Renderer:
    """The ``render`` function of an output format."""
    return import_module(FORMATS[format_name]).render
