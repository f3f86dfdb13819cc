"""Capture files as text: key/value header lines, a column header, an optional units row, then numbers.

Layout (each part is found from the file, never guessed when two readings are possible):

- The separator is a comma, a semicolon or a tab, found from the first data row: the first line that splits
  into two or more cells that are all numbers (or given in the mapping).
- The decimal mark is a point, or a comma when the separator is ``;`` or a tab and the first data row holds
  commas (or given in the mapping). A file that mixes the two marks is refused at the first cell that
  differs; thousands separators are not accepted.
- The last non-blank line before the data is the column header, unless it is a units row: a line with as many
  cells as the header above it, whose non-empty cells are mostly units (``s``, ``mV``, ``kA``). A header cell
  may carry its unit in brackets instead: ``time (us)``, ``CH1 [mV]``.
- Lines before the column header are metadata, ``key<separator>value``. ``scale.COLUMN`` and
  ``offset.COLUMN`` give integer codes their meaning: value = code * scale + offset, in the column's unit.

The data are read in blocks of lines (numpy's own text parser on each block) into arrays allocated once from a
first pass that counts the lines, so that a large file is held once as float64, plus one block.
"""

from __future__ import annotations

import csv
import io
import re
from dataclasses import dataclass
from pathlib import Path
from typing import TextIO

import numpy as np

from margincheck.captures.mapping import KIND_OF, TIME, CaptureMapping
from margincheck.captures.raw import RawCapture, fail
from margincheck.errors import InputError, Location, Problem
from margincheck.units import KINDS, QuantityError, parse_quantity

__all__ = ["read_csv_capture"]

#: Lines read looking for the first data row before the file is refused.
HEADER_LINE_LIMIT = 10_000
_BLOCK_CHARACTERS = 1 << 23
_BRACKETED_UNIT = re.compile(r"^(?P<name>.*?)\s*[\[(](?P<unit>[^\[\]()]+)[\])]$")


@dataclass(frozen=True)
class _Layout:
    """Where things are in a text capture. Line numbers are 1-based."""

    separator: str
    decimal: str
    names: tuple[str, ...]
    units: tuple[str, ...]
    metadata: dict[str, str]
    metadata_lines: dict[str, int]
    header_line: int
    units_line: int | None
    first_data_line: int
    first_data_text: str


def _cells(text: str, separator: str) -> list[str]:
    """The cells of a header line, quotes removed (a quoted cell may hold the separator)."""
    return [cell.strip() for cell in next(csv.reader([text], delimiter=separator, skipinitialspace=True))]


def _is_number(cell: str, decimal_comma: bool) -> bool:
    text = cell.replace(",", ".", 1) if decimal_comma else cell
    try:
        float(text)
    except ValueError:
        return False
    return "_" not in text


def _data_separator(text: str, given: str | None) -> str | None:
    """The separator under which ``text`` is a data row (two or more numbers), or None."""
    for separator in ((given,) if given else ("\t", ";", ",")):
        cells = _cells(text, separator)
        if len(cells) >= 2 and all(_is_number(cell, separator != ",") for cell in cells):
            return separator
    return None


def _is_unit(cell: str) -> bool:
    for kind in KINDS:
        try:
            parse_quantity(f"1 {cell}", kind)
        except QuantityError:
            continue
        return True
    return False


def _unbracketed(cell: str) -> str:
    return cell[1:-1].strip() if len(cell) > 2 and cell[0] + cell[-1] in ("()", "[]") else cell


def _looks_like_units_row(cells: list[str]) -> bool:
    written = [_unbracketed(cell) for cell in cells if cell]
    return bool(written) and 2 * sum(_is_unit(cell) for cell in written) >= len(written)


def _header_lines(stream: TextIO, name: str, mapping: CaptureMapping) -> tuple[list[tuple[int, str]], int, str, str]:
    """The non-blank lines before the first data row, that row's line number and text, and the separator."""
    lines: list[tuple[int, str]] = []
    for line_number, raw_line in enumerate(stream, start=1):
        text = raw_line.rstrip("\r\n")
        if not text.strip():
            continue
        separator = _data_separator(text, mapping.separator)
        if separator is not None:
            return lines, line_number, text, separator
        if line_number >= HEADER_LINE_LIMIT:
            break
        lines.append((line_number, text))
    raise fail(name, f"no data row (two or more numbers separated by commas, semicolons or tabs) in the first "
                     f"{HEADER_LINE_LIMIT} lines; the simplest capture is a header row time,v_ds,i_d,v_gs "
                     "followed by rows of numbers in SI units")


