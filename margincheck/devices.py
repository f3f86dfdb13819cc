"""Devices: ratings and characteristics of a switch type, built from an inline entry or a device file."""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Callable

import numpy as np

from margincheck.building import (
    NON_NEGATIVE,
    POSITIVE,
    Builder,
    CapacitanceCurve,
    curve_points,
    get,
    temperature_dependent,
)
from margincheck.device_consistency import check_device_consistency
from margincheck.igbt_data import (
    SaturationVoltage,
    TailCurrent,
    build_saturation_voltage,
    build_tail,
    check_fields_of_technology,
)
from margincheck.intervals import Interval
from margincheck.loading import DocPath, Document
from margincheck.physics.foster_fit import fit_foster
from margincheck.technology import design_name
from margincheck.units import format_value

__all__ = ["AvalancheRating", "CosmicRayModel", "Device", "GateRange", "OnResistance", "Recovery",
           "ShortCircuitRating", "SoaChart", "SoaCurve", "SwitchingEnergy", "TransientGateRating", "TransientRating",
           "build_device"]


@dataclass(frozen=True)
class Recovery:
    """Reverse recovery of the device's diode: toleranced charge Q_rr [C] and softness t_b/t_a; Q_rr = 0 means
    none."""

    charge: Interval
    softness: float | None = None

    @property
    def capacitive_only(self) -> bool:
        """True for a diode with no recovery charge (SiC Schottky, GaN HEMT): only its capacitance rings."""
        return self.charge.high == 0.0


@dataclass(frozen=True)
class OnResistance:
    """R_ds(on) [ohm] at junction temperature ``t_j`` [K] and gate voltage ``v_gs`` [V], and how it rises with
    temperature: a second point at ``hot_t_j`` or a (toleranced) logarithmic coefficient d(ln R)/dT [1/K]."""

    value: Interval
    t_j: float
    v_gs: float
    hot_value: Interval | None = None
    hot_t_j: float | None = None
    coefficient: Interval | None = None


@dataclass(frozen=True)
class AvalancheRating:
    """Single-pulse avalanche energy [J] from starting junction temperature ``t_j`` [K]; None: no capability."""

    energy: float | None
    t_j: float | None = None


@dataclass(frozen=True)
class ShortCircuitRating:
    """Short-circuit withstand time [s] at bus ``v_ds`` and gate ``v_gs`` [V]; a time of None: not rated."""

    withstand_time: float | None
    v_ds: float | None = None
    v_gs: float | None = None


@dataclass(frozen=True)
class SwitchingEnergy:
    """Datasheet E_on and E_off [J] (toleranced) at a reference V_DS [V], I_D [A] and gate resistance [ohm] (if
    stated)."""

    e_on: Interval
    e_off: Interval
    v_ds: float
    i_d: float
    r_g: float | None = None


@dataclass(frozen=True)
class GateRange:
    """The recommended operating range of the gate-source voltage [V] (not derated: an operating range)."""

    low: float
    high: float


@dataclass(frozen=True)
class TransientGateRating:
    """Gate-source ratings for pulses up to ``pulse`` [s]: ``high`` and ``low`` [V] (None: not given)."""

    high: float | None
    low: float | None
    pulse: float


@dataclass(frozen=True)
class TransientRating:
    """A drain-source rating ``value`` [V] for overvoltage pulses up to ``pulse`` [s]."""

    value: float
    pulse: float


@dataclass(frozen=True)
class SoaCurve:
    """One datasheet SOA boundary: pulse width [s] (inf for dc) and its (V_DS [V], I_D [A]) points."""

    pulse: float
    voltages: tuple[float, ...]
    currents: tuple[float, ...]


@dataclass(frozen=True)
class SoaChart:
    """The datasheet SOA chart: its case temperature [K] and boundaries."""

    t_c: float
    curves: tuple[SoaCurve, ...]


