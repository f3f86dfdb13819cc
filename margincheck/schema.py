"""Validate documents against the shipped JSON Schemas and turn every violation into a located problem.

The schemas are plain JSON Schema (draft 2020-12) plus one keyword of ours, ``quantity``: its value names a
quantity kind (``"voltage"``) or a tolerance of one (``"voltage tolerance"``), and it checks that the
value is a string that parses with a unit of that dimension. Editors that do not know the keyword ignore it.
"""

from __future__ import annotations

import ast
import datetime
import difflib
import json
import re
from functools import cache
from importlib import resources
from typing import Any, Iterator

import jsonschema
import referencing
import referencing.jsonschema
from jsonschema.exceptions import ValidationError

from margincheck.errors import Problem, format_path
from margincheck.loading import Document
from margincheck.units import QuantityError, parse_quantity, parse_tolerance

__all__ = ["SCHEMA_FILES", "schema_text", "validate"]

#: Schema file for each kind of input file.
SCHEMA_FILES = {"design": "design.schema.json", "device": "device.schema.json", "policy": "policy.schema.json"}

_TOLERANCE_SUFFIX = " tolerance"
_READS = " (the only version of this file format that this release reads)"


def schema_text(kind: str = "design") -> str:
    """The text of a shipped schema file, as installed with the package."""
    return resources.files("margincheck").joinpath("schemas").joinpath(SCHEMA_FILES[kind]).read_text(encoding="utf-8")


def _quantity_keyword(validator: Any, kind: str, instance: Any, schema: dict) -> Iterator[ValidationError]:
    """The ``quantity`` keyword: the instance must be a quantity string of the named kind."""
    try:
        if kind.endswith(_TOLERANCE_SUFFIX):
            parse_tolerance(instance, kind.removesuffix(_TOLERANCE_SUFFIX))
        else:
            parse_quantity(instance, kind)
    except QuantityError as exc:
        yield ValidationError(str(exc))


@cache
def _validator(kind: str) -> jsonschema.protocols.Validator:
    # The "$schema" member is dropped so that a $ref keeps our extended validator instead of switching to
    # the plain draft-2020-12 one that the member names (which does not know the quantity keyword).
    draft = referencing.jsonschema.DRAFT202012
    resources_by_uri = []
    for name, file_name in SCHEMA_FILES.items():
        contents = {key: value for key, value in json.loads(schema_text(name)).items() if key != "$schema"}
        resources_by_uri.append((file_name, draft.create_resource(contents)))
    registry = referencing.Registry().with_resources(resources_by_uri)
    cls = jsonschema.validators.extend(jsonschema.Draft202012Validator, {"quantity": _quantity_keyword})
    return cls({"$ref": SCHEMA_FILES[kind]}, registry=registry)


def _describe(instance: Any) -> str:
    names = {dict: "a mapping", list: "a list", str: "text", bool: "a boolean", int: "a number",
             float: "a number", type(None): "nothing"}
    shown = names.get(type(instance), type(instance).__name__)
    if isinstance(instance, (str, int, float)) and not isinstance(instance, bool):
        return f"{shown} ({json.dumps(instance)})"
    return shown


_TYPE_NAMES = {"object": "a mapping", "array": "a list", "string": "text", "number": "a number",
               "integer": "a whole number", "boolean": "true or false", "null": "nothing"}


def _unknown_keys(error: ValidationError) -> list[str]:
    known = error.schema.get("properties", {})
    return [key for key in error.instance if key not in known]