def _decimal(name: str, line: int, text: str, separator: str, mapping: CaptureMapping) -> str:
    if mapping.decimal == "," and separator == ",":
        raise fail(name, "a decimal comma cannot be read with a comma separator; export with ';' or tab "
                         "separators, or with decimal points", location=Location(line, 1))
    if mapping.decimal:
        return mapping.decimal
    return "," if separator != "," and "," in text else "."


def _split_units(names: list[str]) -> tuple[list[str], list[str]]:
    """Column names without a bracketed unit, and the units ('' where a name carries none)."""
    bare, units = [], []
    for cell in names:
        match = _BRACKETED_UNIT.match(cell)
        bare.append(match["name"] if match else cell)
        units.append(match["unit"].strip() if match else "")
    return bare, units


def _metadata(lines: list[tuple[int, str]], separator: str) -> tuple[dict[str, str], dict[str, int]]:
    """Key/value header lines, split by the data's separator or, failing that, by another one."""
    values, where = {}, {}
    for line_number, text in lines:
        cells = _cells(text, separator)
        if len(cells) == 1:
            other = next((mark for mark in ("\t", ";", ",") if mark in text), separator)
            cells = _cells(text, other)
        values[cells[0]] = separator.join(cell for cell in cells[1:] if cell)
        where[cells[0]] = line_number
    return values, where


def _layout(stream: TextIO, name: str, mapping: CaptureMapping) -> _Layout:
    lines, data_line, data_text, separator = _header_lines(stream, name, mapping)
    decimal = _decimal(name, data_line, data_text, separator, mapping)
    count = len(_cells(data_text, separator))
    if not lines:
        raise fail(name, "no column header before the first data row; add one such as time,v_ds,i_d,v_gs",
                   location=Location(data_line, 1))
    last = _cells(lines[-1][1], separator)
    units_line = None
    if (len(lines) >= 2 and len(last) == count and len(_cells(lines[-2][1], separator)) == count
            and _looks_like_units_row(last)):
        units_line = lines.pop()[0]
        units_row = [_unbracketed(cell) for cell in last]
    header_line, header_text = lines.pop()
    header = _cells(header_text, separator)
    if len(header) != count:
        raise fail(name, f"the column header has {len(header)} cells but the first data row (line {data_line}) "
                         f"has {count}", location=Location(header_line, 1))
    names, units = _split_units(header)
    if units_line is not None:
        for index, (inline, row) in enumerate(zip(units, units_row)):
            if inline and row and inline != row:
                raise fail(name, f'column {index + 1} "{names[index]}" has the unit "{inline}" in its header and '
                                 f'"{row}" in the units row; keep one', location=Location(units_line, 1))
        units = [inline or row for inline, row in zip(units, units_row)]
    metadata, metadata_lines = _metadata(lines, separator)
    return _Layout(separator, decimal, tuple(names), tuple(units), metadata, metadata_lines, header_line,
                   units_line, data_line, data_text)


def _column_number(layout: _Layout, name: str, signal: str, wanted: str | int | None) -> int | None:
    """The 0-based column of ``signal``, or None when the file does not have it and nothing asks for it."""
    names = layout.names
    listing = ", ".join(f'"{column}"' for column in names)
    where = Location(layout.header_line, 1)
    if isinstance(wanted, int):
        if not 1 <= wanted <= len(names):
            raise fail(name, f"{signal} is mapped to column {wanted}, but the file has {len(names)} columns "
                             f"({listing})", location=where)
        return wanted - 1
    candidates = [wanted] if wanted is not None else [signal] + (["t"] if signal == TIME else [])
    for candidate in candidates:
        exact = [index for index, column in enumerate(names) if column == candidate]
        loose = [index for index, column in enumerate(names) if column.casefold() == candidate.casefold()]
        if len(exact) == 1 or len(loose) == 1:
            return (exact or loose)[0]
        if len(loose) > 1:
            raise fail(name, f'{len(loose)} columns are named "{candidate}"; map {signal} by column number',
                       location=where)
    if wanted is not None:
        raise fail(name, f'{signal} is mapped to column "{wanted}", but there is no such column; the columns '
                         f"are {listing}", location=where)
    return None


