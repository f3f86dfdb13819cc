"""Capture files as NumPy arrays: ``.npy`` (memory-mapped) and ``.npz`` (one array per column).

- ``.npy``: a 2-D array of shape (samples, columns), columns numbered from 1 and, unless the mapping numbers
  them, in the order time, v_ds, i_d, v_gs[, v_gs_idle]; or a 1-D structured array whose field names are the
  column names (found like CSV header names).
- ``.npz``: one 1-D array per column, the array names being the column names.

Values are in SI units unless the mapping gives units; integer arrays are codes and need a scale (and
optionally an offset) in the mapping. Pickled objects are never loaded (``allow_pickle=False``), and arrays
that are not real numbers (text, booleans, complex, objects) are refused.
"""

from __future__ import annotations

import zipfile
from pathlib import Path
from typing import Mapping

import numpy as np

from margincheck.captures.mapping import CHANNELS, KIND_OF, TIME, CaptureMapping
from margincheck.captures.raw import Locator, RawCapture, fail
from margincheck.errors import Problem

__all__ = ["read_npy_capture", "read_npz_capture"]

_DEFAULT_ORDER = (TIME, *CHANNELS)
_UNREADABLE = (ValueError, OSError, EOFError, zipfile.BadZipFile)


def _numeric(name: str, label: str, column: np.ndarray) -> np.ndarray:
    if column.dtype.kind not in "fiu":
        raise fail(name, f"holds {column.dtype} values; a capture column holds real numbers (float or integer)",
                   label)
    if column.ndim != 1:
        raise fail(name, f"has shape {column.shape}; a capture column is one-dimensional", label)
    return column


def _find(name: str, signal: str, wanted: str | int | None, names: tuple[str, ...]) -> str | None:
    """The column name that ``signal`` reads, or None when the file has none for it."""
    if isinstance(wanted, int):
        raise fail(name, f"{signal} is mapped to column number {wanted}, but the columns of this file have names "
                         f"({', '.join(names)}): map it by name")
    candidates = [wanted] if wanted is not None else [signal] + (["t"] if signal == TIME else [])
    for candidate in candidates:
        matches = [column for column in names if column == candidate] or \
                  [column for column in names if column.casefold() == candidate.casefold()]
        if len(matches) == 1:
            return matches[0]
    if wanted is not None:
        raise fail(name, f'{signal} is mapped to "{wanted}", but there is no such column; the columns are '
                         f"{', '.join(names)}")
    return None


def _by_name(name: str, names: tuple[str, ...], mapping: CaptureMapping) -> dict[str, str]:
    found = {signal: _find(name, signal, mapping.columns.get(signal), names) for signal in KIND_OF}
    if found[TIME] is None:
        raise fail(name, f"no time column (named \"time\" or \"t\"); the columns are {', '.join(names)}: name it "
                         "with time_column in the design, or --map time=NAME")
    present = {signal: column for signal, column in found.items() if column is not None}
    if len(present) == 1:
        raise fail(name, f"no column is mapped to v_ds, i_d, v_gs or v_gs_idle; the columns are "
                         f"{', '.join(names)}: map them in the design's columns, or with --map v_ds=NAME")
    return present


def _by_number(name: str, count: int, mapping: CaptureMapping) -> dict[str, int]:
    """Signal -> 0-based column of a plain 2-D array."""
    if not mapping.columns:
        if count > len(_DEFAULT_ORDER):
            raise fail(name, f"{count} columns and no mapping; number them, e.g. --map time=1 --map v_ds=2")
        return {signal: index for index, signal in enumerate(_DEFAULT_ORDER[:count])}
    present = {}
    for signal, wanted in mapping.columns.items():
        if not isinstance(wanted, int) or not 1 <= wanted <= count:
            raise fail(name, f"{signal} is mapped to column {wanted!r}; this array's columns are numbered 1 to "
                             f"{count}")
        present[signal] = wanted - 1
    if TIME not in present:
        raise fail(name, "the mapping numbers no time column; add time=N (or time_column: N)")
    return present


def _locator(name: str, labels: Mapping[str, str]) -> Locator:
    def locate(signal: str, row: int | None, message: str) -> Problem:
        where = labels[signal] if row is None else f"{labels[signal]}, sample {row + 1}"
        return Problem(name, None, where, message)

    return locate


def _raw(name: str, columns: dict[str, np.ndarray], labels: dict[str, str]) -> RawCapture:
    lengths = {len(column) for column in columns.values()}
    if len(lengths) > 1:
        listing = ", ".join(f"{labels[signal]}: {len(column)}" for signal, column in columns.items())
        raise fail(name, f"the columns differ in length ({listing})")
    integers = {signal for signal, column in columns.items() if column.dtype.kind in "iu"}
    values = {signal: np.array(column, dtype=np.float64) for signal, column in columns.items()}
    return RawCapture(values, {}, _locator(name, labels), integer_codes=integers)


def read_npy_capture(path: Path, name: str, mapping: CaptureMapping) -> RawCapture:
    """The mapped columns of a ``.npy`` capture, memory-mapped read-only and copied one column at a time."""
    try:
        array = np.load(path, mmap_mode="r", allow_pickle=False)
    except _UNREADABLE as error:
        raise fail(name, f"cannot be read as a NumPy array without pickled objects ({error})") from None
    if array.dtype.names:
        if array.ndim != 1:
            raise fail(name, f"a structured array of shape {array.shape}; expected one dimension")
        names = tuple(array.dtype.names)
        present = _by_name(name, names, mapping)
        columns = {signal: _numeric(name, f'field "{field}"', array[field]) for signal, field in present.items()}
        return _raw(name, columns, {signal: f'field "{field}"' for signal, field in present.items()})
    if array.ndim != 2:
        raise fail(name, f"an array of shape {array.shape}; expected (samples, columns) or named fields")
    if array.shape[1] > array.shape[0]:
        raise fail(name, f"an array of shape {array.shape} has more columns than samples; save it as "
                         "(samples, columns)")
    numbers = _by_number(name, array.shape[1], mapping)
    labels = {signal: f"column {index + 1} ({signal})" for signal, index in numbers.items()}
    columns = {signal: _numeric(name, labels[signal], array[:, index]) for signal, index in numbers.items()}
    return _raw(name, columns, labels)


def read_npz_capture(path: Path, name: str, mapping: CaptureMapping) -> RawCapture:
    """The mapped columns of a ``.npz`` capture, each array read on its own (a zip archive cannot be mapped)."""
    try:
        with np.load(path, allow_pickle=False) as archive:
            present = _by_name(name, tuple(archive.files), mapping)
            columns = {}
            for signal, array_name in present.items():
                label = f'array "{array_name}"'
                columns[signal] = _numeric(name, label, archive[array_name])
    except _UNREADABLE as error:
        raise fail(name, f"cannot be read as a NumPy archive without pickled objects ({error})") from None
    return _raw(name, columns, {signal: f'array "{array_name}"' for signal, array_name in present.items()})