@dataclass(frozen=True)
class CosmicRayModel:
    """The device's cosmic-ray failure rate against blocking voltage (margincheck.physics.cosmic_ray, Eq. (1)):
    constants c1 and c2 [V] and c3 [1/s], and where they come from."""

    c1: float
    c2: float
    c3: float
    reference: str


@dataclass(frozen=True)
class Device:
    """A switch type: ratings (exact) and characteristics (toleranced), in SI units; None when not given.

    An IGBT's ratings and gate characteristics sit in the MOSFET-named fields (``v_ds_max`` holds V_CES, ``c_iss``
    C_ies...: margincheck.technology); ``v_ce_sat``, ``tail`` and ``structure`` are an IGBT's alone.
    """

    name: str
    technology: str
    v_ds_max: float
    v_gs_max: float | None = None
    v_gs_min: float | None = None
    v_gs_recommended: GateRange | None = None
    v_gs_transient: TransientGateRating | None = None
    v_ds_transient: TransientRating | None = None
    i_d_pulse: float | None = None
    t_j_max: float | None = None
    v_gs_th: Interval | None = None
    transconductance: Interval | None = None
    c_iss: Interval | None = None
    c_rss: CapacitanceCurve | None = None
    c_oss: CapacitanceCurve | None = None
    r_g_internal: Interval | None = None
    v_gs_th_hot: Interval | None = None
    v_gs_th_hot_t_j: float | None = None
    v_gs_th_temperature_coefficient: Interval | None = None
    recovery: Recovery | None = None
    r_ds_on: OnResistance | None = None
    switching_energy: SwitchingEnergy | None = None
    avalanche: AvalancheRating | None = None
    short_circuit: ShortCircuitRating | None = None
    r_th_jc: Interval | None = None
    foster: tuple[tuple[float, ...], tuple[float, ...]] | None = None
    #: The toleranced factor on the Foster network's resistances (its Z_th), from a {points, tolerance} form
    foster_scale: Interval = Interval.exact(1.0)
    soa_chart: SoaChart | None = None
    cosmic_ray: CosmicRayModel | None = None
    v_ce_sat: SaturationVoltage | None = None
    tail: TailCurrent | None = None
    structure: str | None = None
    notes: tuple[str, ...] = ()


