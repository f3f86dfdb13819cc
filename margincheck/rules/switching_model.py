"""The inputs and vectorised models of one switch's edges, shared by the switching rules and the reports.

Each rule asks for the inputs it reads with the end its worst case needs (``inputs_for``); a switch's inputs
are named as in the design (``v_gs_th``, ``gate_drive.r_off``...) and, for the opposite switch of the leg,
with the prefix ``opposite.``. ``EdgeModel`` reads one switch's values out of a corner grid and evaluates the
physics of its edges on every corner at once.
"""

from __future__ import annotations

from typing import Callable, Mapping

import numpy as np

from margincheck.building import CapacitanceCurve
from margincheck.design import Design, Switch
from margincheck.errors import format_path
from margincheck.intervals import Interval, Side
from margincheck.physics.capacitance import capacitance_at
from margincheck.physics.switching import gate_loop_time_constant, miller_plateau_voltage, turn_off_di_dt
from margincheck.rules.worst_case import Input

__all__ = ["EdgeModel", "OPPOSITE", "design_inputs", "inputs_for", "nominal_grid"]

OPPOSITE = "opposite."

_REFERENCE_TEMPERATURE = 298.15  # 25 degC, where datasheets state the threshold


#: Inputs that may be left out, with the unit shown when they are then taken as 0. Zero is only assumed for a
#: rule whose worst case needs the input's minimum (the fastest edge); where the maximum is worst, a missing
#: value stays missing and the rule is not evaluated.
_ZERO_WHEN_ABSENT = {"r_g_internal": "ohm", "common_source_inductance": "nH"}


def _assumed_zero(interval: Interval | None, name: str, side: Side, notes: list[str]) -> Interval | None:
    """A missing input taken as 0 where 0 is the conservative end (``side`` is MIN), and said so."""
    if interval is not None or name not in _ZERO_WHEN_ABSENT or side is not Side.MIN:
        return interval
    notes.append(f"{name} not given: taken as 0 {_ZERO_WHEN_ABSENT[name]}, which gives the fastest edge")
    return Interval.exact(0.0)


def hot_threshold(switch: Switch, notes: list[str]) -> Interval | None:
    """The threshold at the hottest junction: given at a hot T_j, or extrapolated with its coefficient."""
    device = switch.device
    if device.v_gs_th_hot is not None:
        if device.t_j_max is not None and device.v_gs_th_hot_t_j is not None \
                and device.v_gs_th_hot_t_j < device.t_j_max - 1.0:
            notes.append("v_gs_th_hot is stated below t_j_max; the threshold falls further when hotter")
        return device.v_gs_th_hot
    coefficient, threshold = device.v_gs_th_temperature_coefficient, device.v_gs_th
    if coefficient is None or threshold is None or device.t_j_max is None:
        return None
    shift = coefficient.scaled(max(device.t_j_max - _REFERENCE_TEMPERATURE, 0.0))  # the most negative end low
    notes.append("hot threshold extrapolated from v_gs_th at 25 degC with v_gs_th_temperature_coefficient")
    return Interval(threshold.low + shift.low, threshold.nominal + shift.nominal, threshold.high + shift.high)


def _curve_input(curve: CapacitanceCurve | None, field: str) -> tuple[Interval | None, str, str]:
    """A capacitance curve's scale as a corner input: the value itself for a flat curve, else a factor."""
    if curve is None:
        return None, "capacitance", field
    return curve.scale, "capacitance" if curve.voltages == (0.0,) else "curve_scale", field


def _available(switch: Switch, notes: list[str]) -> dict[str, Callable[[], tuple[Interval | None, str, str]]]:
    """Every per-switch input, computed on request: (interval, kind, field in the design file)."""
    device, drive = switch.device, switch.gate_drive
    place = format_path(switch.path)
    characteristics = f"devices.{device.name}.characteristics"
    return {
        "v_gs_th": lambda: (device.v_gs_th, "voltage", f"{characteristics}.v_gs_th"),
        "v_gs_th_hot": lambda: (hot_threshold(switch, notes), "voltage",
                                f"{characteristics}.v_gs_th_hot (or v_gs_th_temperature_coefficient and t_j_max)"),
        "gate_drive.on": lambda: (drive.on, "voltage", f"{place}.gate_drive.on"),
        "gate_drive.off": lambda: (drive.off, "voltage", f"{place}.gate_drive.off"),
        "gate_drive.r_on": lambda: (drive.r_on, "resistance", f"{place}.gate_drive.r_on"),
        "gate_drive.r_off": lambda: (drive.r_off, "resistance", f"{place}.gate_drive.r_off"),
        "gate_drive.r_driver": lambda: (drive.r_driver, "resistance", f"{place}.gate_drive.r_driver"),
        "r_g_internal": lambda: (device.r_g_internal, "resistance", f"{characteristics}.r_g_internal"),
        "c_iss": lambda: (device.c_iss, "capacitance", f"{characteristics}.c_iss"),
        "transconductance": lambda: (device.transconductance, "conductance", f"{characteristics}.transconductance"),
        "common_source_inductance": lambda: (switch.common_source_inductance, "inductance",
                                             f"{place}.common_source_inductance"),
        "c_rss": lambda: _curve_input(device.c_rss, f"{characteristics}.c_rss (or q_gd)"),
        "c_oss": lambda: _curve_input(device.c_oss, f"{characteristics}.c_oss"),
        "gate_loop_inductance": lambda: (switch.gate_loop_inductance, "inductance", f"{place}.gate_loop_inductance"),
        "turn_off_di_dt": lambda: (switch.turn_off_di_dt, "current_slew_rate", f"{place}.turn_off_di_dt"),
    }