def _columns(layout: _Layout, name: str, mapping: CaptureMapping) -> dict[str, int]:
    """Signal -> 0-based column for every signal the file has."""
    found = {signal: _column_number(layout, name, signal, mapping.columns.get(signal)) for signal in KIND_OF}
    listing = ", ".join(f'"{column}"' for column in layout.names)
    where = Location(layout.header_line, 1)
    if found[TIME] is None:
        raise fail(name, f'no time column (named "time" or "t"); the columns are {listing}: name it with '
                         "time_column in the design, or --map time=NAME", location=where)
    present = {signal: index for signal, index in found.items() if index is not None}
    if len(present) == 1:
        raise fail(name, f"no column is mapped to v_ds, i_d, v_gs or v_gs_idle; the columns are {listing}: map "
                         "them with columns: {v_ds: NAME, ...} in the design, or --map v_ds=NAME", location=where)
    by_column: dict[int, str] = {}
    for signal, index in present.items():
        if index in by_column:
            raise fail(name, f'{by_column[index]} and {signal} are both mapped to column {index + 1} '
                             f'"{layout.names[index]}"', location=where)
        by_column[index] = signal
    return present


def _number_in_header(layout: _Layout, name: str, key: str) -> float:
    text = layout.metadata[key]
    try:
        value = float(text.replace(",", ".", 1) if layout.decimal == "," else text)
    except ValueError:
        value = float("nan")
    if not np.isfinite(value) or (key.startswith("scale.") and value == 0):
        raise fail(name, f'{key}: expected a finite number{" other than zero" if key.startswith("scale.") else ""},'
                         f' got "{text}"', location=Location(layout.metadata_lines[key], 1))
    return value


def _codes(layout: _Layout, name: str, columns: dict[str, int]) -> tuple[dict[str, float], dict[str, float]]:
    """Integer-code scale and offset per signal, from ``scale.COLUMN`` / ``offset.COLUMN`` header lines."""
    scale, offset = {}, {}
    for signal, index in columns.items():
        for key, target in ((f"scale.{layout.names[index]}", scale), (f"offset.{layout.names[index]}", offset)):
            if key in layout.metadata:
                target[signal] = _number_in_header(layout, name, key)
    return scale, offset


def _blocks(stream: TextIO, layout: _Layout):
    """(first line number, text) of successive blocks of whole lines, from the first data row on."""
    line_number, pending = layout.first_data_line, layout.first_data_text + "\n"
    while chunk := stream.read(_BLOCK_CHARACTERS):
        text = pending + chunk
        cut = text.rfind("\n") + 1
        if cut:
            yield line_number, text[:cut]
            line_number += text.count("\n", 0, cut)
        pending = text[cut:]
    if pending:
        yield line_number, pending


def _bad_cell(name: str, layout: _Layout, first_line: int, text: str) -> Problem:
    """The first cell of a block that numpy could not read, located by line and character column."""
    other_mark = "," if layout.decimal == "." else "."
    for offset, line in enumerate(text.split("\n")):
        if not line.strip():
            continue
        cells = line.split(layout.separator)
        column = 1
        for index, raw_cell in enumerate(cells):
            cell = raw_cell.strip().strip('"')
            column_name = layout.names[index] if index < len(layout.names) else ""
            where = f'column {index + 1} "{column_name}"' if column_name else f"column {index + 1}"
            if layout.separator != "," and other_mark in cell:
                mark = {",": "a decimal comma", ".": "a decimal point"}[other_mark]
                return Problem(name, Location(first_line + offset, column), where,
                               f'"{cell}" has {mark}, but the first data row (line {layout.first_data_line}) '
                               f'uses the other mark; give decimal in the mapping only if every row agrees')
            if not _is_number(cell, layout.decimal == ","):
                return Problem(name, Location(first_line + offset, column), where, f'not a number: "{cell}"')
            column += len(raw_cell) + len(layout.separator)
        if len(cells) != len(layout.names):
            return Problem(name, Location(first_line + offset, column), f"row of {len(cells)} cells",
                           f"the column header (line {layout.header_line}) has {len(layout.names)} cells")
    return Problem(name, Location(first_line, 1), "", "these rows cannot be read as numbers")


