"""Quantities at the edges: parse unit strings into SI floats, and format SI floats for display.

This module and the reporters are the only places that touch pint. Everything between works on plain SI
floats (volt, ampere, henry, ohm, farad, kelvin, second...).

A quantity string is ``"<number> <unit>"``. The number is split off before pint sees the unit, so offset
units work as written (``"-20 degC"``), which pint's expression parser would read as ``-(20 degC)`` and refuse.
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass
from functools import cache, lru_cache
from importlib import resources

import pint

__all__ = [
    "KINDS",
    "Kind",
    "QuantityError",
    "Tolerance",
    "format_value",
    "parse_quantity",
    "parse_tolerance",
    "to_display",
    "with_prefix",
]


class QuantityError(ValueError):
    """A quantity string that cannot be read, or has the wrong dimension."""


@dataclass(frozen=True)
class Kind:
    """One physical quantity kind: its SI unit, the unit it is shown in, and how to name it to a user."""

    si_unit: str
    display_unit: str
    noun: str
    example: str


#: Quantity kinds by name. The names are the values of the schema's ``quantity`` keyword.
KINDS: dict[str, Kind] = {
    "voltage": Kind("V", "V", "a voltage", "400 V"),
    "current": Kind("A", "A", "a current", "40 A"),
    "inductance": Kind("H", "nH", "an inductance", "25 nH"),
    "resistance": Kind("ohm", "ohm", "a resistance", "2.2 ohm"),
    "capacitance": Kind("F", "nF", "a capacitance", "2.5 nF"),
    "conductance": Kind("S", "S", "a transconductance", "20 S"),
    "frequency": Kind("Hz", "kHz", "a frequency", "40 kHz"),
    "temperature": Kind("K", "degC", "a temperature", "90 degC"),
    "temperature_difference": Kind("K", "K", "a temperature difference", "25 K"),
    "current_slew_rate": Kind("A/s", "A/ns", "a current slew rate", "6 A/ns"),
    "voltage_slew_rate": Kind("V/s", "V/ns", "a voltage slew rate", "50 V/ns"),
    "charge": Kind("C", "nC", "a charge", "30 nC"),
    "temperature_coefficient": Kind("V/K", "mV/K", "a temperature coefficient", "-5 mV/K"),
    "energy": Kind("J", "J", "an energy", "8.8 J"),
    "time": Kind("s", "ns", "a time", "50 ns"),
    "power": Kind("W", "W", "a power", "25 W"),
    "thermal_resistance": Kind("K/W", "K/W", "a thermal resistance", "0.45 K/W"),
    "relative_temperature_coefficient": Kind("1/K", "%/K", "a relative temperature coefficient", "0.4 %/K"),
    "altitude": Kind("m", "m", "an altitude", "2000 m"),
    "failure_rate": Kind("1/s", "FIT", "a failure rate", "100 FIT"),
    "dimensionless": Kind("", "", "a plain number", "0.8"),
    "curve_scale": Kind("", "x curve", "a factor on a curve", "0.9"),
}

_NUMBER_AND_UNIT = re.compile(
    r"^\s*(?P<number>[-+]?(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][-+]?\d+)?)\s*(?P<unit>.*?)\s*$"
)


@lru_cache(maxsize=1)
def registry() -> pint.UnitRegistry:
    """The unit registry, built once from margincheck's own small definitions file."""
    definitions = resources.files("margincheck").joinpath("units.txt")
    with resources.as_file(definitions) as path:
        return pint.UnitRegistry(str(path), autoconvert_offset_to_baseunit=False)


def _describe(raw: object) -> str:
    if isinstance(raw, bool):
        return f"the boolean {str(raw).lower()}"
    if isinstance(raw, (int, float)):
        return f"the bare number {raw!r}"
    if raw is None:
        return "nothing"
    if isinstance(raw, str):
        return f'"{raw}"'
    return f"a {type(raw).__name__}"


def _expectation(kind_name: str) -> str:
    kind = KINDS[kind_name]
    return f'expected {kind.noun} such as "{kind.example}"'


