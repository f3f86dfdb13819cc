"""Reporters: one module per output format, each with a function ``render(report, stream)``.

Formats are registered here by name and imported only when asked for, so that a JSON run never pays for
the terminal renderer's imports.
"""

from __future__ import annotations

from functools import partial
from importlib import import_module
from typing import TYPE_CHECKING, Callable, Sequence, TextIO

if TYPE_CHECKING:  # the registry itself stays import-light for the command-line parser
    from margincheck.checking import Report

__all__ = ["COMBINED_FORMATS", "FORMATS", "Renderer", "batch_renderer", "renderer"]

Renderer = Callable[["Report", TextIO], None]

#: Output formats by the name ``--format`` takes, with the module that renders each.
FORMATS: dict[str, str] = {
    "text": "margincheck.report.terminal",
    "json": "margincheck.report.json_report",
    "junit": "margincheck.report.junit",
    "sarif": "margincheck.report.sarif",
    "markdown": "margincheck.report.markdown",
    "html": "margincheck.report.html_report",
}

#: Formats that write several designs into one file (a batch run); the others write one file per design.
COMBINED_FORMATS = ("junit", "sarif", "markdown")


def renderer(format_name: str, details: bool = False) -> Renderer:
    """The ``render`` function of an output format; with ``details`` the text report in full (the other
    formats always hold everything)."""
    render = import_module(FORMATS[format_name]).render
    return partial(render, details=True) if details and format_name == "text" else render


def batch_renderer(format_name: str) -> Callable[[Sequence[Report], TextIO], None]:
    """The ``render_batch`` function of a combined format (one of ``COMBINED_FORMATS``)."""
    return import_module(FORMATS[format_name]).render_batch
