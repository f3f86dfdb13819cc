"""How the columns of a capture file become our channels: which column is which, its unit, the probe's
attenuation, the deskew, and the scale and offset of integer codes.

A mapping comes from a design's ``captures:`` entry (``margincheck.captures.design_section``) or from the
command line's ``--map KEY=VALUE`` options (``mapping_from_options``). Every setting is keyed by our name of
the signal: ``time``, ``v_ds``, ``i_d``, ``v_gs`` or ``v_gs_idle``.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Mapping, Sequence

from margincheck.errors import InputError, Problem
from margincheck.units import QuantityError, parse_quantity

__all__ = ["CHANNELS", "KIND_OF", "SEPARATORS", "SIGNALS", "TIME", "CaptureMapping", "check_unit",
           "mapping_from_options"]

TIME = "time"
#: Our channel names, in the order a summary lists them.
CHANNELS = ("v_ds", "i_d", "v_gs", "v_gs_idle")
SIGNALS = (TIME, *CHANNELS)
#: The quantity kind (margincheck.units.KINDS) each signal must have.
KIND_OF = {TIME: "time", "v_ds": "voltage", "i_d": "current", "v_gs": "voltage", "v_gs_idle": "voltage"}
SEPARATORS = {",": ",", ";": ";", "tab": "\t", "\t": "\t"}
DECIMAL_MARKS = (".", ",")


@dataclass(frozen=True)
class CaptureMapping:
    """What the reader is told about a capture file beyond what the file says itself.

    Attributes
    ----------
    columns : mapping of str to str or int
        Signal name -> column header name, or 1-based column number (the first column is 1). A signal left
        out is found by its own name in the header (``time`` also as ``t``), case-insensitively.
    units : mapping of str to str
        Signal name -> unit text (``"mV"``, ``"kA"``, ``"us"``). Replaces the unit the file gives: e.g. ``A``
        for a current probe whose output the scope recorded in V (its factor then goes in ``attenuation``).
    attenuation : mapping of str to float
        Signal name -> factor the recorded value is multiplied by (probe attenuation, 10 for a 10:1 probe).
    deskew : mapping of str to float
        Channel name -> time [s] added to the channel's time stamps before it is resampled onto the time base.
    scale, offset : mapping of str to float
        Signal name -> integer-code scale and offset: value = code * scale + offset, in the column's unit.
        Replace the file's own ``scale.COLUMN`` / ``offset.COLUMN`` header lines.
    separator : str, optional
        ``","``, ``";"`` or tab; detected from the first data row when not given.
    decimal : str, optional
        ``"."`` or ``","`` (a decimal comma only with a ``;`` or tab separator); detected when not given.
    """

    columns: Mapping[str, str | int] = field(default_factory=dict)
    units: Mapping[str, str] = field(default_factory=dict)
    attenuation: Mapping[str, float] = field(default_factory=dict)
    deskew: Mapping[str, float] = field(default_factory=dict)
    scale: Mapping[str, float] = field(default_factory=dict)
    offset: Mapping[str, float] = field(default_factory=dict)
    separator: str | None = None
    decimal: str | None = None


_PER_SIGNAL = ("unit", "attenuation", "deskew", "scale", "offset")
_OPTION_HELP = ("KEY=VALUE with KEY a signal (time, v_ds, i_d, v_gs, v_gs_idle) naming its column, "
                "SIGNAL.unit, SIGNAL.attenuation, SIGNAL.deskew, SIGNAL.scale, SIGNAL.offset, separator or decimal")


def _option_problem(option: str, message: str) -> Problem:
    return Problem("--map", None, option, message)


def _number(text: str) -> float:
    value = float(text)
    if value != value or value in (float("inf"), float("-inf")):
        raise ValueError(text)
    return value


def check_unit(signal: str, unit: str) -> float:
    """The SI value of one ``unit`` of ``signal``'s kind (``"mV"`` -> 0.001 for ``v_ds``).

    Raises
    ------
    QuantityError
        When the unit is unknown or of another dimension than the signal (a current unit for ``v_ds``).
    """
    return parse_quantity(f"1 {unit}", KIND_OF[signal])


def _setting(signal: str, setting: str, value: str) -> float | str:
    """One per-signal setting's value as the mapping holds it (raises ValueError or QuantityError)."""
    if setting == "unit":
        check_unit(signal, value)
        return value
    if setting == "deskew":
        if signal == TIME:
            raise ValueError("the time base itself has no deskew; give it on a channel")
        return parse_quantity(value, "time")
    number = _number(value)
    if setting in ("attenuation", "scale") and number == 0:
        raise ValueError(f"{setting} must not be zero")
    return number


def _column(value: str) -> str | int:
    return int(value) if value.isdigit() else value


def mapping_from_options(options: Sequence[str]) -> CaptureMapping:
    """A mapping from ``--map`` options such as ``v_ds=CH1``, ``v_ds.attenuation=10``, ``i_d.deskew=4 ns``.

    Raises
    ------
    InputError
        Naming each option that cannot be used, and why.
    """
    settings: dict[str, dict] = {"columns": {}, **{name: {} for name in _PER_SIGNAL}}
    general: dict[str, str] = {}
    problems = []
    for option in options:
        key, separator, value = option.partition("=")
        signal, _, setting = key.strip().partition(".")
        value = value.strip()
        try:
            if not separator or not value:
                raise ValueError(f"expected {_OPTION_HELP}")
            if key in ("separator", "decimal"):
                general[key] = value
            elif signal not in SIGNALS or (setting and setting not in _PER_SIGNAL):
                raise ValueError(f"unknown key; expected {_OPTION_HELP}")
            elif not setting:
                settings["columns"][signal] = _column(value)
            else:
                settings[setting][signal] = _setting(signal, setting, value)
        except (ValueError, QuantityError) as error:
            problems.append(_option_problem(option, str(error)))
    separator = general.get("separator")
    if separator is not None and separator not in SEPARATORS:
        problems.append(_option_problem(f"separator={separator}", 'expected ",", ";" or "tab"'))
    if general.get("decimal", ".") not in DECIMAL_MARKS:
        problems.append(_option_problem(f"decimal={general['decimal']}", 'expected "." or ","'))
    if problems:
        raise InputError(problems)
    units = settings.pop("unit")
    return CaptureMapping(**settings, units=units, separator=SEPARATORS.get(separator or ""),
                          decimal=general.get("decimal"))