def _split(raw: object, kind_name: str) -> tuple[float, str]:
    """Split a quantity string into its number and unit text, or raise QuantityError."""
    if not isinstance(raw, str) or isinstance(raw, bool):
        hint = " (a unit is required)" if isinstance(raw, (int, float)) and not isinstance(raw, bool) else ""
        raise QuantityError(f"{_expectation(kind_name)}, got {_describe(raw)}{hint}")
    match = _NUMBER_AND_UNIT.match(raw)
    if match is None:
        raise QuantityError(f"{_expectation(kind_name)}, got {_describe(raw)} (no number in front)")
    number = float(match["number"])
    if not math.isfinite(number):
        raise QuantityError(f"{_expectation(kind_name)}, got {_describe(raw)} (the number is not finite)")
    return number, match["unit"]


@cache
def _parsed_units(unit_text: str) -> pint.Unit:
    """Unit text parsed once per distinct spelling (parsing dominates the cost of reading a design)."""
    return registry().parse_units(unit_text)


_UNIT_TEXT = re.compile(r"^[A-Za-z\u00b5\u03bc\u03a9\u00b0%0-9 */^().-]{1,40}$")


def _units(unit_text: str, raw: str, kind_name: str) -> pint.Unit:
    try:
        if not _UNIT_TEXT.match(unit_text):
            raise ValueError(unit_text)
        return _parsed_units(unit_text)
    except Exception as exc:  # pint's parser fails on odd text in many ways (tokenize errors, even assertions)
        raise QuantityError(
            f'{_expectation(kind_name)}, got "{raw}" (unknown unit "{unit_text}")'
        ) from exc


def _bare_number(raw: int | float, kind_name: str) -> float:
    """A bare number where the quantity is dimensionless (design.md section 3), finite."""
    value = float(raw) if abs(raw) < 1e300 else math.inf  # float() of a huge YAML integer would overflow
    if not math.isfinite(value):
        raise QuantityError(f"{_expectation(kind_name)}, got {_describe(raw)} (the number is not finite)")
    return value


def parse_quantity(raw: object, kind_name: str) -> float:
    """Read a quantity string such as ``"25 nH"`` as a float in the SI unit of its kind (or a bare number, for a
    kind without a unit: a plain number, a factor).

    Raises
    ------
    QuantityError
        When ``raw`` is not a string, has no number, has an unknown unit, or a unit of another dimension.
        The message says what was expected (with an example) and what was received.
    """
    kind = KINDS[kind_name]
    if not kind.si_unit and isinstance(raw, (int, float)) and not isinstance(raw, bool):
        return _bare_number(raw, kind_name)
    number, unit_text = _split(raw, kind_name)
    if not unit_text:
        if kind_name == "dimensionless":
            return number
        raise QuantityError(f'{_expectation(kind_name)}, got "{raw}" (a unit is required)')
    units = _units(unit_text, str(raw), kind_name)
    ureg = registry()
    if kind_name == "temperature_difference" and units in (ureg.degC, ureg.kelvin):
        return number  # a difference of 1 degC is 1 K; "5 degC" here means a span of 5 K
    target = _parsed_units(kind.si_unit) if kind.si_unit else ureg.dimensionless
    if units.dimensionality != target.dimensionality:
        raise QuantityError(f'{_expectation(kind_name)}, got "{raw}"')
    value = float(ureg.Quantity(number, units).to(target).magnitude)
    if not math.isfinite(value):
        raise QuantityError(f'{_expectation(kind_name)}, got "{raw}" (out of the floating-point range)')
    return value


@dataclass(frozen=True)
class Tolerance:
    """A symmetric tolerance: a fraction of the nominal value, or an absolute span in SI units."""

    value: float
    relative: bool

    def span(self, nominal: float) -> float:
        """Half-width of the interval around ``nominal`` [SI unit of the nominal]."""
        return abs(nominal) * self.value if self.relative else self.value


#: A sign in front of a tolerance: ``±``, ``+-`` or ``+/-`` (a tolerance is symmetric, so it takes none), or a
#: lone ``+`` (a spread on one side, which min and max express).
_SIGNED = re.compile(r"^\s*(?:\u00b1|\+\s*/?\s*-|\+)\s*(?P<rest>.*)$")

