"""The rule registry: every rule registers itself here under its stable id (design.md section 5)."""

from __future__ import annotations

import functools
from dataclasses import dataclass
from enum import Enum
from typing import Callable

from margincheck.design import Capacitor, Design, Switch
from margincheck.findings import Finding

__all__ = ["RULES", "Rule", "Scope", "evaluate_design", "rule"]


class Scope(str, Enum):
    """What a rule's findings are about: one finding per switch, or one per capacitor."""

    SWITCH = "switch"
    CAPACITOR = "capacitor"


@dataclass(frozen=True)
class Rule:
    """A registered rule: id (contract), a one-line title, its scope and the function that checks a subject."""

    id: str
    title: str
    scope: Scope
    check: Callable[[Switch | Capacitor, Design], Finding | None]


#: Registered rules by id, in registration order (the order of the rule catalogue).
RULES: dict[str, Rule] = {}


def rule(rule_id: str, *, title: str, scope: Scope) -> Callable:
    """Register the decorated function as the check of rule ``rule_id``, evaluated once per design and subject."""

    def register(check: Callable[[Switch | Capacitor, Design], Finding]) -> Callable:
        if rule_id in RULES:
            raise ValueError(f"rule {rule_id!r} is registered twice")

        @functools.wraps(check)
        def once_per_design(subject: Switch | Capacitor, design: Design) -> Finding | None:
            # Rules read each other's findings (the SOA reads the turn-off peak...): evaluate each only once.
            return design.remembered((rule_id, subject.ref), lambda: check(subject, design))

        RULES[rule_id] = Rule(rule_id, title, scope, once_per_design)
        return once_per_design

    return register


def _subjects(design: Design, scope: Scope) -> tuple[Switch, ...] | tuple[Capacitor, ...]:
    return design.switches if scope is Scope.SWITCH else design.capacitors


def evaluate_design(design: Design) -> list[Finding]:
    """Every registered rule on every subject of its scope (a rule returns None where it does not apply)."""
    findings = (registered.check(subject, design)
                for registered in RULES.values() for subject in _subjects(design, registered.scope))
    return [finding for finding in findings if finding is not None]
