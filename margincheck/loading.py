"""Read a YAML input file into plain data, keeping the line and column of every node.

Only the YAML 1.2 core schema is resolved: ``on``, ``off``, ``yes`` and ``no`` stay strings (they are keys of
the design format), ``012`` is twelve, ``1:20`` is a string, dates stay strings. Only the standard tags are
accepted, so no object can be constructed from the file. A key written twice is an error naming both lines.
"""

from __future__ import annotations

import hashlib
import os
import re
import stat
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import yaml

from margincheck.errors import InputError, Location, Problem, format_path

__all__ = ["DEFAULT_LIMITS", "DocPath", "Document", "Limits", "load_document", "parse_value"]

DocPath = tuple[str | int, ...]


@dataclass(frozen=True)
class Limits:
    """Bounds on what one input file may cost to read, so that a hostile file is refused quickly and in
    bounded memory: its size, its nesting depth, its aliases, and its values after alias expansion."""

    max_bytes: int = 1 << 20
    max_depth: int = 32
    max_aliases: int = 100
    max_values: int = 20_000


DEFAULT_LIMITS = Limits()

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


class _TooManyValues(Exception):
    """Alias expansion went past the limit on values; conversion stops at once."""


class _Converter:
    """Turn a composed node tree into plain data, recording locations and collecting problems."""

    def __init__(self, document: Document, limits: Limits):
        self.document = document
        self.limits = limits
        self.problems: list[Problem] = []
        self._active: set[int] = set()
        self._values = 0

    def fail(self, node: yaml.Node, path: DocPath, message: str) -> None:
        self.problems.append(Problem(self.document.name, _location(node.start_mark), format_path(path), message))

    def convert(self, node: yaml.Node, path: DocPath) -> Any:
        self._values += 1
        if self._values > self.limits.max_values:
            raise _TooManyValues
        self.document.locations[path] = _location(node.start_mark)
        if id(node) in self._active:
            self.fail(node, path, "an alias refers to the node that contains it")
            return None
        allowed = {"scalar": ("str", "null", "bool", "int", "float"), "sequence": ("seq",), "mapping": ("map",)}
        if node.tag not in [_TAG + name for name in allowed[node.id]]:
            self.fail(node, path, f'YAML tag "{node.tag}" is not allowed; write plain values')
            return None
        if isinstance(node, yaml.ScalarNode):
            try:
                return _scalar(node)
            except ValueError:  # Python refuses integers longer than sys.get_int_max_str_digits() digits
                self.fail(node, path, f"a number of {len(node.value)} characters is too long to read; write it "
                                      "with an exponent (1e30) or as text")
                return None
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


def _problem(name: str, location: Location | None, message: str) -> InputError:
    return InputError([Problem(name, location, "", message)])


def _read_bytes(path: Path, name: str, limits: Limits) -> bytes:
    """The file's bytes, refusing anything but a regular file within the size limit."""
    try:
        # Non-blocking, so that a named pipe or a device is refused at once instead of hanging the open; the
        # flag changes nothing for the regular file that is then read.
        descriptor = os.open(path, os.O_RDONLY | getattr(os, "O_NONBLOCK", 0) | getattr(os, "O_NOCTTY", 0))
        with os.fdopen(descriptor, "rb") as stream:
            if not stat.S_ISREG(os.fstat(stream.fileno()).st_mode):
                raise _problem(name, None, "not a regular file")
            raw = stream.read(limits.max_bytes + 1)
    except OSError as exc:
        raise _problem(name, None, f"cannot read the file ({exc.strerror or exc})") from None
    if len(raw) > limits.max_bytes:
        raise _problem(name, None, f"the file is larger than the input limit of {limits.max_bytes} bytes "
                                   "(--max-input-bytes raises it)")
    return raw


