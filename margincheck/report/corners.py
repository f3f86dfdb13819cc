"""What a report says about the inputs behind its findings: the toleranced inputs of a worst corner, each
marked by where it sits in its interval; the exact inputs, once per design; and the subjects whose findings are
identical in every input and result (two switches of one leg built alike), reported together."""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import TYPE_CHECKING, Collection, Iterable

from margincheck.findings import Finding, Quantity
from margincheck.report.common import STATUS_ORDER, subject_title
from margincheck.units import format_value

if TYPE_CHECKING:
    from margincheck.checking import Report

__all__ = ["SubjectGroup", "corner_marks", "exact_inputs", "subject_groups"]

#: Significant figures two values must agree to for subjects to count as identical (far below any tolerance)
_SAME_DIGITS = 9


def _place(value: float, low: float, high: float, nominal: float) -> str:
    """Where ``value`` sits in its interval: ``min``, ``max``, ``nominal`` or ``interior``."""
    for name, end in (("min", low), ("max", high), ("nominal", nominal)):
        if math.isfinite(end) and math.isclose(value, end, rel_tol=1e-9, abs_tol=1e-30):
            return name
    return "interior"


def corner_marks(finding: Finding, exact: Collection[str], values: bool = True) -> dict[str, list[str]]:
    """The inputs of a finding's worst corner but the ``exact`` ones (listed once: :func:`exact_inputs`),
    grouped by where each sits in its interval: ``{"max": ["bus_voltage 850 V", ...], "min": [...],
    "interior": ["v_gs_th 2.7 V"]}``, and under ``"with"`` any whose interval the finding does not carry.
    Without ``values`` the ends are named alone; a point between the ends always has its value."""
    marks: dict[str, list[str]] = {}
    for name, item in finding.corner.items():
        spread = finding.spreads.get(name)
        if name in exact and spread is None:
            continue
        place = "with" if spread is None else _place(item.value, spread.low, spread.high, spread.nominal)
        shown = values or place in ("interior", "with")
        marks.setdefault(place, []).append(f"{name} {format_value(item.value, item.kind)}" if shown else name)
    return marks


def exact_inputs(findings: Iterable[Finding]) -> dict[str, dict[str, str]]:
    """The inputs that take one value in every corner, each shown once: by subject, the names and values;
    the key ``""`` holds those with the same value for every subject, listed once per design."""
    findings = list(findings)
    toleranced = {name for finding in findings for name in finding.spreads}
    values: dict[str, dict[str, dict[str, None]]] = {}
    for finding in findings:
        for name, item in finding.corner.items():
            if name not in toleranced:
                texts = values.setdefault(name, {}).setdefault(finding.subject, {})
                texts[format_value(item.value, item.kind)] = None
    listed: dict[str, dict[str, str]] = {}
    for name, by_subject in values.items():
        shown = {subject: " or ".join(texts) for subject, texts in by_subject.items()}
        if len(set(shown.values())) == 1:
            shown = {"": next(iter(shown.values()))}
        for subject, text in shown.items():
            listed.setdefault(subject, {})[name] = text
    return listed


@dataclass(frozen=True)
class SubjectGroup:
    """Subjects reported together: one, or several whose findings agree in every input and result."""

    subjects: tuple[str, ...]
    title: str
    findings: tuple[Finding, ...]

    @property
    def label(self) -> str:
        """``Q1`` or ``Q1, Q3``."""
        return ", ".join(self.subjects)


def _number(value: float | None) -> str:
    return "none" if value is None else f"{value:.{_SAME_DIGITS}g}"


def _quantities(quantities: dict[str, Quantity]) -> tuple:
    return tuple(sorted((name, item.kind, _number(item.value)) for name, item in quantities.items()))


def _fingerprint(findings: list[Finding]) -> tuple:
    """Everything a subject's report says apart from its name: statuses, values, limits, margins, corners,
    intermediate results, what is missing and any waiver."""
    return tuple(sorted((finding.rule, finding.status.value, _number(finding.value), _number(finding.limit),
                         _number(finding.margin), _quantities(finding.corner), _quantities(finding.details),
                         finding.missing, finding.waiver) for finding in findings))


def subject_groups(report: Report) -> list[SubjectGroup]:
    """Findings by subject, subjects identical in every input and result merged into one group; groups with
    the worst status first, findings worst first in each (ties keep the design's and the catalogue's order)."""
    by_subject: dict[str, list[Finding]] = {}
    for finding in report.findings:
        by_subject.setdefault(finding.subject, []).append(finding)
    merged: dict[tuple, list[str]] = {}
    for subject, findings in by_subject.items():
        kind = subject_title(report, subject).partition(": ")[2]
        merged.setdefault((kind, _fingerprint(findings)), []).append(subject)
    groups = []
    for (kind, _), subjects in merged.items():
        findings = sorted(by_subject[subjects[0]], key=lambda finding: STATUS_ORDER[finding.status])
        groups.append(SubjectGroup(tuple(subjects), kind, tuple(findings)))
    return sorted(groups, key=lambda group: STATUS_ORDER[group.findings[0].status])
