"""The characteristics only an IGBT states: V_CE(sat) with its temperature dependence, the tail current at
turn-off and the vertical structure; and the check that a device states only its own technology's fields.

An IGBT's ratings and its MOS-gate characteristics (threshold, transconductance, capacitances) are read into
the same Device fields as a MOSFET's (margincheck.technology names them); these are the rest.
"""

from __future__ import annotations

from dataclasses import dataclass

from margincheck.building import POSITIVE, Builder, get, temperature_dependent
from margincheck.errors import Problem, format_path
from margincheck.intervals import Interval
from margincheck.loading import DocPath, Document
from margincheck.technology import FOREIGN_FIELDS, IGBT_NAMES, design_name, is_igbt

__all__ = ["SaturationVoltage", "TailCurrent", "build_saturation_voltage", "build_tail", "check_fields_of_technology"]


@dataclass(frozen=True)
class SaturationVoltage:
    """V_CE(sat) [V] at collector current ``i_c`` [A], junction temperature ``t_j`` [K] and gate voltage
    ``v_ge`` [V], and how it moves with temperature: a second point at ``hot_t_j`` or a coefficient [V/K]."""

    value: Interval | None
    i_c: float | None
    t_j: float | None
    v_ge: float | None
    hot_value: Interval | None = None
    hot_t_j: float | None = None
    coefficient: Interval | None = None

    def temperature_coefficient(self) -> float | None:
        """dV_CE(sat)/dT [V/K] at its largest (the fastest rise): through the two maxima, else the stated one."""
        if self.value is None or not self.value.has_high:
            return None
        if self.hot_value is not None and self.hot_t_j is not None and self.hot_value.has_high:
            return (self.hot_value.high - self.value.high) / (self.hot_t_j - self.t_j)
        if self.coefficient is not None and self.coefficient.has_high:
            return self.coefficient.high
        return None


@dataclass(frozen=True)
class TailCurrent:
    """The turn-off tail: i_tail(t) = ``fraction`` · I · exp(−t/``time_constant``) [s]."""

    fraction: float
    time_constant: float


def build_saturation_voltage(builder: Builder, document: Document, characteristics: DocPath
                             ) -> SaturationVoltage | None:
    """V_CE(sat) of the device at ``characteristics``, or None when not given."""
    fields = temperature_dependent(builder, document, characteristics, "v_ce_sat",
                                   ("voltage", "temperature_coefficient"),
                                   {"i_c": ("current", POSITIVE), "v_ge": ("voltage", None)})
    return None if fields is None else SaturationVoltage(**fields)


def build_tail(builder: Builder, document: Document, characteristics: DocPath) -> TailCurrent | None:
    """The tail current: its fraction given, or the fraction Q_tail/(I·τ) of a tail charge at its current."""
    path = characteristics + ("tail",)
    raw = get(document.data, path)
    if raw is None:
        return None
    time_constant = builder.quantity(document, path + ("time_constant",), "time", POSITIVE)
    if ("fraction" in raw) == ("charge" in raw) or ("charge" in raw) != ("i_c" in raw):
        builder.fail(document, path, "give fraction, or charge with i_c (the current it is stated at); not both",
                     at_key=True)
        return None
    if "fraction" in raw:
        fraction = float(raw["fraction"])
    else:
        charge = builder.quantity(document, path + ("charge",), "charge", POSITIVE)
        current = builder.quantity(document, path + ("i_c",), "current", POSITIVE)
        if None in (charge, current, time_constant):
            return None
        fraction = charge / (current * time_constant)  # Q_tail = ∫ fraction·I·exp(−t/τ) dt = fraction·I·τ
        if not 0.0 < fraction < 1.0:
            builder.fail(document, path + ("charge",), f"gives a tail fraction Q_tail/(i_c*time_constant) of "
                                                       f"{fraction:.3g}; it must lie between 0 and 1")
            return None
    return None if time_constant is None else TailCurrent(fraction, time_constant)


#: The mappings whose keys depend on the technology (ratings, characteristics and the nested test conditions).
_TECHNOLOGY_MAPPINGS = (("ratings",), ("characteristics",), ("ratings", "short_circuit"),
                        ("characteristics", "switching_energy"), ("characteristics", "v_gs_th_hot"))
_PAIRS = {("ratings", "short_circuit"): ("v_ds", "v_gs"), ("characteristics", "switching_energy"): ("v_ds", "i_d")}


def check_fields_of_technology(builder: Builder, document: Document, path: DocPath, technology: str) -> None:
    """A located error for each field of the other technology (v_ce_max on a MOSFET, r_ds_on on an IGBT), and
    for a missing test condition of the technology's own names."""
    igbt = is_igbt(technology)
    for mapping in _TECHNOLOGY_MAPPINGS:
        located = path + tuple(design_name(technology, part) for part in mapping)
        raw = get(document.data, located)
        if not isinstance(raw, dict):
            continue
        for key in raw:
            if key in FOREIGN_FIELDS[igbt]:
                own = design_name(technology, key) if igbt else _mosfet_name(key)
                hint = f" (write {own})" if own != key else ""
                kind = "a MOSFET/HEMT field" if igbt else "an IGBT field"
                builder.fail(document, located + (key,), f"{kind}, but this device is technology {technology}{hint}",
                             at_key=True)
        for needed in _PAIRS.get(mapping, ()):
            name = design_name(technology, needed)
            if name not in raw:
                builder.problems.append(Problem(document.name, document.key_location_of(located),
                                                format_path(located + (name,)), "required field is missing"))


def _mosfet_name(igbt_field: str) -> str:
    """The MOSFET's name of an IGBT field (itself where there is none)."""
    return next((internal for internal, name in IGBT_NAMES.items() if name == igbt_field), igbt_field)
