"""Building typed values from validated documents: quantities, intervals and capacitance curves in SI
units, with every semantic problem (signs, order, tolerances) and every plausibility warning collected and
located."""

from __future__ import annotations

import dataclasses
import math
from dataclasses import dataclass
from pathlib import Path
from typing import Any, Sequence

from margincheck.errors import Problem
from margincheck.intervals import Interval
from margincheck.loading import DocPath, Document, Limits
from margincheck.plausibility import implausibility
from margincheck.units import KINDS, format_value, parse_quantity, parse_tolerance

__all__ = ["NON_NEGATIVE", "POSITIVE", "Builder", "CapacitanceCurve", "curve_points", "get", "temperature_dependent"]


@dataclass(frozen=True)
class CapacitanceCurve:
    """A voltage-dependent capacitance: curve points (v_ds [V], C [F]) times a toleranced scale factor.

    A single value is a flat curve of 1 F times the toleranced value; a datasheet curve has the toleranced scale
    of its ``{points, tolerance}`` form, exactly 1 when given as a plain list of points.
    """

    voltages: tuple[float, ...]
    values: tuple[float, ...]
    scale: Interval

    @classmethod
    def flat(cls, value: Interval) -> CapacitanceCurve:
        """One (toleranced) value at every voltage."""
        return cls((0.0,), (1.0,), value)


# Quantity checks a schema cannot express: which values must be strictly positive or at least zero.
POSITIVE = "must be greater than zero"
NON_NEGATIVE = "must not be negative"


def _violates(sign: str | None, value: float) -> bool:
    """Whether ``value`` breaks the sign rule ``sign`` (one of the two messages above, or None)."""
    return (sign == POSITIVE and not value > 0) or (sign == NON_NEGATIVE and not value >= 0)


