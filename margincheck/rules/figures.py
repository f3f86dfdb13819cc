"""Switching figures of each switch (di/dt, dv/dt, transition times, energies, ring, both overshoot estimates)
at the worst case over its tolerance corners and at nominal, and the what-if on the source connection.

These are not pass/fail findings: they are what a reviewer reads beside them, and what changes when a
package with a shared source lead is swapped for one with a Kelvin source (or back).
"""

from __future__ import annotations

import dataclasses
from dataclasses import dataclass

import numpy as np

from margincheck.design import Design, Switch
from margincheck.findings import Quantity
from margincheck.intervals import Interval, Side, corner_grid
from margincheck.physics.losses import turn_off_energy, turn_on_energy
from margincheck.rules.switching_model import (
    FIGURE_KINDS,
    OPPOSITE,
    EdgeModel,
    gate_model_overshoot,
    inputs_for,
    nominal_grid,
    overshoot_inputs,
)

__all__ = ["FIGURES", "SwitchingFigures", "switching_figures", "with_other_source_connection"]

#: The figures in the order they are shown; the worst case of a time is its smallest value (the fastest
#: edge), of every other figure its largest.
FIGURES = ("turn_off_di_dt", "turn_on_di_dt", "turn_off_dv_dt", "turn_on_dv_dt", "current_rise_time",
           "current_fall_time", "voltage_rise_time", "voltage_fall_time", "turn_on_energy", "turn_off_energy",
           "ring_frequency", "first_order_peak", "resonant_peak")
_TURN_ON = {"gate_drive.r_on": Side.MIN}


@dataclass(frozen=True)
class SwitchingFigures:
    """One switch's figures: worst over the corners and at nominal (SI values with their kinds)."""

    subject: str
    worst: dict[str, Quantity]
    nominal: dict[str, Quantity]
    notes: tuple[str, ...] = ()


def _figures_at(switch: Switch, design: Design, grid: dict, notes: list[str]) -> dict[str, np.ndarray]:
    edge, opposite = EdgeModel(grid, switch), EdgeModel(grid, design.opposite_of(switch), OPPOSITE)
    bus, current = grid["bus_voltage"], grid["turn_off_current"]
    figures = gate_model_overshoot(switch, design, grid)
    figures["turn_on_di_dt"] = edge.turn_on_di_dt()
    figures["current_rise_time"] = edge.current_rise_time(current)
    figures["turn_off_energy"] = turn_off_energy(bus, current, figures["voltage_rise_time"],
                                                 figures["current_fall_time"])
    if not edge.has("c_rss"):
        notes.append("c_rss (or q_gd) not given: the voltage rise is load-limited, and there is no turn-on "
                     "voltage fall or E_on")
        return figures
    figures["turn_on_dv_dt"], figures["voltage_fall_time"] = edge.turn_on_fall(bus, current)
    recovery = opposite.switch.device.recovery if opposite.switch is not None else None
    if recovery is None and opposite.switch is not None:
        notes.append(f"E_on leaves out the recovery charge of {opposite.switch.ref}'s diode (not given)")
    charge = recovery.charge if recovery is not None else 0.0
    figures["turn_on_energy"] = turn_on_energy(bus, current, figures["current_rise_time"],
                                               figures["voltage_fall_time"], charge, edge.output_energy(bus))
    return figures


def _reduce(values: np.ndarray, largest: bool) -> float:
    finite = values[np.isfinite(values)]
    if finite.size < values.size or finite.size == 0:
        return float("nan")  # a corner the model cannot make: no figure rather than a partial one
    return float(finite.max() if largest else finite.min())


def switching_figures(switch: Switch, design: Design) -> SwitchingFigures | None:
    """The figures of ``switch``, or None when the gate-drive model lacks an input (see its findings)."""
    return design.remembered(("switching figures", switch.ref), lambda: _switching_figures(switch, design))


def _switching_figures(switch: Switch, design: Design) -> SwitchingFigures | None:
    if switch.turn_off_di_dt is not None:
        return None
    notes: list[str] = ["figures at the turn-off current (conditions.turn_off_current), not at an operating "
                        "point: E_on and E_off are per edge at that current"]
    inputs = overshoot_inputs(switch, design, notes) | inputs_for(switch, _TURN_ON, notes)
    if any(item.interval is None for item in inputs.values()):
        return None
    corners = corner_grid({name: item.interval for name, item in inputs.items()})
    nominal = nominal_grid(inputs)
    # The nominal point rides along as one more corner, so that every model (the ring solver above all)
    # runs once for both columns.
    grid = {name: np.concatenate([corners[name], nominal[name]]) for name in corners}
    with np.errstate(all="ignore"):
        figures = _figures_at(switch, design, grid, notes)
    shown = [name for name in FIGURES if name in figures]
    return SwitchingFigures(
        subject=switch.ref,
        worst={name: Quantity(_reduce(figures[name][:-1], not name.endswith("_time")), FIGURE_KINDS[name])
               for name in shown},
        nominal={name: Quantity(float(figures[name][-1]), FIGURE_KINDS[name]) for name in shown},
        notes=tuple(dict.fromkeys(notes)),
    )


def with_other_source_connection(design: Design, common_source_inductance: float) -> Design:
    """The design with every switch given the other source connection (kelvin <-> shared) and the stated
    common-source inductance [H], for a side-by-side comparison of the two package styles."""
    other = {"kelvin": "shared", "shared": "kelvin"}
    switches = tuple(dataclasses.replace(
        switch, source_connection=other.get(switch.source_connection or "shared", "kelvin"),
        common_source_inductance=Interval.exact(common_source_inductance)) for switch in design.switches)
    return dataclasses.replace(design, switches=switches)
