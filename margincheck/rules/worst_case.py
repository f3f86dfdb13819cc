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

from margincheck.findings import Bound, Finding, Quantity, Status, classify, margin_of
from margincheck.intervals import Interval, Side, corner_grid, missing_sides

__all__ = ["Check", "Input", "worst_case_finding"]

Grid = dict[str, np.ndarray]


@dataclass(frozen=True)
class Input:
    """One toleranced input of a rule: its interval (None when the design leaves it out), kind, the end its
    worst case needs, and where the design file holds it (named when it is missing)."""

    interval: Interval | None
    kind: str
    side: Side
    field: str


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
    limit: float | None
    limit_needs: tuple[str, ...] = ()
    bound: Bound = Bound.UPPER
    scale: float | None = None
    out_of_range: Callable[[Grid, int], str] = lambda grid, index: "the model is out of its range at this corner"
    details: Callable[[Grid], dict[str, tuple[np.ndarray, str]]] = field(default=lambda grid: {})
    note: str = ""
    caution: str = ""


def _finding(check: Check, status: Status, **values) -> Finding:
    return Finding(rule=check.rule, subject=check.subject, status=status, kind=check.kind, basis=check.basis,
                   source=check.source, bound=check.bound, caution=check.caution, **values)


def _at(grid: Grid, index: int, kinds: Mapping[str, str]) -> dict[str, Quantity]:
    return {name: Quantity(float(values[index]), kinds[name]) for name, values in grid.items()}


def worst_case_finding(check: Check, marginal_band: float) -> Finding:
    """The finding of ``check`` at its worst corner (smallest margin), or not-evaluated with the reason."""
    intervals = {name: item.interval for name, item in check.inputs.items()}
    missing = missing_sides(intervals, {name: item.side for name, item in check.inputs.items()},
                            {name: item.field for name, item in check.inputs.items()})
    if check.limit is None:
        missing += list(check.limit_needs)
    if missing:
        return _finding(check, Status.NOT_EVALUATED, missing=tuple(missing), note=check.note)
    grid = corner_grid(intervals)
    kinds = {name: item.kind for name, item in check.inputs.items()}
    with np.errstate(divide="ignore", invalid="ignore"):  # a zero time constant etc. becomes a non-finite value
        values = np.broadcast_to(np.asarray(check.model(grid), dtype=float), next(iter(grid.values())).shape)
        margins = margin_of(values, check.limit, check.bound, check.scale)
        detail_arrays = check.details(grid)
    invalid = ~np.isfinite(margins)
    if invalid.any():
        first_bad = int(np.argmax(invalid))
        return _finding(check, Status.NOT_EVALUATED, limit=check.limit, corner=_at(grid, first_bad, kinds),
                        note=check.out_of_range(grid, first_bad))
    worst = int(np.argmin(margins))
    details = {name: Quantity(float(np.broadcast_to(array, values.shape)[worst]), kind)
               for name, (array, kind) in detail_arrays.items()}
    return _finding(check, classify(float(margins[worst]), marginal_band), value=float(values[worst]),
                    limit=check.limit, margin=float(margins[worst]), corner=_at(grid, worst, kinds),
                    details=details, note=check.note)
