"""Two designs compared: their findings paired by rule and subject, ordered by the largest loss of margin, and
the input fields that differ. Reporters in ``margincheck.report.diff_report`` render the ``Comparison``.

B *regresses* when it has a fail or a not-evaluated finding that A did not have: a new finding with that
status, or one whose status was different in A. The comparison's exit code is then 1, else 0.
"""

from __future__ import annotations

import datetime
import math
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from margincheck.cautions import batch_cautions
from margincheck.checking import Report, check_file
from margincheck.design import load_design
from margincheck.errors import InputError
from margincheck.findings import Finding, Status
from margincheck.overrides import shown_value
from margincheck.rules import RULES
from margincheck.safe_text import printable

__all__ = ["Comparison", "FieldChange", "FindingChange", "compare_files", "compare_reports", "flatten"]

#: Statuses that make a gate fail: B regresses when it has one of them that A did not have.
_FAILING = (Status.FAIL, Status.NOT_EVALUATED)
#: Worst first, as the reports list statuses; a move to a lower rank is a move for the worse.
_RANK = {Status.FAIL: 0, Status.NOT_EVALUATED: 1, Status.WAIVED: 2, Status.MARGINAL: 3, Status.PASS: 4}
#: Margins (fractions of the limit) and values closer than this count as equal.
_SAME = 1e-9
#: The order changes are listed in, after the regressions: losses, other changes, gains, then the unchanged.
_GROUPS = {"regression": 0, "worse": 1, "changed": 2, "added": 2, "removed": 2, "better": 3, "unchanged": 4}


def _close(first: float | None, second: float | None) -> bool:
    if first is None or second is None:
        return first is second
    return first == second or abs(first - second) <= _SAME * max(abs(first), abs(second))


@dataclass(frozen=True)
class FindingChange:
    """One rule and subject in A (``before``) and B (``after``); either is None when the other design alone
    has the finding."""

    rule: str
    subject: str
    before: Finding | None
    after: Finding | None

    @property
    def margin_change(self) -> float | None:
        """B's margin minus A's (a fraction of the limit; negative is a loss), None unless both have one."""
        if self.before is None or self.after is None or None in (self.before.margin, self.after.margin):
            return None
        return self.after.margin - self.before.margin

    @property
    def regression(self) -> bool:
        """Whether B has a fail or not-evaluated finding here that A did not have."""
        return (self.after is not None and self.after.status in _FAILING
                and (self.before is None or self.before.status is not self.after.status))

    @property
    def direction(self) -> str:
        """``regression``, ``worse``, ``better``, ``changed``, ``added``, ``removed`` or ``unchanged``."""
        if self.regression:
            return "regression"
        if self.before is None or self.after is None:
            return "added" if self.before is None else "removed"
        change = self.margin_change
        if change is not None and abs(change) > _SAME:
            return "worse" if change < 0 else "better"
        rank_change = _RANK[self.after.status] - _RANK[self.before.status]
        if rank_change:
            return "worse" if rank_change < 0 else "better"
        same = _close(self.before.value, self.after.value) and _close(self.before.limit, self.after.limit)
        return "unchanged" if same and self.before.missing == self.after.missing else "changed"

    def sort_key(self) -> tuple[int, float]:
        """Regressions first, then by margin change, the largest loss first; changes without one last."""
        change = self.margin_change
        return _GROUPS[self.direction], math.inf if change is None else change


@dataclass(frozen=True)
class FieldChange:
    """An input field written differently in the two designs (None: not written there), as ``--set`` PATH."""

    path: str
    before: str | None
    after: str | None


@dataclass(frozen=True)
class Comparison:
    """Designs A and B checked, their paired findings (ordered), and the fields that differ."""

    a: Report
    b: Report
    changes: tuple[FindingChange, ...]
    fields: tuple[FieldChange, ...]
    cautions: tuple[str, ...]

    @property
    def regressions(self) -> tuple[FindingChange, ...]:
        """The findings where B has a fail or not-evaluated that A did not have."""
        return tuple(change for change in self.changes if change.regression)

    @property
    def exit_code(self) -> int:
        """1 when B regresses, else 0."""
        return 1 if self.regressions else 0


def _step(item: Any, index: int) -> str:
    ref = item.get("ref") if isinstance(item, dict) else None
    return f".{ref}" if isinstance(ref, str) else f"[{index}]"


def flatten(data: Any, prefix: str = "") -> dict[str, Any]:
    """Every leaf of a document by the PATH ``--set`` takes: keys dotted, list entries by ref or ``[index]``;
    a list of plain values is one leaf."""
    if isinstance(data, dict) and data:
        leaves: dict[str, Any] = {}
        for key, value in data.items():
            leaves.update(flatten(value, f"{prefix}.{key}" if prefix else str(key)))
        return leaves
    if isinstance(data, list) and any(isinstance(item, (dict, list)) for item in data):
        leaves = {}
        for index, item in enumerate(data):
            leaves.update(flatten(item, prefix + _step(item, index)))
        return leaves
    return {prefix: data}


def _field_changes(before: Any, after: Any) -> tuple[FieldChange, ...]:
    first, second = flatten(before), flatten(after)
    paths = list(first) + [path for path in second if path not in first]
    return tuple(FieldChange(path, None if path not in first else shown_value(first[path]),
                             None if path not in second else shown_value(second[path]))
                 for path in paths if first.get(path, ...) != second.get(path, ...))


def compare_reports(a: Report, b: Report) -> Comparison:
    """Pair the findings of A and B by (rule, subject) and order them: regressions, then the largest loss of
    margin first (ties keep B's order, then A's)."""
    before = {(finding.rule, finding.subject): finding for finding in a.findings}
    after = {(finding.rule, finding.subject): finding for finding in b.findings}
    keys = list(after) + [key for key in before if key not in after]
    changes = sorted((FindingChange(rule, subject, before.get((rule, subject)), after.get((rule, subject)))
                      for rule, subject in keys), key=FindingChange.sort_key)
    energy = [f"{printable(report.design.inputs[0].name)} ({side}): {report.cautions[0]}"
              for side, report in (("A", a), ("B", b))]
    return Comparison(a, b, tuple(changes), _field_changes(a.design.document.data, b.design.document.data),
                      tuple(batch_cautions(energy)))


def compare_files(path_a: Path, path_b: Path, options_a: dict, options_b: dict) -> Comparison:
    """Check A and B (``check_file`` options each) and compare them. Both are read and validated before
    either is evaluated, so that a problem in either is reported at once, together.

    Raises
    ------
    InputError
        With the problems of both designs.
    """
    problems = []
    for path, options in ((path_a, options_a), (path_b, options_b)):
        try:
            load_design(path, options.get("policy"), limits=options["limits"],
                        allowed_roots=options["allowed_roots"], overrides=options["overrides"], rule_ids=RULES)
        except InputError as error:
            problems.extend(error.problems)
    if problems:
        raise InputError(problems)
    now = datetime.datetime.now(datetime.timezone.utc)  # one date for both designs' waivers
    return compare_reports(check_file(path_a, **options_a, now=now), check_file(path_b, **options_b, now=now))
