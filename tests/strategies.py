"""Hypothesis strategies: valid designs as plain SI numbers, and writing them out in chosen units."""

from __future__ import annotations

from dataclasses import dataclass, field, replace

import yaml
from hypothesis import strategies as st

#: How each quantity kind is written: the unit and the factor from SI to it. The "scaled" set uses
#: unusual but valid prefixes, for the unit-scale invariance test.
PLAIN_UNITS = {"voltage": ("V", 1.0), "current": ("A", 1.0), "inductance": ("nH", 1e9), "resistance": ("ohm", 1.0),
               "capacitance": ("nF", 1e9), "conductance": ("S", 1.0), "temperature": ("degC", None)}
SCALED_UNITS = {"voltage": ("mV", 1e3), "current": ("kA", 1e-3), "inductance": ("uH", 1e6),
                "resistance": ("megaohm", 1e-6), "capacitance": ("pF", 1e12), "conductance": ("mS", 1e3),
                "temperature": ("K", None)}


@dataclass(frozen=True)
class Toleranced:
    """A nominal value [SI] with a relative tolerance (0 for exact)."""

    nominal: float
    tolerance: float = 0.0


@dataclass(frozen=True)
class SwitchSpec:
    ref: str
    connection: str
    common_source_inductance: float
    gate_on: float
    gate_off: float
    gate_tolerance: float
    r_on: float
    r_off: float


@dataclass(frozen=True)
class DesignSpec:
    """A valid design in SI numbers, before it is written in any units."""

    bus_voltage: Toleranced
    turn_off_current: float
    loop_inductance: Toleranced
    v_ds_max: float
    v_gs_max: float
    v_gs_min: float
    i_d_pulse: float
    v_gs_th: tuple[float, float]
    transconductance: tuple[float, float]
    c_iss: float
    r_g_internal: float
    switches: tuple[SwitchSpec, ...]
    capacitors: tuple[tuple[str, float, float], ...] = field(default=())
    case_temperature: tuple[float, float] = (253.15, 363.15)
    c_rss: float | None = None
    c_oss: float | None = None
    hot_threshold_drop: float | None = None
    recovery: tuple[float, float] | None = None
    driver_cmti: float | None = None


def _between(low: float, high: float) -> st.SearchStrategy[float]:
    return st.floats(low, high, allow_nan=False, allow_infinity=False)


@st.composite
def switch_specs(draw, ref: str) -> SwitchSpec:
    return SwitchSpec(
        ref=ref, connection=draw(st.sampled_from(["kelvin", "shared"])),
        common_source_inductance=draw(_between(0.1e-9, 20e-9)),
        gate_on=draw(_between(15.0, 25.0)), gate_off=draw(_between(-10.0, 0.0)),
        gate_tolerance=draw(_between(0.0, 0.05)), r_on=draw(_between(0.5, 50.0)), r_off=draw(_between(0.5, 50.0)))


@st.composite
def design_specs(draw) -> DesignSpec:
    """Valid designs whose gate drive carries the current: the plateau V_th + I/g_fs stays below
    6 V + 40 A / 5 S = 14 V, under the lowest on-level 15 V - 5 %."""
    threshold_low = draw(_between(0.5, 4.0))
    gfs_low = draw(_between(5.0, 100.0))
    count = draw(st.integers(1, 3))
    capacitors = tuple((f"C{index + 1}", draw(_between(50.0, 2000.0)), draw(_between(1e-6, 1e-3)))
                       for index in range(draw(st.integers(0, 2))))
    return DesignSpec(
        bus_voltage=Toleranced(draw(_between(10.0, 1000.0)), draw(_between(0.0, 0.2))),
        turn_off_current=draw(_between(1.0, 40.0)),
        loop_inductance=Toleranced(draw(_between(1e-9, 100e-9)), draw(_between(0.0, 0.3))),
        v_ds_max=draw(_between(50.0, 1700.0)), v_gs_max=draw(_between(5.0, 30.0)),
        v_gs_min=draw(_between(-30.0, -1.0)), i_d_pulse=draw(_between(10.0, 500.0)),
        v_gs_th=(threshold_low, threshold_low + draw(_between(0.0, 2.0))),
        transconductance=(gfs_low, gfs_low * draw(_between(1.0, 2.0))),
        c_iss=draw(_between(0.1e-9, 20e-9)), r_g_internal=draw(_between(0.1, 10.0)),
        switches=tuple(draw(switch_specs(f"Q{index + 1}")) for index in range(count)),
        capacitors=capacitors,
        c_rss=draw(st.none() | _between(2e-12, 100e-12)),
        c_oss=draw(st.none() | _between(30e-12, 1e-9)),
        hot_threshold_drop=draw(st.none() | _between(0.0, 0.5)),
        recovery=draw(st.none() | st.tuples(_between(10e-9, 1e-6), _between(0.2, 2.0))),
        driver_cmti=draw(st.none() | _between(20e9, 300e9)),
    )