_UNEQUAL_SPREAD = ("for a spread that is unequal or on one side only, give min and max (or min, nominal and max) "
                   "instead of a tolerance")


def _tolerance_with_unit(number: str, kind_name: str) -> str:
    """A tolerance of ``number`` written with a unit: a percentage, or kelvin on a temperature."""
    return f"{number} K" if kind_name == "temperature" else f"{number} %"


def _bare_tolerance_number(raw: object) -> str | None:
    """The number of a tolerance written without a unit (``10`` or ``"10"``) as written, else None."""
    if isinstance(raw, (int, float)) and not isinstance(raw, bool):
        return repr(raw) if abs(raw) < 1e300 and math.isfinite(raw) else None
    match = _NUMBER_AND_UNIT.match(raw) if isinstance(raw, str) else None
    return match["number"] if match and not match["unit"] and math.isfinite(float(match["number"])) else None


def _sign_free(rest: str, kind_name: str) -> str | None:
    """The tolerance written after a sign, as it should be written (``"20%"`` -> ``"20 %"``), or None when that
    is no tolerance of this kind either."""
    number = _bare_tolerance_number(rest)
    match = _NUMBER_AND_UNIT.match(rest)
    written = _tolerance_with_unit(number, kind_name) if number else match and f"{match['number']} {match['unit']}"
    try:
        parse_tolerance(written, kind_name)
    except QuantityError:
        return None
    return written


def _refuse_misread_tolerance(raw: object, kind_name: str) -> None:
    """Refuse, with the form to write, a tolerance whose meaning would be a guess: one written with a sign
    (``"±20 %"``, ``"+/-20 %"``, ``"+20 %"``) or without its unit (``10``: a percentage? volts?)."""
    difference_kind = "temperature_difference" if kind_name == "temperature" else kind_name
    kind = KINDS[difference_kind]
    number = _bare_tolerance_number(raw)
    if number is not None:
        absolute = "" if not kind.si_unit or kind_name == "temperature" else \
            f' for a percentage, or {kind.noun} such as "{kind.example}"'
        raise QuantityError(f'a tolerance needs its unit: write "{_tolerance_with_unit(number, kind_name)}"'
                            f"{absolute}; got {_describe(raw)}")
    signed = _SIGNED.match(raw) if isinstance(raw, str) else None
    if signed is None:
        return
    written = _sign_free(signed["rest"], kind_name)
    fix = f' write "{written}";' if written else ""
    raise QuantityError(f"a tolerance applies both ways (nominal \u00b1 tolerance) and is written without a sign:"
                        f'{fix} {_UNEQUAL_SPREAD}; got "{raw}"')


def parse_tolerance(raw: object, kind_name: str) -> Tolerance:
    """Read a tolerance: a percentage (``"5 %"``) or an absolute quantity of the nominal's kind.

    A tolerance on a temperature must be a temperature difference (``"5 K"``): a percentage of an
    offset scale such as degC has no physical meaning, and is refused. A tolerance written with a sign
    (``"±5 %"``) or without a unit (``5``) is refused with the form to write.
    """
    _refuse_misread_tolerance(raw, kind_name)
    _, unit_text = _split(raw, kind_name)
    if unit_text in ("%", "percent", "ppm"):
        if kind_name == "temperature":
            raise QuantityError(
                f'a tolerance on a temperature must be a temperature difference such as "5 K", got "{raw}"'
            )
        return Tolerance(parse_quantity(raw, "dimensionless"), relative=True)
    difference_kind = "temperature_difference" if kind_name == "temperature" else kind_name
    try:
        value = parse_quantity(raw, difference_kind)
    except QuantityError:
        kind = KINDS[difference_kind]
        raise QuantityError(
            f'expected a tolerance such as "5 %" or {kind.noun} such as "{kind.example}", got {_describe(raw)}'
        ) from None
    return Tolerance(value, relative=False)


@cache
def _display_conversion(kind_name: str) -> tuple[float, float]:
    """Scale and offset taking an SI value of this kind to its display unit: display = scale·si + offset."""
    kind = KINDS[kind_name]
    if not kind.si_unit:
        return 1.0, 0.0
    ureg = registry()
    zero = ureg.Quantity(0.0, kind.si_unit).to(kind.display_unit).magnitude
    one = ureg.Quantity(1.0, kind.si_unit).to(kind.display_unit).magnitude
    return float(one - zero), float(zero)