def _problems_for(error: ValidationError, document: Document) -> list[Problem]:
    """One or more located problems for one schema violation."""
    path = tuple(error.absolute_path)
    validator = error.validator
    if validator == "additionalProperties":
        known = sorted(error.schema.get("properties", {}))
        problems = []
        for key in _unknown_keys(error):
            guess = difflib.get_close_matches(key, known, n=1)
            hint = f'; did you mean "{guess[0]}"?' if guess else ""
            allowed = f" (allowed here: {', '.join(known)})" if known else ""
            problems.append(document.problem(path + (key,), f"unknown field{hint}{allowed}", at_key=True))
        return problems
    if validator == "required":
        missing = ast.literal_eval(error.message.removesuffix(" is a required property"))
        location = document.key_location_of(path)
        return [Problem(document.name, location, format_path(path + (missing,)), _missing_message(error, missing))]
    expected, got = error.validator_value, _describe(error.instance)
    entries = f"needs at least {expected} entr{'y' if expected == 1 else 'ies'}"
    messages = {
        "type": lambda: f"expected {_type_phrase(expected)}, got {got}",
        "enum": lambda: f"expected one of {', '.join(map(str, expected))}; got {got}",
        "const": lambda: f'expected "{expected}"{_READS if path == ("format",) else ""}, got {got}',
        "minItems": lambda: entries,
        "minProperties": lambda: entries,
        "pattern": lambda: _pattern_message(error, got),
        "dependentRequired": lambda: "a tolerance needs a nominal value beside it",
    }
    message = messages.get(validator, lambda: error.message)()
    if validator == "pattern" and error.schema_path and "propertyNames" in error.schema_path:
        return [document.problem(path + (error.instance,), f"name {message}", at_key=True)]
    return [document.problem(path, message, at_key=validator == "minProperties")]


#: What a field of each pattern holds, said to a user whose text does not match it (other patterns: names).
_ISO_DATE = "^[0-9]{4}-[0-9]{2}-[0-9]{2}$"
_RULE_ID = "^[a-z][a-z0-9-]{0,63}$"
_NAME_CHARACTERS = "letters, digits and _.:/+- only"


def _pattern_message(error: ValidationError, got: str) -> str:
    """Why text does not match its field's pattern, and how it is written."""
    if error.validator_value == _ISO_DATE:
        return f"dates are written YYYY-MM-DD ({_iso_date_hint(error.instance)}), got {got}"
    if error.validator_value == _RULE_ID:
        return f"rule ids are lower-case letters, digits and - (e.g. turn-off-overshoot), got {got}"
    return f"{got} is not allowed here ({_NAME_CHARACTERS})"


_DATE_PARTS = re.compile(r"^\s*(\d{1,4})\s*[./ -]\s*(\d{1,2})\s*[./ -]\s*(\d{1,4})\s*$")


def _iso_date_hint(text: str) -> str:
    """``write 2027-12-31`` for a date in another common order whose day and month cannot be confused (31.12.2027,
    12/31/2027, 2027.12.31), else an example: a guessed month must never move an expiry date."""
    parts = _DATE_PARTS.match(text)
    example = "e.g. 2027-12-31"
    if parts is None:
        return example
    first, second, third = parts.groups()
    year, day_and_month = (first, (second, third)) if len(first) == 4 else (third, (first, second))
    if len(year) != 4:
        return example
    low, high = sorted(int(part) for part in day_and_month)
    if low != high and high <= 12:  # 01/02/2027: January 2 or February 1?
        return example
    try:
        return f"write {datetime.date(int(year), low, high).isoformat()}"
    except ValueError:
        return example


def _missing_message(error: ValidationError, missing: str) -> str:
    """"required field is missing", with the allowed values when the field takes one of a few words."""
    field = error.schema.get("properties", {}).get(missing, {})
    if "const" in field:
        return f'required field is missing; expected "{field["const"]}"'
    if "enum" not in field:
        return "required field is missing"
    described = f" ({field['description']})" if "description" in field else ""
    return f"required field is missing; expected {' | '.join(map(str, field['enum']))}{described}"


def _type_phrase(expected: str | list[str]) -> str:
    options = [expected] if isinstance(expected, str) else expected
    return " or ".join(_TYPE_NAMES.get(option, option) for option in options)


def validate(document: Document, kind: str = "design") -> list[Problem]:
    """Every schema problem of ``document`` (empty when it validates), each with its file, line and column."""
    problems: list[Problem] = []
    for error in _validator(kind).iter_errors(document.data):
        problems.extend(_problems_for(error, document))
    return sorted(problems, key=Problem.sort_key)
