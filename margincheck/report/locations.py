"""Where in the design file a finding points: its subject's entry, and the fields of its inputs.

Review tools (code hosts reading SARIF, editors) annotate these lines. A field written in a device file is
located at the design's reference to that file; a field the design leaves out is located at its nearest
written parent.
"""

from __future__ import annotations

import re
from dataclasses import dataclass

from margincheck.design import Design
from margincheck.errors import Location, format_path
from margincheck.findings import Finding
from margincheck.loading import DocPath

__all__ = ["FieldLocation", "field_path", "finding_locations", "subject_location"]

_PART = re.compile(r"([^.\[\]]+)|\[(\d+)\]")


@dataclass(frozen=True)
class FieldLocation:
    """A place in the design file: the field as written (``switches[0].gate_drive.r_off``) and its line/column."""

    field: str
    location: Location


def field_path(text: str) -> DocPath:
    """The document path of a field as the reports name it; any trailing remark in brackets is dropped.

    Examples
    --------
    >>> field_path("switches[0].gate_drive.r_off (or q_gd)")
    ('switches', 0, 'gate_drive', 'r_off')
    """
    written = text.split(" ", 1)[0]
    return tuple(int(index) if index else name for name, index in _PART.findall(written))


def subject_location(design: Design, subject: str) -> FieldLocation | None:
    """The ``ref`` line of the switch or capacitor a finding is about."""
    entries = [*design.switches, *design.capacitors]
    entry = next((item for item in entries if item.ref == subject), None)
    if entry is None:
        return None
    location = design.document.location_of(entry.path + ("ref",))
    return None if location is None else FieldLocation(f"{format_path(entry.path)}.ref", location)


def _field_location(design: Design, text: str) -> FieldLocation | None:
    """A field's value, or for a field the file leaves out, the key of its nearest written parent."""
    path, written = field_path(text), text.split(" ", 1)[0]
    document = design.document
    for end in range(len(path), 0, -1):
        if path[:end] in document.locations:
            if end == len(path):
                return FieldLocation(written, document.locations[path])
            parent = format_path(path[:end])
            return FieldLocation(f"{written} (not written; it belongs under {parent})",
                                 document.key_location_of(path[:end]))
    return None


def finding_locations(design: Design, finding: Finding) -> list[FieldLocation]:
    """The subject's entry first, then every distinct input field (and missing field) the design holds."""
    places = [subject_location(design, finding.subject)]
    places += [_field_location(design, text) for text in [*finding.fields.values(), *finding.missing]]
    unique: dict[str, FieldLocation] = {}
    for place in places:
        if place is not None:
            unique.setdefault(place.field, place)
    return list(unique.values())