def inputs_for(switch: Switch, needs: Mapping[str, Side], notes: list[str], prefix: str = "") -> dict[str, Input]:
    """The named per-switch inputs with the ends their worst case needs, keyed ``prefix + name``."""
    available = _available(switch, notes)
    inputs = {}
    for name, side in needs.items():
        interval, kind, field = available[name]()
        inputs[prefix + name] = Input(_assumed_zero(interval, name, side, notes), kind, side, field, switch.ref)
    return inputs


def design_inputs(design: Design, needs: Mapping[str, Side]) -> dict[str, Input]:
    """Inputs of the cell as a whole: bus voltage, loop inductance and resistance, turn-off current."""
    available = {
        "bus_voltage": (design.conditions.bus_voltage, "voltage", "conditions.bus_voltage"),
        "loop_inductance": (design.loop_inductance, "inductance", "commutation_loop.inductance"),
        "turn_off_current": (design.conditions.turn_off_current, "current", "conditions.turn_off_current"),
        "loop_resistance": (design.loop_resistance, "resistance", "commutation_loop.resistance"),
    }
    return {name: Input(available[name][0], available[name][1], side, available[name][2])
            for name, side in needs.items()}


def nominal_grid(inputs: Mapping[str, Input]) -> dict[str, np.ndarray]:
    """One corner at the nominal values (the middle of the known ends where no nominal is written)."""
    def middle(interval: Interval) -> float:
        if np.isfinite(interval.nominal):
            return interval.nominal
        return float(np.mean(interval.endpoints()))

    return {name: np.array([middle(item.interval)]) for name, item in inputs.items() if item.interval is not None}


class EdgeModel:
    """One switch's values at every corner of a grid, and the physics of its edges evaluated on them.

    Parameters
    ----------
    grid : dict of ndarray
        The corner grid (margincheck.intervals.corner_grid).
    switch : Switch
        Whose capacitance curves the scales in the grid multiply.
    prefix : str
        ``""`` for the checked switch, ``OPPOSITE`` for its partner.
    """

    def __init__(self, grid: Mapping[str, np.ndarray], switch: Switch | None, prefix: str = ""):
        self.grid, self.switch, self.prefix = grid, switch, prefix

    def __getitem__(self, name: str) -> np.ndarray:
        return self.grid[self.prefix + name]

    def has(self, name: str) -> bool:
        """Whether the grid holds this input of this switch."""
        return self.prefix + name in self.grid

    def _curve(self, name: str):
        curve = getattr(self.switch.device, name) if self.switch is not None else None
        if curve is None or not self.has(name):
            return lambda voltage: np.zeros_like(np.asarray(voltage, dtype=float))
        scale = self[name]

        def capacitance(voltage):
            voltage = np.asarray(voltage, dtype=float)
            factor = scale[..., None] if voltage.ndim > scale.ndim else scale  # a voltage grid per corner
            return capacitance_at(voltage, curve.voltages, curve.values) * factor

        return capacitance

    def c_oss(self, voltage):
        """Output capacitance C_oss(v) at every corner [F] (zero when not given)."""
        return self._curve("c_oss")(voltage)

    def c_rss(self, voltage):
        """Reverse transfer capacitance C_rss(v) at every corner [F] (zero when not given)."""
        return self._curve("c_rss")(voltage)

    @property
    def r_off(self) -> np.ndarray:
        """Total turn-off gate-loop resistance: external + driver output + internal [ohm]."""
        return self["gate_drive.r_off"] + self.grid.get(self.prefix + "gate_drive.r_driver", 0.0) + self["r_g_internal"]

    @property
    def r_on(self) -> np.ndarray:
        """Total turn-on gate-loop resistance [ohm]."""
        return self["gate_drive.r_on"] + self.grid.get(self.prefix + "gate_drive.r_driver", 0.0) + self["r_g_internal"]

    @property
    def shared_source_inductance(self) -> np.ndarray:
        """The common-source inductance in the gate loop: L_s for a shared source, 0 for a Kelvin source [H]."""
        shared = self.switch is not None and self.switch.source_connection == "shared"
        return self["common_source_inductance"] if shared else np.zeros_like(self["common_source_inductance"])

    def tau(self, resistance) -> np.ndarray:
        """Gate-loop time constant R_g·C_iss + g_fs·L_s (L_s of a shared source only) for a gate resistance [s]."""
        return gate_loop_time_constant(resistance, self["c_iss"], self["transconductance"],
                                       self.shared_source_inductance)

    def turn_off_di_dt(self, current) -> np.ndarray:
        """|di/dt|_off,max [A/s]; NaN where the on-level cannot carry the current."""
        rate = turn_off_di_dt(self["v_gs_th"], self["gate_drive.off"], current, self["transconductance"],
                              self.r_off, self["c_iss"], self["common_source_inductance"])
        plateau = miller_plateau_voltage(self["v_gs_th"], self["transconductance"], current)
        return np.where(self["gate_drive.on"] > plateau, rate, np.nan)
