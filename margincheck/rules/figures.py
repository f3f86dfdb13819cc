"""Switching figures of each switch (peak, di/dt, dv/dt, transition times, energies, ring, recovery) measured
on the cell simulation at one worst-case corner and at nominal, and the what-if on the source connection.

These are not pass/fail findings: they are what a reviewer reads beside them, and what changes when a
package with a shared source lead is swapped for one with a Kelvin source (or back).
"""

from __future__ import annotations

import dataclasses
from dataclasses import dataclass

import numpy as np

from margincheck.design import Design, Switch
from margincheck.findings import Quantity
from margincheck.intervals import Interval
from margincheck.rules.cell_model import cell_run

__all__ = ["FIGURES", "SwitchingFigures", "switching_figures", "with_other_source_connection"]

#: The figures in the order they are shown: (edge, figure measured on the simulated waveforms, kind).
FIGURES = {
    "turn_off_peak": ("turn_off", "peak_voltage", "voltage"),
    "turn_off_di_dt": ("turn_off", "di_dt_max", "current_slew_rate"),
    "turn_off_di_dt_10_90": ("turn_off", "di_dt_10_90", "current_slew_rate"),
    "turn_off_dv_dt": ("turn_off", "dv_dt_max", "voltage_slew_rate"),
    "current_fall_time": ("turn_off", "current_fall_time", "time"),
    "voltage_rise_time": ("turn_off", "voltage_rise_time", "time"),
    "turn_off_energy": ("turn_off", "turn_off_energy", "energy"),
    "ring_frequency": ("turn_off", "ring_frequency", "frequency"),
    "ring_quality": ("turn_off", "ring_quality", "dimensionless"),
    "turn_on_di_dt": ("turn_on", "di_dt_max", "current_slew_rate"),
    "turn_on_di_dt_10_90": ("turn_on", "di_dt_10_90", "current_slew_rate"),
    "turn_on_dv_dt": ("turn_on", "dv_dt_max", "voltage_slew_rate"),
    "current_rise_time": ("turn_on", "current_rise_time", "time"),
    "voltage_fall_time": ("turn_on", "voltage_fall_time", "time"),
    "turn_on_energy": ("turn_on", "turn_on_energy", "energy"),
    "peak_reverse_current": ("turn_on", "peak_reverse_current", "current"),
}


@dataclass(frozen=True)
class SwitchingFigures:
    """One switch's figures, every one from the same simulated corner: ``worst`` at the corner of the highest
    turn-off peak (named in ``corner``), ``nominal`` at the nominal point."""

    subject: str
    worst: dict[str, Quantity]
    nominal: dict[str, Quantity]
    notes: tuple[str, ...] = ()
    corner: dict[str, Quantity] | None = None


def switching_figures(switch: Switch, design: Design) -> SwitchingFigures | None:
    """The figures of ``switch``, or None when the cell cannot be simulated (its findings say what is missing)."""
    return design.remembered(("switching figures", switch.ref), lambda: _switching_figures(switch, design))


def _switching_figures(switch: Switch, design: Design) -> SwitchingFigures | None:
    run = cell_run(switch, design)
    if run.missing:
        return None
    peaks = run.figure("turn_off", "peak_voltage")
    if not np.isfinite(peaks).any():
        return None
    worst = int(np.nanargmax(peaks))
    kinds = {name: item.kind for name, item in run.inputs.items()}
    at = {name: Quantity(float(values[worst]), kinds[name]) for name, values in run.corners.items()}

    def column(index: int) -> dict[str, Quantity]:
        return {name: Quantity(float(run.edges[edge][figure][index]), kind)
                for name, (edge, figure, kind) in FIGURES.items()}

    notes = ("every figure of the worst-case column is taken at one corner, that of the highest simulated turn-off "
             "peak (listed below); the figures are at the turn-off current (conditions.turn_off_current)",
             *run.notes)
    return SwitchingFigures(subject=switch.ref, worst=column(worst), nominal=column(-1),
                            notes=tuple(dict.fromkeys(notes)), corner=at)


def with_other_source_connection(design: Design, common_source_inductance: float) -> Design:
    """The design with every switch given the other source connection (kelvin <-> shared) and the stated
    common-source inductance [H], for a side-by-side comparison of the two package styles."""
    other = {"kelvin": "shared", "shared": "kelvin"}
    switches = tuple(dataclasses.replace(
        switch, source_connection=other.get(switch.source_connection or "shared", "kelvin"),
        common_source_inductance=Interval.exact(common_source_inductance)) for switch in design.switches)
    return dataclasses.replace(design, switches=switches)
