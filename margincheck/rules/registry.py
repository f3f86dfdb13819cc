"""The rule registry: every rule registers itself here under its stable id (design.md section 5)."""

from __future__ import annotations

import dataclasses
import functools
from dataclasses import dataclass
from enum import Enum
from typing import Callable

import numpy as np

from margincheck.design import Capacitor, Design, Switch
from margincheck.findings import Finding
from margincheck.rules.sampling import CellNotSampled, SamplePlan, sampling
from margincheck.technology import in_terms_of, is_igbt

__all__ = ["RULES", "Rule", "Scope", "evaluate_at", "evaluate_design", "rule", "subjects_of"]


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
            return design.remembered((rule_id, subject.ref),
                                     lambda: _naming_technology_factors(check(subject, design), subject, design))

        RULES[rule_id] = Rule(rule_id, title, scope, once_per_design)
        return once_per_design

    return register


def _naming_technology_factors(finding: Finding | None, subject: Switch | Capacitor,
                               design: Design) -> Finding | None:
    """``finding`` with a note naming the policy's factors for the technology of ``subject`` (a switch whose
    technology the policy sets factors for), so that the report says which factor applied."""
    if finding is None or not isinstance(subject, Switch):
        return finding
    technology = subject.device.technology
    overrides = design.policy.overrides_for(technology)
    if not overrides:
        return finding
    factors = ", ".join(f"{key} {value:g}{' K' if key == 'tj' else ''}" for key, value in overrides.items())
    note = f"policy {design.policy.name}: its {technology} factors applied to {subject.ref} ({factors})"
    return dataclasses.replace(finding, note="; ".join(part for part in (finding.note, note) if part))


def subjects_of(design: Design, scope: Scope) -> tuple[Switch, ...] | tuple[Capacitor, ...]:
    return design.switches if scope is Scope.SWITCH else design.capacitors


def evaluate_design(design: Design) -> list[Finding]:
    """Every registered rule on every subject of its scope (a rule returns None where it does not apply), each
    finding in its subject's terms (V_CE and v_ce_max for an IGBT)."""
    findings = (_in_subject_terms(registered.check(subject, design), subject)
                for registered in RULES.values() for subject in subjects_of(design, registered.scope))
    return [finding for finding in findings if finding is not None]


def _in_subject_terms(finding: Finding | None, subject: Switch | Capacitor) -> Finding | None:
    """An IGBT's finding with its texts and its own device's fields named as the IGBT names them (the rules
    speak of V_DS and v_ds_max); the fields of another device (a MOSFET partner) keep their names."""
    device = getattr(subject, "device", None)
    if finding is None or device is None or not is_igbt(device.technology):
        return finding
    words = functools.partial(in_terms_of, device.technology)
    own = f"devices.{device.name}."

    def field(path: str) -> str:
        return own + words(path.removeprefix(own)) if path.startswith(own) else path

    return dataclasses.replace(
        finding, basis=words(finding.basis), note=words(finding.note), caution=words(finding.caution),
        source=words(finding.source), missing=tuple(map(field, finding.missing)),
        fields={name: field(path) for name, path in finding.fields.items()})


def evaluate_at(design: Design, plan: SamplePlan) -> tuple[dict[tuple[str, str], np.ndarray], set[tuple[str, str]]]:
    """Every rule at the points of ``plan`` instead of its corners (margincheck.rules.sampling): the margin at
    each point by rule id and subject ref, and the rules and subjects that need the cell simulation where the
    plan simulates no point (they record nothing)."""
    fresh = dataclasses.replace(design)  # an empty memo: nothing of another evaluation is reused
    needs_cell: set[tuple[str, str]] = set()
    with sampling(plan) as active:
        for registered in RULES.values():
            for subject in subjects_of(fresh, registered.scope):
                try:
                    registered.check(subject, fresh)
                except CellNotSampled:
                    active.forget(registered.id, subject.ref)
                    needs_cell.add((registered.id, subject.ref))
    return active.margins, needs_cell
