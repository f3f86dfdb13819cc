"""Findings: the result of one rule for one subject, with its margin and status (design.md section 6)."""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from enum import Enum

import numpy as np

__all__ = ["Bound", "Finding", "Quantity", "Sensitivity", "Spread", "Status", "Verdict", "attention_rank", "classify",
           "exit_code", "margin_of", "verdict_of"]

#: Rounding slack on the margin: |margin| below this counts as exactly at the limit (marginal, not fail),
#: so that "400 V + 5 %" computed as 420.00000000000006 V does not fail a 420 V limit. 1e-9 is far below
#: any measurement or datasheet resolution.
AT_LIMIT_SLACK = 1e-9


class Status(str, Enum):
    """Status of one finding."""

    PASS = "pass"
    MARGINAL = "marginal"
    FAIL = "fail"
    NOT_EVALUATED = "not-evaluated"
    WAIVED = "waived"  # a fail or not-evaluated finding accepted on the record by a valid waiver


class Verdict(str, Enum):
    """Overall result of a check."""

    PASS = "pass"
    MARGINAL = "marginal"
    FAIL = "fail"
    INCOMPLETE = "incomplete"


class Bound(str, Enum):
    """Whether the limit is a ceiling (value must stay below) or a floor (value must stay above)."""

    UPPER = "upper"
    LOWER = "lower"


@dataclass(frozen=True)
class Quantity:
    """An SI value with its quantity kind (a key of ``margincheck.units.KINDS``) for display."""

    value: float
    kind: str


@dataclass(frozen=True)
class Spread:
    """A toleranced input of a finding: the key of its value at a sampled point, its ends and its nominal value
    (NaN when the design states none) [SI unit]."""

    key: str
    low: float
    high: float
    nominal: float = math.nan


@dataclass(frozen=True)
class Sensitivity:
    """How one input moves a finding's margin: the margin with the input at each end of its tolerance and every
    other input at the finding's worst corner."""

    name: str
    field: str
    kind: str
    low: float
    high: float
    margin_at_low: float
    margin_at_high: float

    @property
    def swing(self) -> float:
        """|margin at the high end − margin at the low end| (NaN when either could not be computed)."""
        return abs(self.margin_at_high - self.margin_at_low)


@dataclass(frozen=True)
class Finding:
    """One rule's result for one subject, at that rule's worst-case corner.

    ``value`` and ``limit`` are SI floats (None when not evaluated). ``corner`` holds the input values of the
    worst corner; ``details`` holds intermediate results worth showing (the di/dt behind an overshoot...).
    ``fields`` names where in the design each corner input is written; ``waiver`` says who accepted a waived
    finding, until when and why, and ``waived_status`` what its status was before.
    """

    rule: str
    subject: str
    status: Status
    kind: str
    basis: str
    source: str
    value: float | None = None
    limit: float | None = None
    margin: float | None = None
    bound: Bound = Bound.UPPER
    corner: dict[str, Quantity] = field(default_factory=dict)
    details: dict[str, Quantity] = field(default_factory=dict)
    missing: tuple[str, ...] = ()
    note: str = ""
    caution: str = ""
    fields: dict[str, str] = field(default_factory=dict)
    waiver: str = ""
    waived_status: Status | None = None
    #: The inputs that spread between two known ends, by name (what the sensitivities swing)
    spreads: dict[str, Spread] = field(default_factory=dict, repr=False, compare=False)
    #: Inputs ranked by how far each moves the margin (computed on request: margincheck.sensitivity)
    sensitivities: tuple[Sensitivity, ...] = ()


def margin_of(value, limit, bound: Bound, scale=None):
    """Signed margin as a fraction of the limit; negative means violated.

    ``(limit − value)/|limit|`` for an upper limit, ``(value − limit)/|limit|`` for a lower one. ``scale``
    replaces ``|limit|`` as the normaliser where the limit itself can be zero. A margin within
    ``AT_LIMIT_SLACK`` of zero is zero. Works on arrays.
    """
    reference = abs(limit) if scale is None else scale
    difference = (limit - value) if bound is Bound.UPPER else (value - limit)
    margin = difference / reference
    at_limit = abs(margin) < AT_LIMIT_SLACK  # rounding noise at the limit is exactly at the limit
    return np.where(at_limit, 0.0, margin) if np.ndim(margin) else (0.0 if at_limit else margin)


def classify(margin: float | None, marginal_band: float) -> Status:
    """Status for a margin: fail below zero, marginal below the band (zero included), else pass.

    A missing or non-finite margin is never a pass: it is ``not-evaluated``.
    """
    if margin is None or not math.isfinite(margin):
        return Status.NOT_EVALUATED
    if margin < -AT_LIMIT_SLACK:
        return Status.FAIL
    if margin < marginal_band:
        return Status.MARGINAL
    return Status.PASS


_URGENCY = {Status.FAIL: 0, Status.NOT_EVALUATED: 1, Status.MARGINAL: 2, Status.WAIVED: 2, Status.PASS: 3}


def attention_rank(finding: Finding) -> tuple[int, float]:
    """Sort key, most urgent first: a fail, then a finding not evaluated, then marginal or waived, then a pass;
    within each the smaller margin first (none or not finite: first)."""
    margin = finding.margin if finding.margin is not None and math.isfinite(finding.margin) else -math.inf
    return _URGENCY[finding.status], margin


def verdict_of(findings: list[Finding] | tuple[Finding, ...]) -> Verdict:
    """Overall verdict: fail beats incomplete (something not evaluated) beats marginal beats pass.

    A waived finding makes the verdict at best marginal: the gate passes, but not cleanly.
    """
    statuses = {finding.status for finding in findings}
    if Status.FAIL in statuses:
        return Verdict.FAIL
    if Status.NOT_EVALUATED in statuses or not findings:
        return Verdict.INCOMPLETE
    if Status.MARGINAL in statuses or Status.WAIVED in statuses:
        return Verdict.MARGINAL
    return Verdict.PASS


def exit_code(verdict: Verdict) -> int:
    """Process exit code for a review gate: 0 pass or marginal, 1 fail or incomplete."""
    return 0 if verdict in (Verdict.PASS, Verdict.MARGINAL) else 1
