"""Rules: one module per rule family, each registering its rules in :data:`registry.RULES` on import."""

from importlib import import_module

from margincheck.rules.registry import RULES, evaluate_design

__all__ = ["FAMILIES", "RULES", "evaluate_design"]

#: The rule families in the order of the rule catalogue (design.md section 5); importing one registers its
#: rules, so this order is the order of RULES, of the reports' ties and of the SARIF rule list.
FAMILIES = ("core", "transients", "thermal", "soa", "cosmic_ray")
for _family in FAMILIES:
    import_module(f"margincheck.rules.{_family}")
