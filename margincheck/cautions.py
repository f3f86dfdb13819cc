"""The safety cautions every report ends with (design.md section 7)."""

from __future__ import annotations

from margincheck.design import Design
from margincheck.findings import Finding
from margincheck.units import format_value

__all__ = ["batch_cautions", "cautions_for"]


def _stored_energy_caution(design: Design, findings: list[Finding]) -> str:
    energies = [(finding.subject, finding.details["stored_energy"].value)
                for finding in findings if "stored_energy" in finding.details]
    highest_bus = format_value(design.conditions.bus_voltage.high, "voltage")
    if energies:
        listed = ", ".join(f"{ref} {format_value(energy, 'energy')}" for ref, energy in energies)
        total = format_value(sum(energy for _, energy in energies), "energy")
        figure = f"the listed bus capacitors store {total} at {highest_bus} ({listed})"
    else:
        figure = "no bus capacitance is given, so the stored energy was not computed: treat the bus as charged"
    return (f"LETHAL VOLTAGE AND STORED ENERGY: this cell runs at up to {highest_bus}; {figure}. "
            "Capacitors stay charged after the supply is off.")


def _standard_caution(design: Design) -> str:
    if design.standard:
        return (f"This project names {design.standard} as its governing standard: verify every limit here "
                "against the edition you are bound by, and against local electrical codes, which take precedence.")
    return ("The design names no governing standard (design.standard). The safety standard the project is bound "
            "by (for example IEC 62477-1 for power electronic converter systems) and local electrical codes take "
            "precedence over anything this report says.")


_HANDLING = (
    "Discharge the bus through a rated resistor and verify zero volts with a meter rated for the voltage "
    "before touching any part of the cell; the discharge resistor or bleeder can fail open.",
    "Run double-pulse and first power-up tests inside an interlocked enclosure, with the supply current-limited, "
    "an emergency stop within reach, and no one working alone.",
    "These are first-order worst-case estimates from the design file, not measurements: confirm overshoot, "
    "gate levels and temperatures on the hardware before trusting a margin.",
)
_RESPONSIBILITY = ("Final responsibility for the design and the test rests with licensed or otherwise qualified "
                   "review, not with this tool.")


def cautions_for(design: Design, findings: list[Finding]) -> list[str]:
    """The cautions for one checked design, the stored-energy figure first."""
    return [
        _stored_energy_caution(design, findings),
        *_HANDLING,
        f"The derating factors are policy ({design.policy.name}: {design.policy.basis}), not physics; "
        "a pass means only that the estimates stay inside that policy.",
        _standard_caution(design),
        _RESPONSIBILITY,
    ]


def batch_cautions(first_cautions: list[str]) -> list[str]:
    """The cautions of a batch summary, after each design's stored-energy caution (``first_cautions``)."""
    return [
        *first_cautions,
        *_HANDLING,
        "The derating factors are each design's policy (named in its report), not physics.",
        "Each design's governing standard (named in its report, or the one its project is bound by, such as "
        "IEC 62477-1) and local electrical codes take precedence over anything this summary says.",
        _RESPONSIBILITY,
    ]