class Builder:
    """Builds typed values from validated documents, collecting every semantic problem."""

    def __init__(self, limits: Limits, allowed_roots: Sequence[Path]) -> None:
        self.problems: list[Problem] = []
        self.warnings: list[Problem] = []
        self.limits = limits
        self.allowed_roots = allowed_roots

    def fail(self, document: Document, path: DocPath, message: str, *, at_key: bool = False) -> None:
        self.problems.append(document.problem(path, message, at_key=at_key))

    def _signed(self, document: Document, path: DocPath, value: float, sign: str | None) -> None:
        if _violates(sign, value):
            self.fail(document, path, sign)

    def quantity(self, document: Document, path: DocPath, kind: str, sign: str | None = None) -> float | None:
        raw = get(document.data, path)
        if raw is None:
            return None
        value = parse_quantity(raw, kind)
        self._signed(document, path, value, sign)
        field_name = next(str(part) for part in reversed(path) if part not in ("min", "nominal", "max"))
        # a factor (no unit) on a field is not that field's quantity: its plausible range does not apply
        warning = implausibility(field_name, value, kind) if KINDS[kind].si_unit else None
        if warning:
            self.warnings.append(document.problem(path, warning))
        return value

    def around(self, document: Document, tolerance_path: DocPath, nominal: float, kind: str,
               sign: str | None) -> Interval | None:
        """The interval nominal ± tolerance, the tolerance read at ``tolerance_path``."""
        span = parse_tolerance(get(document.data, tolerance_path), kind).span(nominal)
        if span < 0:
            self.fail(document, tolerance_path, "a tolerance must not be negative")
            return None
        low = nominal - span
        if _violates(sign, low) and not _violates(sign, nominal):  # a bad nominal is reported already
            self.fail(document, tolerance_path, f"the tolerance takes the minimum to {format_value(low, kind)}, "
                                                f"but the value {sign}")
            return None
        return Interval(low, nominal, nominal + span)

    def interval(self, document: Document, path: DocPath, kind: str, sign: str | None = None,
                 tolerance_path: DocPath | None = None, nominal: float | None = None) -> Interval | None:
        """A toleranced value; ``tolerance_path`` names a shared tolerance that applies to a plain quantity, and
        ``nominal`` is the nominal of a mapping that writes no nominal and no min/max (1 for a curve's scale)."""
        raw = get(document.data, path)
        if raw is None:
            return None
        if not isinstance(raw, dict):
            value = self.quantity(document, path, kind, sign)
            if tolerance_path is None or get(document.data, tolerance_path) is None:
                return Interval.exact(value)
            return self.around(document, tolerance_path, value, kind, sign)
        spread = self._spread(document, path, raw, kind, sign, nominal)
        return None if spread is None else self._distributed(document, path, raw, spread)

    def _spread(self, document: Document, path: DocPath, raw: dict, kind: str, sign: str | None,
                default_nominal: float | None) -> Interval | None:
        """The ends and nominal of a toleranced mapping (its distribution left uniform)."""
        ends = {key: self.quantity(document, path + (key,), kind, sign) for key in ("min", "nominal", "max")}
        low, nominal, high = (math.nan if ends[key] is None else ends[key] for key in ("min", "nominal", "max"))
        if ends["nominal"] is None and default_nominal is not None and not {"min", "max"} & raw.keys():
            nominal = default_nominal
        if "tolerance" in raw:
            if "min" in raw or "max" in raw:
                self.fail(document, path + ("tolerance",), "give either a tolerance or min/max, not both",
                          at_key=True)
                return None
            return self.around(document, path + ("tolerance",), nominal, kind, sign)
        if not _ordered(low, nominal, high):
            self.fail(document, path, "expected min <= nominal <= max")
            return None
        if not {"min", "max"} & raw.keys():
            return Interval.exact(nominal)
        return Interval(low, nominal, high)

    def _distributed(self, document: Document, path: DocPath, raw: dict, spread: Interval) -> Interval | None:
        """``spread`` with the mapping's distribution: uniform unless it says normal, with its sigmas.

        A stated distribution needs both ends and a spread between them; a normal one also needs sigmas, the
        number of standard deviations the tolerance spans on each side of the nominal (the middle of min and
        max where no nominal is written).
        """
        distribution, sigmas = raw.get("distribution"), raw.get("sigmas")
        if distribution is None and sigmas is None:
            return spread
        key = path + ("distribution" if "distribution" in raw else "sigmas",)
        if not (spread.has_low and spread.has_high):
            self.fail(document, key, "a distribution needs both ends of the tolerance (a one-sided value such as "
                                     "{max: ...} has no spread to distribute); give a tolerance, or min and max",
                      at_key=True)
        elif spread.low == spread.high:
            self.fail(document, key, "a distribution needs a spread, but this value is exact; give a tolerance, "
                                     "or min and max, beside it", at_key=True)
        elif distribution != "normal":
            if sigmas is None:
                return spread
            self.fail(document, path + ("sigmas",), "sigmas belongs to a normal distribution; add "
                                                    "distribution: normal, or leave sigmas out", at_key=True)
        elif sigmas is None:
            self.fail(document, key, "a normal distribution needs sigmas: how many standard deviations the "
                                     "tolerance spans on each side of the nominal (e.g. sigmas: 3)", at_key=True)
        else:
            return dataclasses.replace(spread, distribution="normal", sigmas=float(sigmas))
        return None

    def capacitance_curve(self, document: Document, path: DocPath) -> CapacitanceCurve | None:
        """A capacitance given as one (toleranced) value, or as curve points in ascending v_ds (a list, or
        ``{points, ...}`` with a toleranced scale)."""
        raw = get(document.data, path)
        if not isinstance(raw, (list, dict)) or (isinstance(raw, dict) and "points" not in raw):
            value = self.interval(document, path, "capacitance", POSITIVE)
            return None if value is None else CapacitanceCurve.flat(value)
        scale = self.curve_scale(document, path)
        points = self.points(document, curve_points(document, path), (("v_ds", "voltage", NON_NEGATIVE),
                                                                      ("capacitance", "capacitance", POSITIVE)))
        return None if points is None or scale is None else CapacitanceCurve(*points, scale)

    def curve_scale(self, document: Document, path: DocPath) -> Interval | None:
        """The toleranced factor on every value of the curve at ``path``: exactly 1 for a plain list of points;
        for ``{points, ...}`` its tolerance around 1, or its min/max factors (both ends: a curve that spreads in
        production spreads both ways). None after a reported problem."""
        if not isinstance(get(document.data, path), dict):
            return Interval.exact(1.0)
        scale = self.interval(document, path, "curve_scale", POSITIVE, nominal=1.0)
        if scale is not None and scale.has_low != scale.has_high:
            self.fail(document, path, "a curve's scale needs both ends: give a tolerance, or min and max")
            return None
        return scale

    def points(self, document: Document, path: DocPath, columns: Sequence[tuple[str, str, str]],
               ascending: bool = True) -> tuple[tuple[float, ...], ...] | None:
        """A list of points (curve points, network cells) as one tuple per column ``(key, kind, sign)``; the
        first column strictly ascending unless ``ascending`` is false. None after a reported problem."""
        count = len(get(document.data, path))
        values = tuple(tuple(self.quantity(document, path + (index, key), kind, sign) for index in range(count))
                       for key, kind, sign in columns)
        if any(_violates(sign, value) for (_, _, sign), column in zip(columns, values) for value in column):
            return None  # reported by quantity(); a model must not see the value
        first = values[0]
        if ascending and any(later <= earlier for earlier, later in zip(first, first[1:])):
            self.fail(document, path, f"curve points must be in strictly ascending {columns[0][0]}")
            return None
        return values