def build_device(builder: Builder, document: Document, path: DocPath, name: str) -> Device:
    """The device at ``path`` of ``document``; its problems and warnings are recorded in ``builder``."""
    ratings, characteristics = path + ("ratings",), path + ("characteristics",)
    technology = get(document.data, path + ("technology",))
    check_fields_of_technology(builder, document, path, technology)
    named = lambda field: design_name(technology, field)  # noqa: E731 - the field's name for this technology
    v_gs_min = builder.quantity(document, ratings + (named("v_gs_min"),), "voltage")
    if v_gs_min is not None and v_gs_min > 0:
        builder.fail(document, ratings + (named("v_gs_min"),), "must be 0 V or negative (the most negative gate level)")
    t_j_max = builder.quantity(document, ratings + ("t_j_max",), "temperature", POSITIVE)
    notes: list[str] = []
    continuous = {"v_ds_max": builder.quantity(document, ratings + (named("v_ds_max"),), "voltage", POSITIVE),
                  "v_gs_max": builder.quantity(document, ratings + (named("v_gs_max"),), "voltage", POSITIVE),
                  "v_gs_min": v_gs_min}
    device = Device(
        name=name,
        technology=technology,
        **continuous,
        **_gate_and_transient_ratings(builder, document, ratings, continuous),
        i_d_pulse=builder.quantity(document, ratings + (named("i_d_pulse"),), "current", POSITIVE),
        t_j_max=t_j_max,
        v_gs_th=builder.interval(document, characteristics + (named("v_gs_th"),), "voltage"),
        transconductance=builder.interval(document, characteristics + ("transconductance",), "conductance",
                                          POSITIVE),
        c_iss=builder.interval(document, characteristics + (named("c_iss"),), "capacitance", POSITIVE),
        c_rss=_miller_capacitance(builder, document, characteristics, named, notes),
        c_oss=builder.capacitance_curve(document, characteristics + (named("c_oss"),)),
        r_g_internal=builder.interval(document, characteristics + ("r_g_internal",), "resistance", POSITIVE),
        v_gs_th_hot=builder.interval(document, characteristics + (named("v_gs_th_hot"), named("v_gs_th")),
                                     "voltage"),
        v_gs_th_hot_t_j=builder.quantity(document, characteristics + (named("v_gs_th_hot"), "t_j"), "temperature",
                                         POSITIVE),
        v_gs_th_temperature_coefficient=builder.interval(
            document, characteristics + (named("v_gs_th_temperature_coefficient"),), "temperature_coefficient"),
        recovery=_recovery(builder, document, characteristics, technology, notes),
        r_ds_on=_on_resistance(builder, document, characteristics),
        switching_energy=_switching_energy(builder, document, characteristics, named),
        avalanche=_avalanche(builder, document, ratings, technology, notes),
        short_circuit=_short_circuit(builder, document, ratings, named),
        r_th_jc=builder.interval(document, path + ("thermal", "r_th_jc"), "thermal_resistance", POSITIVE),
        foster=_foster(builder, document, path + ("thermal",), notes),
        foster_scale=_foster_scale(builder, document, path + ("thermal",)),
        soa_chart=_soa_chart(builder, document, path + ("soa_chart",)),
        cosmic_ray=_cosmic_ray(builder, document, path + ("cosmic_ray",)),
        v_ce_sat=build_saturation_voltage(builder, document, characteristics),
        tail=build_tail(builder, document, characteristics),
        structure=get(document.data, characteristics + ("structure",)),
        notes=tuple(notes),
    )
    check_device_consistency(builder, document, path, device)
    return device


def _gate_and_transient_ratings(builder: Builder, document: Document, ratings: DocPath, continuous: dict
                                ) -> dict:
    """The recommended gate range and the transient gate and drain-source ratings (None where not given), each
    checked against the ``continuous`` rating it sits beside (``v_ds_max``, ``v_gs_max``, ``v_gs_min`` [V] or
    None): a recommended range inside it, a transient rating at or beyond it."""
    found: dict = {"v_gs_recommended": None, "v_gs_transient": None, "v_ds_transient": None}
    v_gs_min, v_gs_max = (("v_gs_min", continuous["v_gs_min"]), ("v_gs_max", continuous["v_gs_max"]))
    place = ratings + ("v_gs_recommended",)
    if get(document.data, place) is not None:
        low, high = (builder.quantity(document, place + (end,), "voltage") for end in ("min", "max"))
        _outside(builder, document, place + ("min",), low, below=("0 V", 0.0), above=v_gs_min)
        _outside(builder, document, place + ("max",), high, below=v_gs_max)
        if high is not None and high <= 0:
            builder.fail(document, place + ("max",), f"must be above 0 V (the recommended on-level), got "
                                                     f"{format_value(high, 'voltage')}")
        found["v_gs_recommended"] = None if low is None or high is None else GateRange(low, high)
    place = ratings + ("v_gs_transient",)
    if get(document.data, place) is not None:
        high, low = (builder.quantity(document, place + (end,), "voltage") for end in ("max", "min"))
        _outside(builder, document, place + ("max",), high, above=v_gs_max)
        _outside(builder, document, place + ("min",), low, below=v_gs_min)
        _outside(builder, document, place + ("min",), low, below=("0 V", 0.0))
        if high is None and low is None:
            builder.fail(document, place, "needs max, min or both beside pulse (the transient gate ratings)")
        pulse = builder.quantity(document, place + ("pulse",), "time", POSITIVE)
        found["v_gs_transient"] = None if pulse is None else TransientGateRating(high, low, pulse)
    place = ratings + ("v_ds_transient",)
    if get(document.data, place) is not None:
        value = builder.quantity(document, place + ("value",), "voltage", POSITIVE)
        _outside(builder, document, place + ("value",), value, above=("v_ds_max", continuous["v_ds_max"]))
        pulse = builder.quantity(document, place + ("pulse",), "time", POSITIVE)
        found["v_ds_transient"] = None if value is None or pulse is None else TransientRating(value, pulse)
    return found