def _written(value: float, kind: str, units: dict) -> str:
    unit, factor = units[kind]
    if factor is None:  # temperatures: kelvin or degC, an offset
        return f"{value!r} K" if unit == "K" else f"{value - 273.15!r} degC"
    return f"{value * factor!r} {unit}"


def _toleranced(value: Toleranced, kind: str, units: dict) -> str | dict:
    if value.tolerance == 0.0:
        return _written(value.nominal, kind, units)
    return {"nominal": _written(value.nominal, kind, units), "tolerance": f"{value.tolerance * 100!r} %"}


def _range(ends: tuple[float, float], kind: str, units: dict) -> dict:
    return {"min": _written(ends[0], kind, units), "max": _written(ends[1], kind, units)}


def design_data(spec: DesignSpec, units: dict = PLAIN_UNITS) -> dict:
    """The design file (as data) for ``spec``, with every quantity written in ``units``."""
    q = lambda value, kind: _written(value, kind, units)  # noqa: E731
    device = {
        "technology": "si-mosfet",
        "ratings": {"v_ds_max": q(spec.v_ds_max, "voltage"), "v_gs_max": q(spec.v_gs_max, "voltage"),
                    "v_gs_min": q(spec.v_gs_min, "voltage"), "i_d_pulse": q(spec.i_d_pulse, "current")},
        "characteristics": {"v_gs_th": _range(spec.v_gs_th, "voltage", units),
                            "transconductance": _range(spec.transconductance, "conductance", units),
                            "c_iss": q(spec.c_iss, "capacitance"), "r_g_internal": q(spec.r_g_internal, "resistance")},
    }
    characteristics = device["characteristics"]
    if spec.c_rss is not None:
        characteristics["c_rss"] = q(spec.c_rss, "capacitance")
    if spec.c_oss is not None:
        characteristics["c_oss"] = q(spec.c_oss, "capacitance")
    if spec.hot_threshold_drop is not None:
        characteristics["v_gs_th_hot"] = {"v_gs_th": _range((spec.v_gs_th[0] - spec.hot_threshold_drop,
                                                              spec.v_gs_th[1]), "voltage", units),
                                          "t_j": _written(423.15, "temperature", units)}
    if spec.recovery is not None:
        characteristics["reverse_recovery"] = {"q_rr": f"{spec.recovery[0] * 1e9!r} nC", "softness": spec.recovery[1]}
    switches = [{
        "ref": switch.ref, "device": "dev", "source_connection": switch.connection,
        "common_source_inductance": q(switch.common_source_inductance, "inductance"),
        "gate_drive": {"on": q(switch.gate_on, "voltage"), "off": q(switch.gate_off, "voltage"),
                       "tolerance": f"{switch.gate_tolerance * 100!r} %",
                       "r_on": q(switch.r_on, "resistance"), "r_off": q(switch.r_off, "resistance")},
        **({"leg": "A"} if len(spec.switches) == 2 else {}),
        **({"driver_cmti": f"{spec.driver_cmti / 1e9!r} V/ns"} if spec.driver_cmti is not None else {}),
    } for switch in spec.switches]
    return {
        "format": "margincheck/1",
        "design": {"title": "generated (property test)"},
        "conditions": {"bus_voltage": _toleranced(spec.bus_voltage, "voltage", units),
                       "turn_off_current": {"max": q(spec.turn_off_current, "current")},
                       "case_temperature": _range(spec.case_temperature, "temperature", units)},
        "commutation_loop": {"inductance": _toleranced(spec.loop_inductance, "inductance", units)},
        "devices": {"dev": device, "spare": dict(device)},  # an unused second device: its order must not matter
        "switches": switches,
        "capacitors": [{"ref": ref, "rated_voltage": q(rated, "voltage"), "capacitance": q(capacitance, "capacitance")}
                       for ref, rated, capacitance in spec.capacitors],
    }


def design_text(data: dict) -> str:
    """YAML text of a design (PyYAML quotes the keys ``on`` and ``off`` itself)."""
    return yaml.safe_dump(data, sort_keys=False, allow_unicode=True)


def scaled(spec: DesignSpec, **factors: float) -> DesignSpec:
    """``spec`` with some quantities multiplied: bus_voltage, loop_inductance, turn_off_current, or a rating."""
    changes = {}
    for name, factor in factors.items():
        value = getattr(spec, name)
        changes[name] = replace(value, nominal=value.nominal * factor) if isinstance(value, Toleranced) \
            else value * factor
    return replace(spec, **changes)