def _decode(raw: bytes, name: str) -> str:
    try:
        text = raw.decode("utf-8")
    except UnicodeDecodeError as exc:
        line = raw.count(b"\n", 0, exc.start) + 1
        column = exc.start - (raw.rfind(b"\n", 0, exc.start) + 1) + 1
        raise _problem(name, Location(line, column), "the file is not UTF-8 text") from None
    tab = text.find("\t")
    if tab >= 0:
        line = text.count("\n", 0, tab) + 1
        column = tab - (text.rfind("\n", 0, tab) + 1) + 1
        raise _problem(name, Location(line, column), "a tab character; indent and separate with spaces")
    return text


def _check_structure(text: str, name: str, limits: Limits) -> None:
    """Walk the parser's events (streaming, no tree built) to refuse deep nesting and alias floods early."""
    depth = aliases = 0
    for event in yaml.parse(text, Loader=_CoreSchemaLoader):
        if isinstance(event, yaml.CollectionStartEvent):
            depth += 1
            if depth > limits.max_depth:
                raise _problem(name, _location(event.start_mark),
                               f"nesting is deeper than the limit of {limits.max_depth} levels")
        elif isinstance(event, yaml.CollectionEndEvent):
            depth -= 1
        elif isinstance(event, yaml.AliasEvent):
            aliases += 1
            if aliases > limits.max_aliases:
                raise _problem(name, _location(event.start_mark),
                               f"more than {limits.max_aliases} aliases; write the values out instead")


def _compose(text: str, name: str, limits: Limits) -> yaml.Node | None:
    try:
        _check_structure(text, name, limits)
        return yaml.compose(text, Loader=_CoreSchemaLoader)
    except yaml.MarkedYAMLError as exc:
        mark = exc.problem_mark or exc.context_mark
        detail = " ".join(part for part in (exc.context, exc.problem) if part)
        raise _problem(name, _location(mark) if mark else None, f"not valid YAML: {detail}") from None
    except yaml.YAMLError as exc:
        raise _problem(name, None, f"not valid YAML: {type(exc).__name__}") from None


def load_document(path: Path, display_name: str | None = None, limits: Limits = DEFAULT_LIMITS) -> Document:
    """Read and parse one YAML input file, within ``limits``.

    Raises
    ------
    InputError
        When the file cannot be read, is not a regular file, is over the size limit, is not UTF-8, holds a
        tab, is not well-formed YAML, nests too deep, uses too many aliases or expands past the value limit,
        is empty, holds more than one YAML document, uses non-standard tags, or writes a key twice. Every
        problem carries its location; no message quotes more of a refused file than its position.
    """
    name = display_name or str(path)
    raw = _read_bytes(path, name, limits)
    text = _decode(raw, name)
    root = _compose(text, name, limits)
    if root is None:
        raise _problem(name, Location(1, 1), "the file is empty")
    document = Document(Path(name), None, hashlib.sha256(raw).hexdigest())
    converter = _Converter(document, limits)
    try:
        document.data = converter.convert(root, ())
    except _TooManyValues:
        raise _problem(name, Location(1, 1), f"the document expands to more than {limits.max_values} values "
                                             "(alias expansion); refused") from None
    if converter.problems:
        raise InputError(converter.problems)
    return document


def parse_value(text: str, name: str, limits: Limits = DEFAULT_LIMITS) -> Any:
    """A value written outside any file (``--set PATH=VALUE``), read by the rules of an input file: YAML 1.2
    core schema, standard tags only, a key once, within ``limits``. Empty text is None.

    Raises
    ------
    InputError
        When the text is not well-formed YAML or breaks a rule of :func:`load_document`; the problems are
        reported under ``name``, located within the text.
    """
    if len(text.encode("utf-8", "surrogatepass")) > limits.max_bytes:
        raise _problem(name, None, f"the value is longer than the input limit of {limits.max_bytes} bytes")
    root = _compose(text, name, limits)
    if root is None:
        return None
    converter = _Converter(Document(Path(name), None, ""), limits)
    try:
        value = converter.convert(root, ())
    except _TooManyValues:
        raise _problem(name, None, f"the value expands to more than {limits.max_values} values") from None
    if converter.problems:
        raise InputError(converter.problems)
    return value