def _outside(builder: Builder, document: Document, path: DocPath, value: float | None, *,
             above: tuple[str, float | None] = ("", None), below: tuple[str, float | None] = ("", None)) -> None:
    """Record a problem at ``path`` when ``value`` [V] is not at or ``above`` a named bound, or not at or
    ``below`` one (a bound of None is not checked)."""
    if value is None:
        return
    for (name, limit), sign, relation in ((above, 1.0, "at or above"), (below, -1.0, "at or below")):
        if limit is not None and sign * (value - limit) < 0:
            builder.fail(document, path, f"must be {relation} {name} ({format_value(limit, 'voltage')}), got "
                                         f"{format_value(value, 'voltage')}")


def _miller_capacitance(builder: Builder, document: Document, characteristics: DocPath, named: Callable[[str], str],
                        notes: list[str]) -> CapacitanceCurve | None:
    """C_rss (an IGBT's C_res) as given, else the charge-equivalent Q_gd/V of the gate-drain charge at its test
    voltage."""
    if get(document.data, characteristics + (named("c_rss"),)) is not None:
        return builder.capacitance_curve(document, characteristics + (named("c_rss"),))
    charge = builder.interval(document, characteristics + ("q_gd", "charge"), "charge", POSITIVE)
    voltage = builder.quantity(document, characteristics + ("q_gd", "v_ds"), "voltage", POSITIVE)
    if charge is None or voltage is None:
        return None
    notes.append("c_rss taken as the charge-equivalent q_gd/v_ds")
    return CapacitanceCurve.flat(charge.scaled(1.0 / voltage))


def _recovery(builder: Builder, document: Document, characteristics: DocPath, technology: str,
              notes: list[str]) -> Recovery | None:
    raw = get(document.data, characteristics + ("reverse_recovery",))
    if raw == "none":
        return Recovery(Interval.exact(0.0))
    if raw is None:
        if technology == "gan-hemt":
            notes.append("reverse_recovery not given: a GaN HEMT has no minority-carrier recovery, capacitive "
                         "charge only")
            return Recovery(Interval.exact(0.0))
        return None
    path = characteristics + ("reverse_recovery", "q_rr")
    charge = builder.interval(document, path, "charge", NON_NEGATIVE)
    if charge is not None and not charge.has_high:
        builder.fail(document, path, "needs its maximum: the largest recovery charge is the worst case")
        return None
    return None if charge is None else Recovery(charge, float(raw["softness"]))


def _on_resistance(builder: Builder, document: Document, characteristics: DocPath) -> OnResistance | None:
    fields = temperature_dependent(builder, document, characteristics, "r_ds_on",
                                   ("resistance", "relative_temperature_coefficient"), {"v_gs": ("voltage", None)})
    return None if fields is None else OnResistance(**fields)


def _switching_energy(builder: Builder, document: Document, characteristics: DocPath, named: Callable[[str], str]
                      ) -> SwitchingEnergy | None:
    path = characteristics + ("switching_energy",)
    if get(document.data, path) is None:
        return None
    energies = {key: builder.interval(document, path + (key,), "energy", NON_NEGATIVE) for key in ("e_on", "e_off")}
    at = {key: builder.quantity(document, path + (named(key),), kind, sign) for key, kind, sign in (
        ("v_ds", "voltage", POSITIVE), ("i_d", "current", POSITIVE), ("r_g", "resistance", NON_NEGATIVE))}
    return SwitchingEnergy(**energies, **at)


