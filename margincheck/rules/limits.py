"""The derated limits of the switch rules: a device rating (or the driver's CMTI, or the hot threshold) times
the policy's factor (design.md section 4). One definition each, read by the design rules and by the check of
measured captures (margincheck.captures.measured_check), so that a measured figure meets the very limit its
simulated counterpart met.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from margincheck.design import Switch
from margincheck.errors import format_path
from margincheck.findings import Bound
from margincheck.intervals import Side
from margincheck.physics.ring_duration import time_above_level
from margincheck.policy import Policy
from margincheck.rules.switching_model import inputs_for

__all__ = ["DERATING_SOURCE", "DeratedLimit", "cmti_limit", "derated", "gate_off_limit", "gate_on_limit",
           "peak_voltage_limit", "rating_field", "ring_peak_limit", "spurious_turn_on_limit"]

DERATING_SOURCE = ("margincheck criterion: the stress stays within the policy's derating factor times the device's "
                   "absolute maximum rating (the policy names the basis of its factors)")


@dataclass(frozen=True)
class DeratedLimit:
    """A derated limit and how a margin against it is taken.

    Attributes
    ----------
    value : float, ndarray or None
        The limit [SI unit], per corner where a transient rating applies at some corners only; None when an
        input it needs is not given.
    needs : str
        The design field the limit is computed from (named as missing when ``value`` is None).
    bound : Bound
        Whether the checked value must stay below (UPPER) or above (LOWER) the limit.
    scale : float, ndarray or None
        What normalises the margin instead of |limit| (for a limit that may be 0); None: |limit|.
    notes : tuple of str
        How the limit was obtained, where that is worth saying (an extrapolated threshold).
    """

    value: float | np.ndarray | None
    needs: str
    bound: Bound = Bound.UPPER
    scale: float | np.ndarray | None = None
    notes: tuple[str, ...] = ()


def derated(factor: float, rating: float | None) -> float | None:
    """``factor`` × ``rating``, or None without the rating."""
    return None if rating is None else factor * rating


def rating_field(switch: Switch, rating: str) -> str:
    """Where the design gives a rating of ``switch``'s device."""
    return f"devices.{switch.device.name}.ratings.{rating}"


def _microseconds(seconds: float) -> str:
    return f"{seconds * 1e6:.3g} us"


def peak_voltage_limit(switch: Switch, policy: Policy) -> DeratedLimit:
    """Transient drain-source peak against the continuous rating: ``peak_voltage`` × ``v_ds_max`` [V]."""
    return DeratedLimit(derated(policy.peak_voltage, switch.device.v_ds_max), rating_field(switch, "v_ds_max"))


def ring_peak_limit(switch: Switch, policy: Policy, ring: dict[str, np.ndarray]) -> DeratedLimit:
    """The limit of a simulated turn-off peak, per corner: ``peak_voltage`` × ``v_ds_transient.value`` [V] where
    the ring stays above the continuous limit ``peak_voltage`` × ``v_ds_max`` no longer than the transient
    rating's pulse, else the continuous limit.

    ``ring`` holds the corners' ``peak_voltage``, ``bus_voltage`` [V], ``ring_frequency`` [Hz] and
    ``ring_quality``; the time above the continuous limit is the envelope bound of
    ``margincheck.physics.ring_duration.time_above_level``. A corner whose ring is not known (no second crest)
    and whose peak exceeds the continuous limit keeps the continuous limit: never a longer pulse than shown.
    """
    continuous = peak_voltage_limit(switch, policy)
    rating = switch.device.v_ds_transient
    if rating is None or continuous.value is None:
        return continuous
    time_above = time_above_level(ring["peak_voltage"], ring["bus_voltage"], continuous.value,
                                  ring["ring_frequency"], ring["ring_quality"])
    short = time_above <= rating.pulse   # NaN (ring not known): not short
    note = (f"transient rating v_ds_transient ({rating.value:.4g} V for {_microseconds(rating.pulse)}) where the "
            f"ring stays above the continuous limit {continuous.value:.4g} V no longer than that (bound from the "
            "simulated ring's frequency and quality factor: a quarter period plus the envelope's decay), else the "
            f"continuous v_ds_max; {int(np.count_nonzero(short))} of {short.size} corners on the transient rating")
    return DeratedLimit(np.where(short, policy.peak_voltage * rating.value, continuous.value),
                        rating_field(switch, "v_ds_transient.value"), notes=(note,))


