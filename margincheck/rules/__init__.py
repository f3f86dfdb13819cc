"""Rules: one module per rule family, each registering its rules in :data:`registry.RULES` on import."""

from margincheck.rules import core, soa, thermal, transients  # noqa: F401  (importing registers the rules)
from margincheck.rules.registry import RULES, evaluate_design

__all__ = ["RULES", "evaluate_design"]