def _avalanche(builder: Builder, document: Document, ratings: DocPath, technology: str,
               notes: list[str]) -> AvalancheRating | None:
    raw = get(document.data, ratings + ("avalanche",))
    if raw == "none":
        return AvalancheRating(None)
    if raw is None:
        if technology == "gan-hemt":
            notes.append("avalanche not given: a GaN HEMT has no avalanche capability")
            return AvalancheRating(None)
        return None
    return AvalancheRating(builder.quantity(document, ratings + ("avalanche", "energy"), "energy", POSITIVE),
                           builder.quantity(document, ratings + ("avalanche", "t_j"), "temperature", POSITIVE))


def _short_circuit(builder: Builder, document: Document, ratings: DocPath, named: Callable[[str], str]
                   ) -> ShortCircuitRating | None:
    path = ratings + ("short_circuit",)
    raw = get(document.data, path)
    if raw is None or raw == "none":
        return None if raw is None else ShortCircuitRating(None)
    return ShortCircuitRating(builder.quantity(document, path + ("withstand_time",), "time", POSITIVE),
                              builder.quantity(document, path + (named("v_ds"),), "voltage", POSITIVE),
                              builder.quantity(document, path + (named("v_gs"),), "voltage", POSITIVE))


def _foster(builder: Builder, document: Document, thermal: DocPath, notes: list[str]
            ) -> tuple[tuple[float, ...], tuple[float, ...]] | None:
    """The Foster network as (R_i, τ_i): given, or fitted to the Z_th curve points (its scale apart)."""
    if get(document.data, thermal + ("foster",)) is not None:
        return builder.points(document, curve_points(document, thermal + ("foster",)),
                              (("r", "thermal_resistance", POSITIVE), ("tau", "time", POSITIVE)), ascending=False)
    if get(document.data, thermal + ("z_th_curve",)) is None:
        return None
    points = builder.points(document, curve_points(document, thermal + ("z_th_curve",)),
                            (("time", "time", POSITIVE), ("z_th", "thermal_resistance", POSITIVE)))
    if points is None:
        return None
    resistances, time_constants = fit_foster(*points)
    notes.append(f"Foster network of {resistances.size} cells fitted to the {len(points[0])} Z_th curve points")
    return tuple(np.asarray(resistances).tolist()), tuple(np.asarray(time_constants).tolist())


def _foster_scale(builder: Builder, document: Document, thermal: DocPath) -> Interval:
    """The toleranced factor on the thermal impedance of the foster or z_th_curve form (exactly 1 when none is
    given, or after a reported problem)."""
    for key in ("foster", "z_th_curve"):
        if get(document.data, thermal + (key,)) is not None:
            return builder.curve_scale(document, thermal + (key,)) or Interval.exact(1.0)
    return Interval.exact(1.0)


def _soa_chart(builder: Builder, document: Document, path: DocPath) -> SoaChart | None:
    raw = get(document.data, path)
    if raw is None:
        return None
    curves = []
    for index, curve in enumerate(raw["curves"]):
        points = builder.points(document, path + ("curves", index, "points"),
                                (("v_ds", "voltage", POSITIVE), ("i_d", "current", POSITIVE)))
        pulse = math.inf if curve["pulse"] == "dc" else builder.quantity(
            document, path + ("curves", index, "pulse"), "time", POSITIVE)
        if points is not None:
            curves.append(SoaCurve(pulse, *points))
    return SoaChart(builder.quantity(document, path + ("t_c",), "temperature", POSITIVE),
                    tuple(sorted(curves, key=lambda curve: curve.pulse)))


def _cosmic_ray(builder: Builder, document: Document, path: DocPath) -> CosmicRayModel | None:
    raw = get(document.data, path)
    if raw is None:
        return None
    constants = [builder.quantity(document, path + (key,), kind, POSITIVE)
                 for key, kind in (("c1", "voltage"), ("c2", "voltage"), ("c3", "failure_rate"))]
    return None if None in constants else CosmicRayModel(*constants, raw["reference"])