def to_display(value_si: float, kind_name: str) -> float:
    """Convert an SI value to the display unit of its kind (e.g. henry to nH, kelvin to degC)."""
    scale, offset = _display_conversion(kind_name)
    return value_si * scale + offset


#: Units a text display may choose from per value, smallest scale first: (scale from SI, unit). The value is
#: shown in the largest unit it reaches (109.5 MHz, not 109475 kHz), or in the smallest unit below that
#: (inductances stay in nH at the least, as the trade writes them). Kinds not listed keep one display unit.
_SCALED_UNITS: dict[str, tuple[tuple[float, str], ...]] = {
    "voltage": ((1e-3, "mV"), (1.0, "V"), (1e3, "kV")),
    "current": ((1e-6, "uA"), (1e-3, "mA"), (1.0, "A"), (1e3, "kA")),
    "inductance": ((1e-9, "nH"), (1e-6, "uH"), (1e-3, "mH"), (1.0, "H")),
    "resistance": ((1e-3, "mohm"), (1.0, "ohm"), (1e3, "kohm"), (1e6, "Mohm")),
    "capacitance": ((1e-12, "pF"), (1e-9, "nF"), (1e-6, "uF"), (1e-3, "mF"), (1.0, "F")),
    "conductance": ((1e-3, "mS"), (1.0, "S")),
    "frequency": ((1.0, "Hz"), (1e3, "kHz"), (1e6, "MHz"), (1e9, "GHz")),
    "current_slew_rate": ((1e3, "A/ms"), (1e6, "A/us"), (1e9, "A/ns")),
    "voltage_slew_rate": ((1e3, "V/ms"), (1e6, "V/us"), (1e9, "V/ns")),
    "charge": ((1e-12, "pC"), (1e-9, "nC"), (1e-6, "uC"), (1e-3, "mC")),
    "temperature_coefficient": ((1e-6, "uV/K"), (1e-3, "mV/K"), (1.0, "V/K")),
    "energy": ((1e-9, "nJ"), (1e-6, "uJ"), (1e-3, "mJ"), (1.0, "J"), (1e3, "kJ")),
    "time": ((1e-12, "ps"), (1e-9, "ns"), (1e-6, "us"), (1e-3, "ms"), (1.0, "s")),
    "power": ((1e-3, "mW"), (1.0, "W"), (1e3, "kW"), (1e6, "MW")),
}


def with_prefix(value_si: float, kind_name: str, digits: int = 4) -> tuple[float, str]:
    """``value_si`` of a kind with prefixed units in the largest unit it reaches once rounded to ``digits``
    figures (so that 999.96 kHz shows as 1 MHz, not 1000 kHz), or in the smallest unit, and that unit:
    ``(1.3, "us")`` for 1.3e-6 s."""
    units = _SCALED_UNITS[kind_name]
    rounded = abs(float(f"{value_si:.{digits}g}"))
    scale, unit = units[0]
    for candidate_scale, candidate_unit in units:
        if rounded >= candidate_scale * (1 - 1e-12):
            scale, unit = candidate_scale, candidate_unit
    return value_si * (1.0 / scale), unit  # times the factor, as a unit conversion does: 6.6545 A/ns stays 6.6545


def format_value(value_si: float | None, kind_name: str, digits: int = 4) -> str:
    """Format an SI value for reading, with ``digits`` significant figures and the unit prefix chosen for the
    value: ``"619.6 V"``, ``"1.2 kV"``, ``"100 uF"``, ``"109.5 MHz"``.

    Non-finite or missing values are shown as ``"n/a"``.
    """
    if value_si is None or not math.isfinite(value_si):
        return "n/a"
    if kind_name in _SCALED_UNITS and value_si != 0.0:
        shown, unit = with_prefix(value_si, kind_name, digits)
    else:
        shown, unit = to_display(value_si, kind_name), KINDS[kind_name].display_unit
    text = f"{shown:.0f}" if abs(shown) >= 10**digits else f"{shown:.{digits}g}"
    return f"{text} {unit}" if unit else text
