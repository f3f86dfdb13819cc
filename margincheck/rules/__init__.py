"""Rules: one module per rule family, each registering its rules in :data:`registry.RULES` on import."""

from margincheck.rules import core  # noqa: F401  (registers the core rules)
from margincheck.rules.registry import RULES, evaluate_design

__all__ = ["RULES", "evaluate_design"]
