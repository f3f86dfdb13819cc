"""Which inputs move each finding's margin most: one input at a time swung across its tolerance, every other input
held at the finding's worst corner (one-at-a-time sensitivity about the worst case).

All the points every finding needs are evaluated together, through the same rules as the corners
(margincheck.rules.sampling): a point shared by several findings (the worst corner of two rules read off one
simulation) is evaluated once. Each finding's sensitivities are ranked by the swing of its margin,
|m(input at its maximum) − m(input at its minimum)|.
"""

from __future__ import annotations

import dataclasses
import math

from margincheck.design import Design
from margincheck.findings import Finding, Sensitivity
from margincheck.rules.registry import evaluate_at
from margincheck.rules.sampling import given_points

__all__ = ["with_sensitivities"]

Point = tuple[tuple[str, float], ...]


def _points(finding: Finding) -> list[Point]:
    """The finding's worst corner, then each toleranced input at its minimum and at its maximum."""
    base = {spread.key: finding.corner[name].value for name, spread in finding.spreads.items()
            if name in finding.corner}
    points = [base]
    for spread in finding.spreads.values():
        points += [base | {spread.key: spread.low}, base | {spread.key: spread.high}]
    return [tuple(sorted(point.items())) for point in points]


def _wanted(finding: Finding) -> bool:
    return finding.margin is not None and math.isfinite(finding.margin) and bool(finding.spreads)


def with_sensitivities(design: Design, findings: list[Finding] | tuple[Finding, ...]) -> list[Finding]:
    """``findings`` with their sensitivities filled in (those without a margin or without a toleranced input
    are returned as they are)."""
    requests = {index: _points(finding) for index, finding in enumerate(findings) if _wanted(finding)}
    unique = list(dict.fromkeys(point for points in requests.values() for point in points))
    if not unique:
        return list(findings)
    position = {point: number for number, point in enumerate(unique)}
    margins, _ = evaluate_at(design, given_points([dict(point) for point in unique]))
    result = list(findings)
    for index, points in requests.items():
        finding = findings[index]
        at = margins.get((finding.rule, finding.subject))
        if at is None:
            continue
        value = [float(at[position[point]]) if position[point] < at.size else math.nan for point in points]
        ranked = [Sensitivity(name, finding.fields.get(name, name), finding.corner[name].kind, spread.low,
                              spread.high, value[1 + 2 * number], value[2 + 2 * number])
                  for number, (name, spread) in enumerate(finding.spreads.items())]
        ranked.sort(key=lambda item: -item.swing if math.isfinite(item.swing) else math.inf)
        result[index] = dataclasses.replace(finding, sensitivities=tuple(ranked))
    return result
