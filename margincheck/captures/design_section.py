"""The design file's optional ``captures:`` section as typed data: one ``CaptureSpec`` per measured capture.

The section only names and describes the files; they are read (``read_capture``) when an analysis needs them,
since a capture may be hundreds of megabytes. Each file reference is confined to the design's folder like a
device file's (margincheck.references), and must name an existing regular file.
"""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path
from typing import Callable

from margincheck.building import POSITIVE, Builder, get
from margincheck.captures.mapping import CHANNELS, SEPARATORS, TIME, CaptureMapping, check_unit
from margincheck.loading import DocPath, Document
from margincheck.references import FileReferenceError
from margincheck.units import QuantityError

__all__ = ["CaptureSpec", "build_capture_specs"]


@dataclass(frozen=True)
class CaptureSpec:
    """One ``captures:`` entry.

    Attributes
    ----------
    file : Path
        The capture file's real path (confined to the design's folder or an allowed root).
    name : str
        The file's name for messages: the design's folder joined with the reference as written.
    switch : str
        Ref of the switch under test.
    mapping : CaptureMapping
        Columns, units, attenuation, deskew, integer-code scale and offset, separator and decimal mark.
    bus_voltage : float
        Bus voltage of the test [V].
    load_inductance : float
        Load inductance of the double-pulse test [H].
    path : tuple
        Where the entry sits in the design file.
    """

    file: Path
    name: str
    switch: str
    mapping: CaptureMapping
    bus_voltage: float
    load_inductance: float
    path: DocPath


def _units(builder: Builder, document: Document, path: DocPath) -> dict[str, str]:
    units = {}
    for signal, unit in (get(document.data, path) or {}).items():
        try:
            check_unit(signal, unit)
        except QuantityError as error:
            builder.fail(document, path + (signal,), str(error))
            continue
        units[signal] = unit
    return units


def _mapping(builder: Builder, document: Document, path: DocPath) -> CaptureMapping:
    entry = get(document.data, path)
    columns = dict(entry.get("columns", {}))
    if "time_column" in entry:
        columns[TIME] = entry["time_column"]
    deskew = {signal: builder.quantity(document, path + ("deskew", signal), "time")
              for signal in CHANNELS if signal in entry.get("deskew", {})}
    return CaptureMapping(
        columns=columns, units=_units(builder, document, path + ("units",)),
        attenuation={signal: float(value) for signal, value in entry.get("attenuation", {}).items()},
        deskew=deskew,
        scale={signal: float(value) for signal, value in entry.get("scale", {}).items()},
        offset={signal: float(value) for signal, value in entry.get("offset", {}).items()},
        separator=SEPARATORS.get(entry.get("separator", "")), decimal=entry.get("decimal"))


def build_capture_specs(builder: Builder, document: Document, locate_file: Callable[[str], Path]
                        ) -> tuple[CaptureSpec, ...]:
    """Every ``captures:`` entry of a validated design, problems recorded on ``builder``.

    Parameters
    ----------
    builder : Builder
        Collects the located problems (unknown switch ref, refused or missing file, bad unit).
    document : Document
        The validated design.
    locate_file : callable
        Reference as written -> real path; raises FileReferenceError for a refused or missing file.
    """
    refs = {entry["ref"] for entry in document.data["switches"]}
    specs = []
    for index, entry in enumerate(document.data.get("captures", [])):
        path: DocPath = ("captures", index)
        if entry["switch"] not in refs:
            builder.fail(document, path + ("switch",), f'no switch with ref "{entry["switch"]}"')
        try:
            real_path = locate_file(entry["file"])
        except FileReferenceError as error:
            builder.fail(document, path + ("file",), f'capture file "{entry["file"]}": {error}')
            continue
        specs.append(CaptureSpec(
            file=real_path, name=str(document.path.parent / entry["file"]), switch=entry["switch"],
            mapping=_mapping(builder, document, path),
            bus_voltage=builder.quantity(document, path + ("bus_voltage",), "voltage", POSITIVE),
            load_inductance=builder.quantity(document, path + ("load_inductance",), "inductance", POSITIVE),
            path=path))
    return tuple(specs)
