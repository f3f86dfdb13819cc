"""Toleranced inputs as closed intervals of SI floats, and the grid of worst-case corners they span."""

from __future__ import annotations

import dataclasses
import math
from dataclasses import dataclass
from enum import Enum
from typing import Mapping

import numpy as np

__all__ = ["Interval", "Side", "corner_grid", "missing_sides", "search_grid"]


class Side(Enum):
    """Which end of a toleranced input a rule's worst case needs to know."""

    MIN = "minimum"
    MAX = "maximum"
    BOTH = "minimum and maximum"


@dataclass(frozen=True)
class Interval:
    """A toleranced value [SI unit]. An end that the design does not state is NaN (unknown, never guessed).

    ``{max: 40 A}`` is ``Interval(nan, nan, 40.0)``: the rules that need only the maximum can use it; a rule
    that needs the minimum reports the input as missing.
    """

    low: float
    nominal: float
    high: float
    #: How production values spread inside the interval, for Monte Carlo: "uniform" (the default), or "normal"
    #: with the tolerance at ``sigmas`` standard deviations on each side of the nominal.
    distribution: str = "uniform"
    sigmas: float | None = None

    @classmethod
    def exact(cls, value: float) -> Interval:
        """An input known exactly."""
        return cls(value, value, value)

    def scaled(self, factor: float) -> Interval:
        """This interval times a positive ``factor`` [any unit], its distribution kept."""
        return dataclasses.replace(self, low=self.low * factor, nominal=self.nominal * factor,
                                   high=self.high * factor)

    @property
    def has_low(self) -> bool:
        """Whether the lower end is known."""
        return math.isfinite(self.low)

    @property
    def has_high(self) -> bool:
        """Whether the upper end is known."""
        return math.isfinite(self.high)

    def endpoints(self) -> np.ndarray:
        """The known, distinct ends: the values a corner grid takes for this input."""
        ends = {value for value in (self.low, self.high) if math.isfinite(value)}
        if not ends and math.isfinite(self.nominal):
            ends = {self.nominal}
        return np.array(sorted(ends), dtype=float)


def missing_sides(inputs: Mapping[str, Interval | None], needs: Mapping[str, Side],
                  labels: Mapping[str, str] | None = None) -> list[str]:
    """What is absent or lacks an end the worst case needs, each named by its label (default: its key) and
    listed once."""
    labels = labels or {}
    missing: dict[str, None] = {}
    for name, side in needs.items():
        label, interval = labels.get(name, name), inputs.get(name)
        if interval is None:
            missing[label] = None
            continue
        lacks_low = side in (Side.MIN, Side.BOTH) and not interval.has_low
        lacks_high = side in (Side.MAX, Side.BOTH) and not interval.has_high
        if lacks_low and lacks_high:
            missing[label] = None
        elif lacks_low or lacks_high:
            missing[f"{label} ({'minimum' if lacks_low else 'maximum'})"] = None
    return list(missing)


def _axis(interval: Interval, side: Side, interior: bool) -> np.ndarray:
    ends = interval.endpoints()
    if side is Side.MIN and interval.has_low:
        return np.array([interval.low])
    if side is Side.MAX and interval.has_high:
        return np.array([interval.high])
    if interior and ends.size == 2:
        return np.array([ends[0], 0.5 * (ends[0] + ends[1]), ends[1]])
    return ends


def search_grid(inputs: Mapping[str, Interval], sides: Mapping[str, Side],
                interior: tuple[str, ...] = ()) -> dict[str, np.ndarray]:
    """The corners of a model whose worst case is known to lie at one end of some inputs: that end alone for an
    input whose side is MIN or MAX, both ends for BOTH, and the midpoint too for inputs named in ``interior``.

    For a model that is not monotone in an input (a simulated peak against the threshold), the worst case may
    lie inside the interval; the midpoint is the first interior point such a search looks at.
    """
    names = list(inputs)
    axes = [_axis(inputs[name], sides[name], name in interior) for name in names]
    mesh = np.meshgrid(*axes, indexing="ij") if axes else []
    return {name: grid.ravel() for name, grid in zip(names, mesh)}


def corner_grid(inputs: Mapping[str, Interval]) -> dict[str, np.ndarray]:
    """Every combination of the inputs' known ends, as one flat array per input (full factorial).

    With k toleranced inputs the grid has 2**k corners; an exact input contributes one value. For models
    that are monotonic in each input separately, as all first-order switching models here are, the worst
    case over the whole tolerance box lies on one of these corners.
    """
    names = list(inputs)
    axes = [inputs[name].endpoints() for name in names]
    mesh = np.meshgrid(*axes, indexing="ij") if axes else []
    return {name: grid.ravel() for name, grid in zip(names, mesh)}
