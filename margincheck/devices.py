"""Devices: ratings and characteristics of a switch type, built from an inline entry or a device file."""

from __future__ import annotations

from dataclasses import dataclass

from margincheck.building import NON_NEGATIVE, POSITIVE, Builder, CapacitanceCurve, get
from margincheck.intervals import Interval
from margincheck.loading import DocPath, Document

__all__ = ["Device", "Recovery", "build_device"]


@dataclass(frozen=True)
class Recovery:
    """Reverse recovery of the device's diode: charge Q_rr [C] and softness t_b/t_a; Q_rr = 0 means none."""

    charge: float
    softness: float | None = None

    @property
    def capacitive_only(self) -> bool:
        """True for a diode with no recovery charge (SiC Schottky, GaN HEMT): only its capacitance rings."""
        return self.charge == 0.0


@dataclass(frozen=True)
class Device:
    """A switch type: ratings (exact) and characteristics (toleranced), in SI units; None when not given."""

    name: str
    technology: str
    v_ds_max: float
    v_gs_max: float | None = None
    v_gs_min: float | None = None
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
    v_gs_th_temperature_coefficient: float | None = None
    recovery: Recovery | None = None
    notes: tuple[str, ...] = ()


def build_device(builder: Builder, document: Document, path: DocPath, name: str) -> Device:
    ratings, characteristics = path + ("ratings",), path + ("characteristics",)
    v_gs_min = builder.quantity(document, ratings + ("v_gs_min",), "voltage")
    if v_gs_min is not None and v_gs_min > 0:
        builder.fail(document, ratings + ("v_gs_min",), "must be 0 V or negative (the most negative gate level)")
    t_j_max = builder.quantity(document, ratings + ("t_j_max",), "temperature", POSITIVE)
    technology = get(document.data, path + ("technology",))
    notes: list[str] = []
    return Device(
        name=name,
        technology=technology,
        v_ds_max=builder.quantity(document, ratings + ("v_ds_max",), "voltage", POSITIVE),
        v_gs_max=builder.quantity(document, ratings + ("v_gs_max",), "voltage", POSITIVE),
        v_gs_min=v_gs_min,
        i_d_pulse=builder.quantity(document, ratings + ("i_d_pulse",), "current", POSITIVE),
        t_j_max=t_j_max,
        v_gs_th=builder.interval(document, characteristics + ("v_gs_th",), "voltage"),
        transconductance=builder.interval(document, characteristics + ("transconductance",), "conductance",
                                          POSITIVE),
        c_iss=builder.interval(document, characteristics + ("c_iss",), "capacitance", POSITIVE),
        c_rss=_miller_capacitance(builder, document, characteristics, notes),
        c_oss=builder.capacitance_curve(document, characteristics + ("c_oss",)),
        r_g_internal=builder.interval(document, characteristics + ("r_g_internal",), "resistance", POSITIVE),
        v_gs_th_hot=builder.interval(document, characteristics + ("v_gs_th_hot", "v_gs_th"), "voltage"),
        v_gs_th_hot_t_j=builder.quantity(document, characteristics + ("v_gs_th_hot", "t_j"), "temperature",
                                         POSITIVE),
        v_gs_th_temperature_coefficient=builder.quantity(
            document, characteristics + ("v_gs_th_temperature_coefficient",), "temperature_coefficient"),
        recovery=_recovery(builder, document, characteristics, technology, notes),
        notes=tuple(notes),
    )


def _miller_capacitance(builder: Builder, document: Document, characteristics: DocPath, notes: list[str]
                        ) -> CapacitanceCurve | None:
    """C_rss as given, else the charge-equivalent Q_gd/V of the gate-drain charge at its test voltage."""
    if get(document.data, characteristics + ("c_rss",)) is not None:
        return builder.capacitance_curve(document, characteristics + ("c_rss",))
    charge = builder.quantity(document, characteristics + ("q_gd", "charge"), "charge", POSITIVE)
    voltage = builder.quantity(document, characteristics + ("q_gd", "v_ds"), "voltage", POSITIVE)
    if charge is None or voltage is None:
        return None
    notes.append("c_rss taken as the charge-equivalent q_gd/v_ds")
    return CapacitanceCurve.flat(Interval.exact(charge / voltage))


def _recovery(builder: Builder, document: Document, characteristics: DocPath, technology: str,
              notes: list[str]) -> Recovery | None:
    raw = get(document.data, characteristics + ("reverse_recovery",))
    if raw == "none":
        return Recovery(0.0)
    if raw is None:
        if technology == "gan-hemt":
            notes.append("reverse_recovery not given: a GaN HEMT has no minority-carrier recovery, capacitive "
                         "charge only")
            return Recovery(0.0)
        return None
    charge = builder.quantity(document, characteristics + ("reverse_recovery", "q_rr"), "charge", NON_NEGATIVE)
    return Recovery(charge, float(raw["softness"]))
