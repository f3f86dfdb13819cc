"""Derating policies: the fraction of each rating a design may use (design.md section 4).

Built-in policies are known by name (``derating: NAME`` or ``--policy NAME``): the ``default`` policy defined
here, and the policy files shipped in ``margincheck/policies/`` (``NAME.yaml``), each of which quotes the
published derating document, edition, table and row behind every factor it sets. A policy may also set factors
for one switch technology (``technologies: {gan-hemt: {peak_voltage: 0.9}}``); they apply to the switches of
that technology only.
"""

from __future__ import annotations

from dataclasses import dataclass, replace
from pathlib import Path

__all__ = ["BUILT_IN_POLICIES", "DEFAULT_POLICY", "FACTOR_KEYS", "SHIPPED_POLICY_FOLDER", "SWITCH_KEYS", "Policy",
           "policy_from_mapping", "shipped_policy_file", "shipped_policy_names"]

#: Policy keys that are plain fractions of a rating or of the limit (the rest are offsets).
FACTOR_KEYS = ("peak_voltage", "steady_voltage", "gate_voltage", "pulse_current", "capacitor_voltage",
               "spurious_turn_on", "cmti", "soa", "short_circuit", "marginal_band")

#: Policy keys that limit a switch, and so may be set per switch technology (``technologies:``).
SWITCH_KEYS = ("peak_voltage", "steady_voltage", "gate_voltage", "pulse_current", "spurious_turn_on", "cmti",
               "soa", "short_circuit", "tj")

#: Where the policy files known by name are shipped (inside the package).
SHIPPED_POLICY_FOLDER = Path(__file__).resolve().parent / "policies"


@dataclass(frozen=True)
class Policy:
    """Derating factors and offsets. Temperatures are differences in kelvin; the cosmic-ray budget is a failure
    rate per switch [1/s], None when the policy sets none.

    ``technologies`` holds the factors set for one switch technology, as (technology, ((key, value), ...))
    pairs; ``for_technology`` lays them over the policy's own.
    """

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
    technologies: tuple[tuple[str, tuple[tuple[str, float], ...]], ...] = ()
    file: Path | None = None
    sha256: str | None = None

    def overrides_for(self, technology: str) -> dict[str, float]:
        """The factors this policy sets for switches of ``technology`` (empty when it sets none)."""
        return dict(dict(self.technologies).get(technology, ()))

    def for_technology(self, technology: str) -> Policy:
        """This policy as it applies to a switch of ``technology``: its overrides laid over the policy's own."""
        overrides = self.overrides_for(technology)
        return replace(self, **overrides) if overrides else self


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

#: Policies defined in code and known by name (``derating: default`` or ``--policy default``).
BUILT_IN_POLICIES = {DEFAULT_POLICY.name: DEFAULT_POLICY}


def shipped_policy_names() -> tuple[str, ...]:
    """Names of the policy files shipped with margincheck (each file's name without ``.yaml``), sorted."""
    return tuple(sorted(path.stem for path in SHIPPED_POLICY_FOLDER.glob("*.yaml")))


def shipped_policy_file(name: str) -> Path | None:
    """The shipped policy file called ``name``, or None when no shipped policy has that name."""
    return SHIPPED_POLICY_FOLDER / f"{name}.yaml" if name in shipped_policy_names() else None


def policy_from_mapping(values: dict[str, float], name: str, basis: str, file: Path, sha256: str,
                        technologies: dict[str, dict[str, float]] | None = None) -> Policy:
    """A policy file's values laid over the default policy (keys left out keep the default value); the
    ``technologies`` factors apply to switches of that technology, over the file's own values."""
    per_technology = tuple((technology, tuple(factors.items())) for technology, factors in (technologies or {}).items())
    return replace(DEFAULT_POLICY, name=name, basis=basis, file=file, sha256=sha256, technologies=per_technology,
                   **values)
