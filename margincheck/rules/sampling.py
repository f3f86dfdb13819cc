"""Evaluating every rule at given points instead of at its worst-case corners: the machinery behind Monte Carlo
and the sensitivities.

While a :class:`Sampling` is active (``with sampling(plan) as active: ...``), every check evaluates its model at
the plan's points instead of its corners (``worst_case_finding`` and the cell simulation ask
:func:`active_sampling`) and records the margin at every point under its rule and subject. A rule built of
several checks (a gate level from the driver and from the simulated waveform) records the smaller margin of
them at each point, which is how the rule itself decides. The rules themselves do not change.

An input's value at a point is drawn (or given) by its sampling key: the design field it comes from, and for a
device characteristic also the switch it belongs to, so that the two devices of a leg spread independently
while every rule that reads one switch's threshold sees the same value of it at a point.
"""

from __future__ import annotations

import contextlib
import contextvars
import zlib
from dataclasses import dataclass, field
from typing import Callable, Iterator, Mapping

import numpy as np

from margincheck.intervals import Interval, Side

__all__ = ["CellNotSampled", "SamplePlan", "Sampling", "active_sampling", "drawn_values", "given_points",
           "random_plan", "sampling", "worst_end"]

Grid = dict[str, np.ndarray]


class CellNotSampled(Exception):
    """Raised by the cell simulation in a pass whose plan simulates no point (closed-form rules only)."""


def worst_end(interval: Interval, side: Side) -> float:
    """The value an input keeps where a point does not set it: the end its worst case needs, else the nominal
    (the middle of the known ends where no nominal is written)."""
    if side is Side.MAX and interval.has_high:
        return interval.high
    if side is Side.MIN and interval.has_low:
        return interval.low
    if np.isfinite(interval.nominal):
        return interval.nominal
    return float(np.mean(interval.endpoints()))


def drawn_values(interval: Interval, variate_uniform: np.ndarray, variate_normal: np.ndarray) -> np.ndarray:
    """Production values of one input from standard variates: uniform on [low, high], or a normal (two-piece
    where the sides differ) around the nominal with the tolerance at ``sigmas`` standard deviations.

    An interval with one end unknown (``{max: 40 A}``, a trip level) has no spread to draw from: every point
    takes its known end, the worst case it was written for.
    """
    if not (interval.has_low and interval.has_high):
        return np.full(variate_uniform.shape, interval.endpoints()[-1] if interval.has_high
                       else interval.endpoints()[0])
    if interval.distribution == "normal" and interval.sigmas:
        nominal = interval.nominal if np.isfinite(interval.nominal) else 0.5 * (interval.low + interval.high)
        deviation = np.where(variate_normal >= 0.0, interval.high - nominal, nominal - interval.low) / interval.sigmas
        return nominal + variate_normal * deviation
    return interval.low + variate_uniform * (interval.high - interval.low)


@dataclass(frozen=True)
class SamplePlan:
    """Points at which every rule is evaluated: ``size`` of them, the first ``simulated`` of which the cell
    simulation runs at (it costs far more per point than a closed form), and ``values(key, interval, side)``
    giving one input's value at every point."""

    size: int
    simulated: int
    values: Callable[[str, Interval, Side], np.ndarray]

    def grid(self, inputs: Mapping, points: int | None = None) -> Grid:
        """The values of ``inputs`` (name -> Input) at the first ``points`` points (default: all)."""
        count = self.size if points is None else points
        return {name: np.asarray(self.values(item.key, item.interval, item.side), dtype=float)[:count]
                for name, item in inputs.items() if item.interval is not None}

    def cell_grid(self, inputs: Mapping) -> Grid:
        """The points the cell simulation runs at; raises CellNotSampled when this plan simulates none."""
        if self.simulated == 0:
            raise CellNotSampled
        return self.grid(inputs, self.simulated)


def _stream_seed(seed: int, key: str, block: int) -> list[int]:
    return [seed, zlib.crc32(key.encode("utf-8")), block]


def random_plan(size: int, simulated: int, seed: int, block: int = 0) -> SamplePlan:
    """Random production values: every input drawn independently from its distribution, one reproducible
    stream per sampling key, seed and block of points (so the first points of block 0 are the same whatever
    the block size used for the rest)."""
    cache: dict[tuple[str, Interval], np.ndarray] = {}

    def values(key: str, interval: Interval, side: Side) -> np.ndarray:
        if (key, interval) not in cache:
            generator = np.random.default_rng(_stream_seed(seed, key, block))
            uniform = generator.random(size)
            normal = np.random.default_rng(_stream_seed(seed, key + "#normal", block)).standard_normal(size) \
                if interval.distribution == "normal" else uniform
            cache[key, interval] = drawn_values(interval, uniform, normal)
        return cache[key, interval]

    return SamplePlan(size, min(simulated, size), values)


def given_points(points: list[dict[str, float]], simulate: bool = True) -> SamplePlan:
    """Explicit points (sampling key -> value); an input a point does not set keeps its worst end. Without
    ``simulate`` only the closed-form rules are evaluated (the cell simulation raises CellNotSampled)."""
    def values(key: str, interval: Interval, side: Side) -> np.ndarray:
        default = worst_end(interval, side)
        return np.array([point.get(key, default) for point in points], dtype=float)

    return SamplePlan(len(points), len(points) if simulate else 0, values)


@dataclass
class Sampling:
    """An active evaluation at a plan's points, and the margins recorded at them by rule and subject."""

    plan: SamplePlan
    margins: dict[tuple[str, str], np.ndarray] = field(default_factory=dict)

    def record(self, rule: str, subject: str, margins: np.ndarray) -> None:
        """Keep the smaller margin of every check of one rule and subject, point by point (over the points both
        were evaluated at: a check on the simulated points covers only the first of them)."""
        margins = np.asarray(margins, dtype=float)
        known = self.margins.get((rule, subject))
        if known is not None:
            count = min(known.size, margins.size)
            margins = np.minimum(known[:count], margins[:count])  # NaN (not evaluated) stays NaN
        self.margins[rule, subject] = margins

    def forget(self, rule: str, subject: str) -> None:
        """Drop what one rule recorded (it could not finish in this pass)."""
        self.margins.pop((rule, subject), None)


_ACTIVE: contextvars.ContextVar[Sampling | None] = contextvars.ContextVar("margincheck_sampling", default=None)


def active_sampling() -> Sampling | None:
    """The evaluation at given points under way, or None for the usual worst-case corners."""
    return _ACTIVE.get()


@contextlib.contextmanager
def sampling(plan: SamplePlan) -> Iterator[Sampling]:
    """Evaluate rules at ``plan``'s points while the block runs; yields the record of their margins."""
    active = Sampling(plan)
    token = _ACTIVE.set(active)
    try:
        yield active
    finally:
        _ACTIVE.reset(token)