def _ordered(*values: float) -> bool:
    known = [value for value in values if math.isfinite(value)]
    return all(a <= b for a, b in zip(known, known[1:]))


def curve_points(document: Document, path: DocPath) -> DocPath:
    """Where the points of the curve at ``path`` are: the list itself, or the ``points`` of a scaled curve."""
    return path + ("points",) if isinstance(get(document.data, path), dict) else path


def get(data: Any, path: DocPath) -> Any:
    for part in path:
        if isinstance(data, dict):
            data = data.get(part)
        elif isinstance(data, list) and isinstance(part, int) and part < len(data):
            data = data[part]
        else:
            return None
    return data


def temperature_dependent(builder: Builder, document: Document, characteristics: DocPath, name: str,
                          kinds: tuple[str, str], conditions: dict[str, tuple[str, str | None]]
                          ) -> dict[str, Any] | None:
    """The fields of a characteristic stated at a junction temperature and test ``conditions`` (``name``: value,
    t_j and each condition, its key mapped to its quantity kind and sign rule), with its hot point
    (``name``_hot: value, t_j) or
    its coefficient (``name``_temperature_coefficient): ``value``, ``t_j``, the conditions, ``hot_value``,
    ``hot_t_j``, ``coefficient``; None when ``name`` is not given. ``kinds`` are the quantity kinds of the value
    and of the coefficient. A hot point must be hotter."""
    path, hot = characteristics + (name,), characteristics + (f"{name}_hot",)
    if get(document.data, path) is None:
        return None
    value_kind, coefficient_kind = kinds
    fields = {
        "value": builder.interval(document, path + ("value",), value_kind, POSITIVE),
        "t_j": builder.quantity(document, path + ("t_j",), "temperature", POSITIVE),
        **{key: builder.quantity(document, path + (key,), *kind) for key, kind in conditions.items()},
        "hot_value": builder.interval(document, hot + ("value",), value_kind, POSITIVE),
        "hot_t_j": builder.quantity(document, hot + ("t_j",), "temperature", POSITIVE),
        "coefficient": builder.interval(document, characteristics + (f"{name}_temperature_coefficient",),
                                        coefficient_kind)}
    if fields["hot_t_j"] is not None and fields["t_j"] is not None and fields["hot_t_j"] <= fields["t_j"]:
        builder.fail(document, hot + ("t_j",), f"must be hotter than {name}.t_j")
    return fields
