"""``--set PATH=VALUE``: a field of the design changed for one run, before validation, without touching the file.

PATH is dotted: mapping keys by name (``conditions.bus_voltage``, ``devices.demo-sj650.ratings.v_ds_max``),
entries of a list by their ``ref`` (``switches.Q2.gate_drive.r_off``, ``capacitors.C1.rated_voltage``) or by
index (``switches[1].gate_drive.r_off``, ``switches.Q2.soa_points[0].i_d``). VALUE is YAML read by the rules
of the design file (``"1 nH"``, ``{nominal: 25 nH, tolerance: 10 %}``, ``shared``); an empty VALUE removes the
field. The changed document is then validated and built like the file itself, so every check applies, and a
problem in an overridden field names the override instead of a line of the file.
"""

from __future__ import annotations

import copy
import json
import re
from dataclasses import dataclass
from typing import Any, Iterable, Sequence

from margincheck.errors import InputError, Problem, closest_name_hint, format_path
from margincheck.loading import DEFAULT_LIMITS, DocPath, Document, Limits, parse_value

__all__ = ["AppliedOverride", "Override", "attribute_problems", "apply_overrides", "parse_overrides",
           "shown_value"]

_PATH = re.compile(r"(?:[^.\[\]]+|\[\d+\])(?:\.[^.\[\]]+|\[\d+\])*")
_STEP = re.compile(r"([^.\[\]]+)|\[(\d+)\]")
_EXAMPLE = 'e.g. --set switches.Q2.gate_drive.r_off="2.2 ohm"'


@dataclass(frozen=True)
class Override:
    """One ``--set`` as given: its text, its PATH as steps (names, and indices written ``[n]``), its VALUE
    (None with ``remove``: the field is taken out)."""

    text: str
    steps: tuple[str | int, ...]
    value: Any
    remove: bool = False

    @property
    def origin(self) -> str:
        """How a message names the override: ``--set PATH=VALUE``."""
        return f"--set {self.text}"


@dataclass(frozen=True)
class AppliedOverride:
    """An override as applied to one design: the field it changed (``path``, refs resolved to indices) and what
    the file held there (None: the file does not write the field)."""

    text: str
    path: DocPath
    file_value: Any

    @property
    def file_text(self) -> str | None:
        """What the file writes at the field, as text (None: nothing)."""
        return None if self.file_value is None else shown_value(self.file_value)


def _parse_override(text: str, limits: Limits) -> Override:
    path_text, separator, value_text = text.partition("=")
    path_text = path_text.strip()
    origin = f"--set {text}"
    if not separator or not _PATH.fullmatch(path_text):
        raise InputError([Problem(origin, None, "", f"expected PATH=VALUE with a dotted PATH, {_EXAMPLE}")])
    steps = tuple(name if name else int(index) for name, index in _STEP.findall(path_text))
    try:
        value = parse_value(value_text, origin, limits)
    except InputError as error:  # located within VALUE, which has no lines of its own worth naming
        raise InputError([Problem(origin, None, path_text, f"VALUE: {problem.message}")
                          for problem in error.problems]) from None
    return Override(text, steps, value, remove=not value_text.strip())


def parse_overrides(texts: Iterable[str], limits: Limits = DEFAULT_LIMITS) -> tuple[Override, ...]:
    """Every ``PATH=VALUE`` text parsed; all malformed ones reported together.

    Raises
    ------
    InputError
        One problem per text that is not ``PATH=VALUE`` with a well-formed PATH and VALUE.
    """
    overrides, problems = [], []
    for text in texts:
        try:
            overrides.append(_parse_override(text, limits))
        except InputError as error:
            problems.extend(error.problems)
    if problems:
        raise InputError(problems)
    return tuple(overrides)


def shown_value(value: Any) -> str:
    """A document value as text: a string as it is, anything else as JSON (``{"nominal": "25 nH"}``)."""
    return value if isinstance(value, str) else json.dumps(value, ensure_ascii=False)


class _Unreachable(Exception):
    """PATH leads nowhere in this document; the message says why."""


def _names_at(steps: Sequence[str | int]) -> list[str]:
    """The candidate names at the head of ``steps``, longest first: a name may itself hold dots (a device
    called ``sj.650`` is ``devices.sj.650``), so ``a.b.c`` tries ``a.b.c``, ``a.b``, then ``a``."""
    run = 0
    while run < len(steps) and isinstance(steps[run], str):
        run += 1
    return [".".join(steps[:length]) for length in range(run, 0, -1)]


