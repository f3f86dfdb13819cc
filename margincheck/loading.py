"""Read a YAML input file into plain data, keeping the line and column of every node.

Only the YAML 1.2 core schema is resolved: ``on``, ``off``, ``yes`` and ``no`` stay strings (they are keys of
the design format), ``012`` is twelve, ``1:20`` is a string, dates stay strings. Only the standard tags are
accepted, so no object can be constructed from the file. A key written twice is an error naming both lines.
"""

from __future__ import annotations

import hashlib
import re
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import yaml

from margincheck.errors import InputError, Location, Problem, format_path

__all__ = ["Document", "DocPath", "load_document"]

DocPath = tuple[str | int, ...]

_MAX_DEPTH = 64

_TAG = "tag:yaml.org,2002:"
# (tag, pattern, possible first characters; "" stands for the empty scalar)
_CORE_RESOLVERS: tuple[tuple[str, str, list[str]], ...] = (
    ("null", r"^(?:~|null|Null|NULL|)$", ["~", "n", "N", ""]),
    ("bool", r"^(?:true|True|TRUE|false|False|FALSE)$", list("tTfF")),
    ("int", r"^(?:[-+]?[0-9]+|0o[0-7]+|0x[0-9a-fA-F]+)$", list("-+0123456789")),
    ("float", r"^(?:[-+]?(?:\.[0-9]+|[0-9]+(?:\.[0-9]*)?)(?:[eE][-+]?[0-9]+)?|[-+]?\.(?:inf|Inf|INF)"
              r"|\.(?:nan|NaN|NAN))$", list("-+.0123456789")),
)


class _CoreSchemaLoader(getattr(yaml, "CSafeLoader", yaml.SafeLoader)):  # libyaml's parser when available
    """A safe loader that resolves plain scalars by the YAML 1.2 core schema only."""

    yaml_implicit_resolvers: dict = {}


for _name, _pattern, _first in _CORE_RESOLVERS:
    _CoreSchemaLoader.add_implicit_resolver(_TAG + _name, re.compile(_pattern), _first)


@dataclass
class Document:
    """A parsed input file: plain data plus the source location of every value and every mapping key."""

    path: Path
    data: Any
    sha256: str
    locations: dict[DocPath, Location] = field(default_factory=dict)
    key_locations: dict[DocPath, Location] = field(default_factory=dict)

    @property
    def name(self) -> str:
        """The file name as given, for messages."""
        return str(self.path)

    def location_of(self, path: DocPath) -> Location | None:
        """Where the value at ``path`` starts, falling back to its nearest located ancestor."""
        for end in range(len(path), -1, -1):
            location = self.locations.get(tuple(path[:end]))
            if location is not None:
                return location
        return None

    def key_location_of(self, path: DocPath) -> Location | None:
        """Where the key that names ``path`` is written (the value's location for list items)."""
        return self.key_locations.get(tuple(path)) or self.location_of(path)

    def problem(self, path: DocPath, message: str, *, at_key: bool = False) -> Problem:
        """A problem located at the value (or key) of ``path`` in this document."""
        location = self.key_location_of(path) if at_key else self.location_of(path)
        return Problem(self.name, location, format_path(path), message)


def _location(mark: yaml.Mark) -> Location:
    return Location(mark.line + 1, mark.column + 1)


def _scalar(node: yaml.ScalarNode) -> Any:
    value, tag = node.value, node.tag
    if tag == _TAG + "null":
        return None
    if tag == _TAG + "bool":
        return value.lower() == "true"
    if tag == _TAG + "int":
        if value.startswith(("0x", "0o")):
            return int(value[2:], 16 if value[1] == "x" else 8)
        return int(value, 10)
    if tag == _TAG + "float":
        return float(value.replace(".inf", "inf").replace(".Inf", "inf").replace(".INF", "inf")
                     .replace(".nan", "nan").replace(".NaN", "nan").replace(".NAN", "nan"))
    return value


class _Converter:
    """Turn a composed node tree into plain data, recording locations and collecting problems."""

    def __init__(self, document: Document):
        self.document = document
        self.problems: list[Problem] = []
        self._active: set[int] = set()

    def fail(self, node: yaml.Node, path: DocPath, message: str) -> None:
        self.problems.append(Problem(self.document.name, _location(node.start_mark), format_path(path), message))

    def convert(self, node: yaml.Node, path: DocPath) -> Any:
        self.document.locations[path] = _location(node.start_mark)
        if len(path) > _MAX_DEPTH or id(node) in self._active:
            self.fail(node, path, f"nesting is deeper than {_MAX_DEPTH} levels or refers to itself")
            return None
        allowed = {"scalar": ("str", "null", "bool", "int", "float"), "sequence": ("seq",), "mapping": ("map",)}
        if node.tag not in [_TAG + name for name in allowed[node.id]]:
            self.fail(node, path, f'YAML tag "{node.tag}" is not allowed; write plain values')
            return None
        if isinstance(node, yaml.ScalarNode):
            return _scalar(node)
        self._active.add(id(node))
        try:
            if isinstance(node, yaml.SequenceNode):
                return [self.convert(item, path + (index,)) for index, item in enumerate(node.value)]
            return self._mapping(node, path)
        finally:
            self._active.discard(id(node))

    def _mapping(self, node: yaml.MappingNode, path: DocPath) -> dict:
        result: dict[str, Any] = {}
        for key_node, value_node in node.value:
            if not isinstance(key_node, yaml.ScalarNode):
                self.fail(key_node, path, "a mapping key must be plain text")
                continue
            key = str(key_node.value)
            child = path + (key,)
            if key in result:
                first = self.document.key_locations[child]
                self.fail(key_node, child, f'duplicate key "{key}" (first written at line {first.line})')
                continue
            self.document.key_locations[child] = _location(key_node.start_mark)
            result[key] = self.convert(value_node, child)
        return result


def _decode(raw: bytes, name: str) -> str:
    try:
        return raw.decode("utf-8")
    except UnicodeDecodeError as exc:
        line = raw.count(b"\n", 0, exc.start) + 1
        column = exc.start - (raw.rfind(b"\n", 0, exc.start) + 1) + 1
        raise InputError([Problem(name, Location(line, column), "", "the file is not UTF-8 text")]) from None


def load_document(path: Path, display_name: str | None = None) -> Document:
    """Read and parse one YAML input file.

    Raises
    ------
    InputError
        When the file cannot be read, is not UTF-8, is not well-formed YAML, is empty, holds more than one
        YAML document, uses non-standard tags, or writes a key twice. Every problem carries its location.
    """
    name = display_name or str(path)
    try:
        raw = path.read_bytes()
    except OSError as exc:
        raise InputError([Problem(name, None, "", f"cannot read the file ({exc.strerror or exc})")]) from None
    text = _decode(raw, name)
    document = Document(Path(name), None, hashlib.sha256(raw).hexdigest())
    try:
        root = yaml.compose(text, Loader=_CoreSchemaLoader)
    except yaml.MarkedYAMLError as exc:
        mark = exc.problem_mark or exc.context_mark
        location = _location(mark) if mark else None
        detail = " ".join(part for part in (exc.context, exc.problem) if part)
        raise InputError([Problem(name, location, "", f"not valid YAML: {detail}")]) from None
    except yaml.YAMLError as exc:
        raise InputError([Problem(name, None, "", f"not valid YAML: {exc}")]) from None
    if root is None:
        raise InputError([Problem(name, Location(1, 1), "", "the file is empty")])
    converter = _Converter(document)
    document.data = converter.convert(root, ())
    if converter.problems:
        raise InputError(converter.problems)
    return document
