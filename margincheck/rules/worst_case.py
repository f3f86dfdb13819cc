"""Evaluate a model over the corners of its toleranced inputs and turn the worst corner into a finding.

Every rule states its inputs (an interval and a quantity kind each), which end of each input its worst case
needs, a vectorised model of the checked value, and a limit. ``worst_case_finding`` does the rest:
not-evaluated when an input or limit is missing or the model is out of range at any corner, otherwise the
corner with the smallest margin, its status, and the corner's input values.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Callable, Mapping

import numpy as np

from margincheck.findings import Bound, Finding, Quantity, Spread, Status, classify, margin_of
from margincheck.intervals import Interval, Side, corner_grid, missing_sides
from margincheck.rules.sampling import active_sampling

__all__ = ["Check", "Input", "not_evaluated", "worst_case_finding"]

Grid = dict[str, np.ndarray]


@dataclass(frozen=True)
class Input:
    """One toleranced input of a rule: its interval (None when the design leaves it out), kind, the end its
    worst case needs, where the design file holds it (named when it is missing), and the switch it belongs to
    where one device type serves several switches (each device spreads on its own)."""

    interval: Interval | None
    kind: str
    side: Side
    field: str
    owner: str = ""

    @property
    def key(self) -> str:
        """What identifies this input's value at a Monte-Carlo or sensitivity point: its field, and its owner."""
        return f"{self.owner}:{self.field}" if self.owner else self.field


@dataclass(frozen=True)
class Check:
    """What a rule checks for one subject: the value's model at the corners, against a limit."""

    rule: str
    subject: str
    kind: str
    basis: str
    source: str
    inputs: Mapping[str, Input]
    model: Callable[[Grid], np.ndarray]
    limit: float | Callable[[Grid], np.ndarray] | None
    limit_needs: tuple[str, ...] = ()
    bound: Bound = Bound.UPPER
    scale: float | None = None
    out_of_range: Callable[[Grid, int], str] = lambda grid, index: "the model is out of its range at this corner"
    details: Callable[[Grid], dict[str, tuple[np.ndarray, str]]] = field(default=lambda grid: {})
    note: str = ""
    caution: str = ""
    fails_outright: Callable[[np.ndarray], np.ndarray] | None = None
    failure_note: str = ""
    #: The corners to evaluate, when the rule's inputs were searched beyond their ends (None: the corners)
    grid: Grid | None = None
    #: A second figure (larger is worse) that decides between corners whose margins tie
    tie_break: np.ndarray | None = None


def not_evaluated(rule_id: str, subject: str, kind: str, basis: str, missing: str, note: str = "") -> Finding:
    """A finding for a rule that cannot start: ``missing`` names what it needs, ``note`` says why."""
    return Finding(rule=rule_id, subject=subject, status=Status.NOT_EVALUATED, kind=kind, basis=basis, source="",
                   missing=(missing,), note=note)


def _spreads(inputs: Mapping[str, Input]) -> dict[str, Spread]:
    return {name: Spread(item.key, item.interval.low, item.interval.high, item.interval.nominal)
            for name, item in inputs.items()
            if item.interval is not None and item.interval.has_low and item.interval.has_high
            and item.interval.high > item.interval.low}


def _finding(check: Check, status: Status, **values) -> Finding:
    return Finding(rule=check.rule, subject=check.subject, status=status, kind=check.kind, basis=check.basis,
                   source=check.source, bound=check.bound, caution=check.caution,
                   fields={name: item.field for name, item in check.inputs.items()},
                   spreads=_spreads(check.inputs), **values)


def _at(grid: Grid, index: int, kinds: Mapping[str, str]) -> dict[str, Quantity]:
    return {name: Quantity(float(values[index]), kinds[name]) for name, values in grid.items()}


def _worst_corner(margins: np.ndarray, grid: Grid, check: Check) -> int:
    """The corner with the smallest margin. Among corners of equal margin, the one the check's ``tie_break``
    figure ranks worst where it has one (the next figure of a simulated edge); otherwise the one where the most
    inputs sit at the end their worst case needs (an input the value does not depend on, such as the
    capacitance of the capacitor-voltage rule), so that the corner shown and the figures stated at it are the
    worst ones."""
    smallest = float(np.min(margins))
    tied = np.flatnonzero(margins <= smallest + 1e-9 * max(abs(smallest), 1.0))
    if tied.size == 1:
        return int(tied[0])
    if check.tie_break is not None:
        return int(tied[np.argmax(np.nan_to_num(np.asarray(check.tie_break)[tied], nan=-np.inf))])
    score = np.zeros(tied.size)
    for name, item in check.inputs.items():
        values = grid[name][tied]
        if item.side is Side.MAX:
            score += values == values.max()
        elif item.side is Side.MIN:
            score += values == values.min()
    return int(tied[np.argmax(score)])


def worst_case_finding(check: Check, marginal_band: float) -> Finding:
    """The finding of ``check`` at its worst corner (smallest margin), or not-evaluated with the reason."""
    intervals = {name: item.interval for name, item in check.inputs.items()}
    missing = missing_sides(intervals, {name: item.side for name, item in check.inputs.items()},
                            {name: item.field for name, item in check.inputs.items()})
    if check.limit is None:
        missing += list(check.limit_needs)
    if missing:
        return _finding(check, Status.NOT_EVALUATED, missing=tuple(missing), note=check.note)
    sampled = active_sampling()
    if check.grid is not None:
        grid = check.grid
    else:
        grid = corner_grid(intervals) if sampled is None else sampled.plan.grid(check.inputs)
    kinds = {name: item.kind for name, item in check.inputs.items()}
    shape = next(iter(grid.values())).shape
    with np.errstate(divide="ignore", invalid="ignore"):  # a zero time constant etc. becomes a non-finite value
        values = np.broadcast_to(np.asarray(check.model(grid), dtype=float), shape)
        limits = np.broadcast_to(np.asarray(check.limit(grid) if callable(check.limit) else check.limit,
                                            dtype=float), shape)
        margins = margin_of(values, limits, check.bound, check.scale)
        detail_arrays = check.details(grid)

    def details_at(index: int) -> dict[str, Quantity]:
        return {name: Quantity(float(np.broadcast_to(array, shape)[index]), kind)
                for name, (array, kind) in detail_arrays.items()}

    failed = check.fails_outright(values) if check.fails_outright is not None else np.zeros(shape, dtype=bool)
    if sampled is not None:
        sampled.record(check.rule, check.subject, np.where(failed, -np.inf, margins))
    if failed.any():
        first = int(np.argmax(failed))
        return _finding(check, Status.FAIL, limit=float(limits[first]), corner=_at(grid, first, kinds),
                        details=details_at(first), note="; ".join(filter(None, (check.failure_note, check.note))))
    invalid = ~np.isfinite(margins)
    if invalid.any():
        first_bad = int(np.argmax(invalid))
        limit = float(limits[first_bad]) if np.isfinite(limits[first_bad]) else None
        return _finding(check, Status.NOT_EVALUATED, limit=limit, corner=_at(grid, first_bad, kinds),
                        note=check.out_of_range(grid, first_bad))
    worst = _worst_corner(margins, grid, check)
    return _finding(check, classify(float(margins[worst]), marginal_band), value=float(values[worst]),
                    limit=float(limits[worst]), margin=float(margins[worst]), corner=_at(grid, worst, kinds),
                    details=details_at(worst), note=check.note)