def _parse_block(name: str, layout: _Layout, first_line: int, text: str) -> np.ndarray:
    other_mark = "," if layout.decimal == "." else "."
    if layout.separator != "," and other_mark in text:
        raise InputError([_bad_cell(name, layout, first_line, text)])
    parsed = text.replace(",", ".") if layout.decimal == "," else text
    try:
        values = np.loadtxt(io.StringIO(parsed), delimiter=layout.separator, dtype=np.float64, ndmin=2,
                            comments=None, quotechar='"')
    except ValueError:
        raise InputError([_bad_cell(name, layout, first_line, text)]) from None
    if values.shape[1] != len(layout.names):
        raise InputError([_bad_cell(name, layout, first_line, text)])
    return values


def _read_values(stream: TextIO, name: str, layout: _Layout, columns: dict[str, int], rows: int
                 ) -> dict[str, np.ndarray]:
    """Every mapped column, read block by block into one (signals x rows) float64 array allocated once."""
    signals = list(columns)
    used = [columns[signal] for signal in signals]
    table = np.empty((len(signals), rows), dtype=np.float64)
    filled = 0
    for first_line, text in _blocks(stream, layout):
        if not text.strip():
            continue
        block = _parse_block(name, layout, first_line, text)
        if filled + len(block) > rows:
            raise fail(name, "more rows than line feeds: the file changed while it was read, or ends its lines "
                             "with carriage returns alone; save it with LF or CR LF line ends",
                       location=Location(first_line, 1))
        table[:, filled:filled + len(block)] = block[:, used].T
        filled += len(block)
    return {signal: table[index, :filled] for index, signal in enumerate(signals)}


def _line_of_row(path: Path, layout: _Layout, row: int) -> tuple[int, str]:
    """Line number and text of the 0-based data row ``row`` (blank lines are not rows)."""
    with open(path, encoding="utf-8-sig", errors="replace") as stream:
        seen = -1
        for line_number, line in enumerate(stream, start=1):
            if line_number >= layout.first_data_line and line.strip():
                seen += 1
                if seen == row:
                    return line_number, line.rstrip("\r\n")
    return layout.first_data_line, ""


def _locator(path: Path, name: str, layout: _Layout, columns: dict[str, int]):
    def locate(signal: str, row: int | None, message: str) -> Problem:
        index = columns[signal]
        where = f'column {index + 1} "{layout.names[index]}"'
        if row is None:
            return Problem(name, Location(layout.units_line or layout.header_line, 1), where, message)
        line_number, text = _line_of_row(path, layout, row)
        cells = text.split(layout.separator)
        column = 1 + sum(len(cell) + len(layout.separator) for cell in cells[:index])
        return Problem(name, Location(line_number, column), where, message)

    return locate


def read_csv_capture(path: Path, name: str, mapping: CaptureMapping, line_feeds: int) -> RawCapture:
    """The mapped columns of a text capture, as recorded (see the module's docstring for the layout).

    Parameters
    ----------
    path : Path
        The file, opened read-only as UTF-8 (a byte-order mark is skipped).
    name : str
        The file's name in messages.
    mapping : CaptureMapping
        Columns, units, separator and decimal mark the file does not say itself.
    line_feeds : int
        Line feeds in the file (from the first pass): the data rows are at most this many plus one.

    Raises
    ------
    InputError
        At the line and column of the first cell that cannot be read, or of the header that is missing a
        column, a unit or a time column.
    """
    try:
        with open(path, encoding="utf-8-sig") as stream:
            layout = _layout(stream, name, mapping)
            columns = _columns(layout, name, mapping)
            scale, offset = _codes(layout, name, columns)
            rows = max(line_feeds - layout.first_data_line + 2, 1)
            values = _read_values(stream, name, layout, columns, rows)
    except UnicodeDecodeError as error:
        raise fail(name, f"not UTF-8 text (byte 0x{error.object[error.start]:02x} at byte {error.start} of a "
                         "block); export or save the file as UTF-8") from None
    except OSError as error:
        raise fail(name, f"cannot read the file ({error.strerror or error})") from None
    units = {signal: layout.units[index] for signal, index in columns.items() if layout.units[index]}
    return RawCapture(values, units, _locator(path, name, layout, columns), scale, offset, layout.metadata)
