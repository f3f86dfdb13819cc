"""Reporters: one module per output format, each a function ``render(report, stream)`` registered here."""

from __future__ import annotations

from typing import Callable, TextIO

from margincheck.checking import Report
from margincheck.report import json_report, terminal

__all__ = ["REPORTERS", "Renderer"]

Renderer = Callable[[Report, TextIO], None]

#: Output formats by the name ``--format`` takes.
REPORTERS: dict[str, Renderer] = {
    "text": terminal.render,
    "json": json_report.render,
}
