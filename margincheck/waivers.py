"""Waivers: deviations accepted on the record in the design file, applied to the findings of a check.

A valid waiver turns a failing or not-evaluated finding into ``waived``: it is counted and listed, and it does
not fail the gate. An expired waiver waives nothing (the finding keeps failing, and says why). A waiver that
matches no finding, or whose finding passes, is reported so that stale waivers get cleaned up.
"""

from __future__ import annotations

import dataclasses
import datetime
from dataclasses import dataclass
from enum import Enum

from margincheck.design import Waiver
from margincheck.findings import Finding, Status

__all__ = ["WaiverOutcome", "WaiverState", "apply_waivers"]

_WAIVABLE = (Status.FAIL, Status.NOT_EVALUATED)


class WaiverState(str, Enum):
    """What became of one waiver in a check."""

    APPLIED = "applied"
    EXPIRED = "expired"
    NOT_NEEDED = "not-needed"
    UNMATCHED = "unmatched"
    IGNORED = "ignored"


@dataclass(frozen=True)
class WaiverOutcome:
    """A waiver and what it did, with a sentence for the report."""

    waiver: Waiver
    state: WaiverState
    message: str


def _record(waiver: Waiver) -> str:
    return f"accepted by {waiver.accepted_by}, valid until {waiver.expires.isoformat()}: {waiver.reason}"


def _outcome(waiver: Waiver, finding: Finding | None, today: datetime.date) -> WaiverOutcome:
    if finding is None:
        return WaiverOutcome(waiver, WaiverState.UNMATCHED,
                             f"matches no finding: there is no {waiver.rule} finding for {waiver.subject}")
    if finding.status not in _WAIVABLE:
        return WaiverOutcome(waiver, WaiverState.NOT_NEEDED,
                             f"not needed: {waiver.rule} for {waiver.subject} is {finding.status.value}")
    if today > waiver.expires:
        return WaiverOutcome(waiver, WaiverState.EXPIRED, f"expired on {waiver.expires.isoformat()}: "
                                                          f"{waiver.rule} for {waiver.subject} counts again")
    return WaiverOutcome(waiver, WaiverState.APPLIED, f"waives {waiver.rule} for {waiver.subject} "
                                                      f"({finding.status.value}), {_record(waiver)}")


def apply_waivers(findings: list[Finding], waivers: tuple[Waiver, ...], today: datetime.date,
                  ignore: bool = False) -> tuple[list[Finding], list[WaiverOutcome]]:
    """The findings with every valid waiver applied, and what became of each waiver.

    With ``ignore`` (``--no-waivers``) nothing is waived and every waiver is listed as ignored.
    """
    if ignore:
        return findings, [WaiverOutcome(waiver, WaiverState.IGNORED, "ignored (--no-waivers)") for waiver in waivers]
    by_key = {(finding.rule, finding.subject): index for index, finding in enumerate(findings)}
    result, outcomes = list(findings), []
    for waiver in waivers:
        index = by_key.get((waiver.rule, waiver.subject))
        outcome = _outcome(waiver, None if index is None else result[index], today)
        outcomes.append(outcome)
        if outcome.state is WaiverState.APPLIED:
            result[index] = dataclasses.replace(result[index], status=Status.WAIVED, waiver=_record(waiver),
                                                waived_status=result[index].status)
        elif outcome.state is WaiverState.EXPIRED:
            result[index] = dataclasses.replace(result[index], waiver=f"EXPIRED waiver ({_record(waiver)})")
    return result, outcomes
