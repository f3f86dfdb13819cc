"""Reporters: one module per output format, each with a function ``render(report, stream)``.

Formats are registered here by name and imported only when asked for, so that a JSON run never pays for
the terminal renderer's imports.
"""

from __future__ import annotations

from functools import partial
from importlib import import_module
from pathlib import PurePath
from typing import TYPE_CHECKING, Callable, Sequence, TextIO

if TYPE_CHECKING:  # the registry itself stays import-light for the command-line parser
    from margincheck.checking import Report

__all__ = ["COMBINED_FORMATS", "FORMATS", "SHEET_FORMATS", "Renderer", "batch_renderer", "renderer", "sheet_format"]

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

#: The one-page sign-off sheet, written only to a file (``--report signoff:PATH``): its flavour follows the
#: file's suffix, and each flavour is registered under its own internal name.
SHEET_FORMATS: dict[str, str] = {
    "signoff-markdown": "margincheck.report.signoff_markdown",
    "signoff-html": "margincheck.report.signoff_html",
}
_SHEET_SUFFIXES = {".md": "signoff-markdown", ".html": "signoff-html", ".htm": "signoff-html"}

#: Formats that write several designs into one file (a batch run); the others write one file per design.
COMBINED_FORMATS = ("junit", "sarif", "markdown")


def renderer(format_name: str, details: bool = False) -> Renderer:
    """The ``render`` function of an output format; with ``details`` the text report in full (the other
    formats always hold everything)."""
    render = import_module({**FORMATS, **SHEET_FORMATS}[format_name]).render
    return partial(render, details=True) if details and format_name == "text" else render


def sheet_format(path: str) -> str:
    """The internal format name of a sign-off sheet written to ``path``: Markdown for ``.md``, HTML for
    ``.html`` or ``.htm`` (any case).

    Raises
    ------
    ValueError
        For any other suffix.
    """
    suffix = PurePath(path).suffix.lower()
    if suffix not in _SHEET_SUFFIXES:
        raise ValueError(f'a sign-off sheet is written as Markdown (.md) or HTML (.html, .htm), got "{path}"')
    return _SHEET_SUFFIXES[suffix]


def batch_renderer(format_name: str) -> Callable[[Sequence[Report], TextIO], None]:
    """The ``render_batch`` function of a combined format (one of ``COMBINED_FORMATS``)."""
    return import_module(FORMATS[format_name]).render_batch
