"""What a capture format reader hands on: the recorded columns as float64 arrays, before any unit, scale,
attenuation or deskew is applied, with a way to say where a value sits in the file."""

from __future__ import annotations

import hashlib
from dataclasses import dataclass, field
from pathlib import Path
from typing import Callable

import numpy as np

from margincheck.errors import InputError, Problem

__all__ = ["Locator", "RawCapture", "fail", "file_digest"]

#: Locates a problem: (signal name, 0-based sample or None for the column's header, message) -> Problem.
Locator = Callable[[str, "int | None", str], Problem]

_READ_BYTES = 1 << 24


@dataclass
class RawCapture:
    """The mapped columns of one file as recorded.

    Attributes
    ----------
    values : dict of str to ndarray
        Signal name (``time``, ``v_ds``...) -> float64 values as written in the file (codes or file units);
        each array is the reader's own, so later steps may scale it in place.
    units : dict of str to str
        Signal name -> the unit text the file gives for it (absent: the file gives none).
    scale, offset : dict of str to float
        Signal name -> integer-code scale and offset the file gives.
    metadata : dict of str to str
        Key/value lines of the file's header.
    locate : Locator
        Makes a located problem for a signal's sample (or its header when the sample is None).
    integer_codes : set of str
        Signals stored as integers (a ``.npy`` of int16, say), which need a scale before they mean anything.
    """

    values: dict[str, np.ndarray]
    units: dict[str, str]
    locate: Locator
    scale: dict[str, float] = field(default_factory=dict)
    offset: dict[str, float] = field(default_factory=dict)
    metadata: dict[str, str] = field(default_factory=dict)
    integer_codes: set[str] = field(default_factory=set)


def fail(file: str, message: str, path: str = "", location=None) -> InputError:
    """An InputError with one problem (to be raised by the caller)."""
    return InputError([Problem(file, location, path, message)])


def file_digest(path: Path, name: str, count_lines: bool) -> tuple[str, int]:
    """SHA-256 of the file's bytes and (if ``count_lines``) the number of line feeds in them, in one pass of
    bounded memory."""
    digest, line_feeds = hashlib.sha256(), 0
    try:
        with open(path, "rb") as stream:
            while chunk := stream.read(_READ_BYTES):
                digest.update(chunk)
                line_feeds += chunk.count(b"\n") if count_lines else 0
    except OSError as error:
        raise fail(name, f"cannot read the file ({error.strerror or error})") from None
    return digest.hexdigest(), line_feeds