def gate_on_limit(switch: Switch, policy: Policy, edge_time: np.ndarray | None = None) -> DeratedLimit:
    """Highest gate-source voltage: ``gate_voltage`` × ``v_gs_max`` [V]; for a simulated gate excursion
    (``edge_time``: the span of the simulated edge that holds it, per corner [s]) ``gate_voltage`` ×
    ``v_gs_transient.max`` where that span is no longer than the transient rating's pulse."""
    continuous = DeratedLimit(derated(policy.gate_voltage, switch.device.v_gs_max), rating_field(switch, "v_gs_max"))
    return _transient_gate(switch, policy, continuous, edge_time, "max")


def gate_off_limit(switch: Switch, policy: Policy, edge_time: np.ndarray | None = None) -> DeratedLimit:
    """Most negative gate-source voltage: ``gate_voltage`` × ``v_gs_min`` [V], a lower limit; for a simulated
    gate excursion (``edge_time`` as in ``gate_on_limit``) ``gate_voltage`` × ``v_gs_transient.min`` where the
    simulated edge is no longer than the transient rating's pulse.

    The margin is normalised by |limit|; for a device rated 0 V minimum the limit is 0 V, and the positive
    gate limit ``gate_voltage`` × ``v_gs_max`` normalises it instead (without that rating: no limit).
    """
    device, factor = switch.device, policy.gate_voltage
    limit = derated(factor, device.v_gs_min)
    scale = abs(limit) if limit else derated(factor, device.v_gs_max)
    needed = rating_field(switch, "v_gs_min") if limit is None else \
        rating_field(switch, "v_gs_max") + " (to scale a 0 V limit)"
    continuous = DeratedLimit(limit if scale else None, needed, Bound.LOWER, scale)
    return _transient_gate(switch, policy, continuous, edge_time, "min")


def _transient_gate(switch: Switch, policy: Policy, continuous: DeratedLimit, edge_time: np.ndarray | None,
                    end: str) -> DeratedLimit:
    """``continuous``, or per corner the derated transient gate rating at ``end`` (max or min) where the
    simulated edge of ``edge_time`` [s] is no longer than the rating's pulse (NaN: not known, continuous)."""
    rating = switch.device.v_gs_transient
    transient = None if rating is None else (rating.high if end == "max" else rating.low)
    if edge_time is None or transient is None or continuous.value is None:
        return continuous
    short = np.asarray(edge_time) <= rating.pulse
    value = np.where(short, policy.gate_voltage * transient, continuous.value)
    scale = np.where(value == 0.0, continuous.scale, np.abs(value)) if continuous.scale is not None else None
    note = (f"simulated gate excursions are transients: against gate_voltage * v_gs_transient.{end} "
            f"({transient:.3g} V for {_microseconds(rating.pulse)}) where the simulated edge that holds them lasts no "
            f"longer than that, else the continuous v_gs_{end}; {int(np.count_nonzero(short))} of {short.size} "
            "corners on the transient rating")
    return DeratedLimit(value, rating_field(switch, f"v_gs_transient.{end}"), continuous.bound, scale, (note,))


def spurious_turn_on_limit(switch: Switch, policy: Policy) -> DeratedLimit:
    """Induced gate voltage of ``switch`` while idle: ``spurious_turn_on`` × its minimum threshold at the hottest
    junction [V] (given hot, or extrapolated with its temperature coefficient)."""
    notes: list[str] = []
    hot = inputs_for(switch, {"v_gs_th_hot": Side.MIN}, notes)["v_gs_th_hot"]
    known = hot.interval is not None and hot.interval.has_low
    return DeratedLimit(policy.spurious_turn_on * hot.interval.low if known else None, hot.field,
                        notes=tuple(notes))


def cmti_limit(switch: Switch, policy: Policy) -> DeratedLimit:
    """Switch-node |dv/dt| for the isolated driver of ``switch``: ``cmti`` × its CMTI [V/s]."""
    return DeratedLimit(derated(policy.cmti, switch.driver_cmti),
                        f"{format_path(switch.path)}.driver_cmti (or driver_cmti: not-isolated)")
