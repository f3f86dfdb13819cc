"""The derated limits of the switch rules: a device rating (or the driver's CMTI, or the hot threshold) times
the policy's factor (design.md section 4). One definition each, read by the design rules and by the check of
measured captures (margincheck.captures.measured_check), so that a measured figure meets the very limit its
simulated counterpart met.
"""

from __future__ import annotations

from dataclasses import dataclass

from margincheck.design import Switch
from margincheck.errors import format_path
from margincheck.findings import Bound
from margincheck.intervals import Side
from margincheck.policy import Policy
from margincheck.rules.switching_model import inputs_for

__all__ = ["DERATING_SOURCE", "DeratedLimit", "cmti_limit", "derated", "gate_off_limit", "gate_on_limit",
           "peak_voltage_limit", "rating_field", "spurious_turn_on_limit"]

DERATING_SOURCE = "derating of the absolute maximum rating by the policy factor (design.md section 4)"


@dataclass(frozen=True)
class DeratedLimit:
    """A derated limit and how a margin against it is taken.

    Attributes
    ----------
    value : float or None
        The limit [SI unit]; None when an input it needs is not given.
    needs : str
        The design field the limit is computed from (named as missing when ``value`` is None).
    bound : Bound
        Whether the checked value must stay below (UPPER) or above (LOWER) the limit.
    scale : float or None
        What normalises the margin instead of |limit| (for a limit that may be 0); None: |limit|.
    notes : tuple of str
        How the limit was obtained, where that is worth saying (an extrapolated threshold).
    """

    value: float | None
    needs: str
    bound: Bound = Bound.UPPER
    scale: float | None = None
    notes: tuple[str, ...] = ()


def derated(factor: float, rating: float | None) -> float | None:
    """``factor`` × ``rating``, or None without the rating."""
    return None if rating is None else factor * rating


def rating_field(switch: Switch, rating: str) -> str:
    """Where the design gives a rating of ``switch``'s device."""
    return f"devices.{switch.device.name}.ratings.{rating}"


def peak_voltage_limit(switch: Switch, policy: Policy) -> DeratedLimit:
    """Transient drain-source peak: ``peak_voltage`` × ``v_ds_max`` [V]."""
    return DeratedLimit(derated(policy.peak_voltage, switch.device.v_ds_max), rating_field(switch, "v_ds_max"))


def gate_on_limit(switch: Switch, policy: Policy) -> DeratedLimit:
    """Highest gate-source voltage: ``gate_voltage`` × ``v_gs_max`` [V]."""
    return DeratedLimit(derated(policy.gate_voltage, switch.device.v_gs_max), rating_field(switch, "v_gs_max"))


def gate_off_limit(switch: Switch, policy: Policy) -> DeratedLimit:
    """Most negative gate-source voltage: ``gate_voltage`` × ``v_gs_min`` [V], a lower limit.

    The margin is normalised by |limit|; for a device rated 0 V minimum the limit is 0 V, and the positive
    gate limit ``gate_voltage`` × ``v_gs_max`` normalises it instead (without that rating: no limit).
    """
    device, factor = switch.device, policy.gate_voltage
    limit = derated(factor, device.v_gs_min)
    scale = abs(limit) if limit else derated(factor, device.v_gs_max)
    needed = rating_field(switch, "v_gs_min") if limit is None else \
        rating_field(switch, "v_gs_max") + " (to scale a 0 V limit)"
    return DeratedLimit(limit if scale else None, needed, Bound.LOWER, scale)


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
