"""Derating policies: the fraction of each rating a design may use (design.md section 4)."""

from __future__ import annotations

from dataclasses import dataclass, replace
from pathlib import Path

__all__ = ["BUILT_IN_POLICIES", "DEFAULT_POLICY", "FACTOR_KEYS", "Policy", "policy_from_mapping"]

#: Policy keys that are plain fractions of a rating or of the limit (the rest are offsets).
FACTOR_KEYS = ("peak_voltage", "steady_voltage", "gate_voltage", "pulse_current", "capacitor_voltage",
               "spurious_turn_on", "cmti", "soa", "short_circuit", "marginal_band")


@dataclass(frozen=True)
class Policy:
    """Derating factors and offsets. Temperatures are differences in kelvin; the cosmic-ray budget is a failure
    rate per switch [1/s], None when the policy sets none."""

    name: str
    basis: str
    peak_voltage: float
    steady_voltage: float
    gate_voltage: float
    pulse_current: float
    capacitor_voltage: float
    tj: float
    marginal_band: float
    spurious_turn_on: float = 0.80
    cmti: float = 0.50
    soa: float = 0.80
    short_circuit: float = 0.50
    cosmic_ray_fit_budget: float | None = None
    file: Path | None = None
    sha256: str | None = None


DEFAULT_POLICY = Policy(
    name="default",
    basis="common practice (no single published source); not a substitute for the derating document "
    "your project is bound by",
    peak_voltage=0.80,
    steady_voltage=0.75,
    gate_voltage=0.90,
    pulse_current=0.80,
    capacitor_voltage=0.80,
    tj=25.0,
    marginal_band=0.05,
)

#: Policies known by name (``derating: default`` or ``--policy default``).
BUILT_IN_POLICIES = {DEFAULT_POLICY.name: DEFAULT_POLICY}


def policy_from_mapping(values: dict[str, float], name: str, basis: str, file: Path, sha256: str) -> Policy:
    """A policy file's values laid over the default policy (keys left out keep the default value)."""
    return replace(DEFAULT_POLICY, name=name, basis=basis, file=file, sha256=sha256, **values)