def _in_mapping(node: dict, steps: Sequence[str | int], where: DocPath) -> tuple[str, int]:
    if isinstance(steps[0], int):
        raise _Unreachable(f"{format_path(where) or 'the design'} is a mapping: name a field, not [{steps[0]}]")
    names = _names_at(steps)
    name = next((name for name in names if name in node), names[-1])
    return name, name.count(".") + 1


def _in_list(node: list, steps: Sequence[str | int], where: DocPath) -> tuple[int, int]:
    place = format_path(where) or "the design"
    if isinstance(steps[0], int):
        if steps[0] >= len(node):
            raise _Unreachable(f"{place} has {len(node)} entries; [{steps[0]}] is not one of them")
        return steps[0], 1
    refs = {entry["ref"]: index for index, entry in enumerate(node)
            if isinstance(entry, dict) and isinstance(entry.get("ref"), str)}
    for name in _names_at(steps):
        if name in refs:
            return refs[name], name.count(".") + 1
    if not refs:
        raise _Unreachable(f"{place} is a list without refs: address its entries by index, e.g. {place}[0]")
    raise _Unreachable(f'{place} has no entry with ref "{steps[0]}"{closest_name_hint(steps[0], list(refs), "refs")}')


def _not_a_container(node: Any, where: DocPath, written: str) -> _Unreachable:
    place = format_path(where)
    if len(where) == 2 and where[0] == "devices" and isinstance(node, str):
        return _Unreachable(f'{place} is a device file ("{node}"), which --set does not change: write the '
                            "device inline in a copy of the design, or edit a copy of the device file")
    return _Unreachable(f"{place} is a single value ({shown_value(node)}), not a mapping or a list: set it whole, "
                        f"--set {written}=VALUE")


def _apply(data: Any, override: Override) -> AppliedOverride:
    """Change ``data`` in place at the override's PATH; intermediate mappings are made as needed."""
    node, where, steps = data, (), override.steps
    while True:
        if isinstance(node, dict):
            key, used = _in_mapping(node, steps, where)
        elif isinstance(node, list):
            key, used = _in_list(node, steps, where)
        else:
            written = format_path(override.steps[:len(override.steps) - len(steps)])
            raise _not_a_container(node, where, written)
        where, steps = where + (key,), steps[used:]
        if not steps:
            return _set(node, key, where, override)
        if isinstance(node, dict) and key not in node:
            node[key] = {} if isinstance(steps[0], str) else []
        node = node[key]


def _set(container: dict | list, key: str | int, where: DocPath, override: Override) -> AppliedOverride:
    present = isinstance(container, list) or key in container
    applied = AppliedOverride(override.text, where, copy.deepcopy(container[key]) if present else None)
    if not override.remove:
        container[key] = copy.deepcopy(override.value)  # one Override may be applied to two designs
    elif isinstance(container, list):
        raise _Unreachable(f"{format_path(where)} is an entry of a list, which --set cannot remove")
    else:
        container.pop(key, None)
    return applied


def apply_overrides(document: Document, overrides: Sequence[Override]) -> tuple[AppliedOverride, ...]:
    """Apply ``overrides`` in order to ``document.data`` (in memory: the file is never written).

    Raises
    ------
    InputError
        For every override whose PATH leads nowhere in this document (an unknown ref, an index past the end,
        a step into a single value or into a device file), named ``FILE (--set PATH=VALUE)``.
    """
    applied, problems = [], []
    for override in overrides:
        try:
            applied.append(_apply(document.data, override))
        except _Unreachable as error:
            problems.append(Problem(f"{document.name} ({override.origin})", None, "", str(error)))
    if problems:
        raise InputError(problems)
    return tuple(applied)


def _within(path: str, field: str) -> bool:
    return path == field or path.startswith((field + ".", field + "["))


def attribute_problems(problems: Iterable[Problem], document_name: str,
                       applied: Sequence[AppliedOverride]) -> list[Problem]:
    """``problems`` with every one inside an overridden field of ``document_name`` named after the (last)
    override that wrote it, ``FILE (--set PATH=VALUE): path: message``, since no line of the file holds it."""
    fields = [(format_path(item.path), item.text) for item in reversed(applied)]
    named = []
    for problem in problems:
        text = next((text for field, text in fields if problem.file == document_name and _within(problem.path, field)),
                    None)
        named.append(problem if text is None else
                     Problem(f"{problem.file} (--set {text})", None, problem.path, problem.message))
    return named
