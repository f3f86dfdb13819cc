"""Device data checked against physics: what no device of its technology can have is an error, what is merely
unusual is a warning.

A schema checks each value alone; these checks compare values with each other. A threshold that rises with
temperature, or an R_ds(on) that falls, would move a hot-junction limit the wrong way (a higher hot threshold
lets more induced gate voltage pass; a lower hot R_ds(on) lowers T_j), so for the technologies where physics
rules it out the data are refused:

- the gate threshold of a MOSFET falls with temperature (the Fermi potential and intrinsic carrier density
  move it down, about -2 to -10 mV/K): B. J. Baliga, *Fundamentals of Power Semiconductor Devices*, Springer,
  2008, sec. 6.4 (from memory). Some GaN HEMT gate structures shift the other way, so there it is a warning;
- R_ds(on) of a Si or SiC MOSFET rises with temperature (carrier mobility falls): same source, sec. 6.6 (from
  memory). Other technologies get a warning;
- a "hot" value is stated above 25 degC, where the cold values are stated;
- an SOA chart or an avalanche rating stated at or above T_j,max allows no power or energy at all, and the
  carrying of either to another temperature divides by T_j,max minus that temperature;
- the V_CE(sat) of a non-punch-through or field-stop IGBT rises with temperature (its bipolar gain and the
  mobility in the thick drift region), while a punch-through IGBT's falls at low current (its heavily doped
  buffer's carrier lifetime rises with temperature): Baliga 2008, ch. 9 (from memory). A V_CE(sat) temperature
  dependence whose sign contradicts a stated ``structure`` is refused; without a structure it is accepted.
  An IGBT's gate is a MOS gate, so its threshold falls with temperature as a MOSFET's does.
"""

from __future__ import annotations

import math
from typing import TYPE_CHECKING

from margincheck.intervals import Interval
from margincheck.technology import design_name, in_terms_of
from margincheck.units import format_value

if TYPE_CHECKING:
    from margincheck.building import Builder
    from margincheck.devices import Device
    from margincheck.loading import DocPath, Document

__all__ = ["REFERENCE_TEMPERATURE", "check_device_consistency"]

REFERENCE_TEMPERATURE = 298.15  # 25 degC [K], where datasheets state threshold and R_ds(on) unless told
_MOSFETS = ("si-mosfet", "sic-mosfet", "igbt")  # MOS-gated: the threshold falls with temperature
#: The sign of dV_CE(sat)/dT each IGBT structure has at its datasheet current (1 rising, -1 falling).
_SATURATION_SIGN = {"non-punch-through": 1, "field-stop": 1, "punch-through": -1}


def _ends(interval: Interval) -> list[tuple[str, float]]:
    return [("minimum", interval.low), ("nominal", interval.nominal), ("maximum", interval.high)]


def _end_moving(cold: Interval, hot: Interval, rises: bool) -> str | None:
    """The first end ("minimum"...) at which ``hot`` lies above ``cold`` (``rises``) or below it."""
    for (name, cold_value), (_, hot_value) in zip(_ends(cold), _ends(hot)):
        if math.isfinite(cold_value) and math.isfinite(hot_value) and \
                (hot_value > cold_value if rises else hot_value < cold_value):
            return name
    return None


class _Reporter:
    """Errors or warnings for one device, by its technology."""

    def __init__(self, builder: Builder, document: Document, path: DocPath, device: Device):
        self.builder, self.document, self.path, self.device = builder, document, path, device

    def _located(self, field: tuple) -> tuple:
        """``field`` (MOSFET names) as the design file names it for this device's technology."""
        return self.path + tuple(design_name(self.device.technology, part) for part in field)

    def impossible(self, field: tuple, message: str) -> None:
        self.builder.fail(self.document, self._located(field), in_terms_of(self.device.technology, message))

    def by_technology(self, field: tuple, message: str, refused_for: tuple[str, ...]) -> None:
        """An error for the technologies in ``refused_for``, a warning for the others."""
        technology = self.device.technology
        if technology in refused_for:
            self.impossible(field, f"{message}, which a {technology} cannot do; check the datasheet value")
        else:
            self.builder.warnings.append(self.document.problem(self._located(field), in_terms_of(
                technology, f"{message}, which is unusual; check the datasheet value")))


def _hot_point(report: _Reporter, values: tuple[Interval | None, Interval | None], field: tuple,
               names: tuple[str, str], rises: bool, consequence: str) -> None:
    """Report a hot value (``values[1]``) that lies beyond the cold one the wrong way: above it when
    ``rises`` is the wrong way, else below it. ``names`` is the quantity's name and the cold value's field."""
    cold, hot = values
    end = None if cold is None or hot is None else _end_moving(cold, hot, rises)
    if end is not None:
        side = "above" if rises else "below"
        report.by_technology(field, f"the hot {names[0]}'s {end} is {side} the cold one ({names[1]}): {consequence}",
                             _MOSFETS)


def _threshold(report: _Reporter, device: Device) -> None:
    characteristics = ("characteristics",)
    hot_t_j = device.v_gs_th_hot_t_j
    if hot_t_j is not None and hot_t_j <= REFERENCE_TEMPERATURE:
        report.impossible(characteristics + ("v_gs_th_hot", "t_j"),
                          f"a hot threshold must be stated above 25 degC (where v_gs_th is stated), got "
                          f"{format_value(hot_t_j, 'temperature')}")
    else:
        _hot_point(report, (device.v_gs_th, device.v_gs_th_hot), characteristics + ("v_gs_th_hot", "v_gs_th"),
                   ("threshold", "v_gs_th"), rises=True, consequence="the threshold would rise with temperature")
    coefficient = device.v_gs_th_temperature_coefficient
    if coefficient is not None and coefficient.high > 0:
        report.by_technology(characteristics + ("v_gs_th_temperature_coefficient",),
                             f"a positive coefficient ({format_value(coefficient.high, 'temperature_coefficient')}) "
                             "makes the threshold rise with temperature", _MOSFETS)


def _on_resistance(report: _Reporter, device: Device) -> None:
    rating, characteristics = device.r_ds_on, ("characteristics",)
    if rating is None:
        return
    _hot_point(report, (rating.value, rating.hot_value), characteristics + ("r_ds_on_hot", "value"),
               ("R_ds(on)", "r_ds_on.value"), rises=False,
               consequence="R_ds(on) would fall with temperature and lower T_j")
    if rating.coefficient is not None and rating.coefficient.low < 0:
        report.by_technology(characteristics + ("r_ds_on_temperature_coefficient",),
                             "a negative coefficient makes R_ds(on) fall with temperature and lowers T_j", _MOSFETS)


def _below_t_j_max(report: _Reporter, device: Device) -> None:
    if device.t_j_max is None:
        return
    limit = format_value(device.t_j_max, "temperature")
    stated = [(("soa_chart", "t_c"), device.soa_chart and device.soa_chart.t_c, "an SOA chart"),
              (("ratings", "avalanche", "t_j"), device.avalanche and device.avalanche.t_j, "an avalanche rating")]
    for field, temperature, what in stated:
        if temperature is not None and temperature >= device.t_j_max:
            report.impossible(field, f"{what} must be stated below ratings.t_j_max ({limit}), got "
                                     f"{format_value(temperature, 'temperature')}: at t_j_max it allows nothing")


def _saturation_voltage(report: _Reporter, device: Device) -> None:
    """A V_CE(sat) temperature dependence against the sign the stated structure has."""
    saturation, sign = device.v_ce_sat, _SATURATION_SIGN.get(device.structure)
    if saturation is None or sign is None:
        return
    given = ("characteristics", "v_ce_sat_hot", "value") if saturation.hot_value is not None else \
        ("characteristics", "v_ce_sat_temperature_coefficient")
    coefficient = saturation.temperature_coefficient()
    if coefficient is not None and coefficient * sign < 0:
        direction = "falls" if sign > 0 else "rises"
        expected = "rises" if sign > 0 else "falls (at low current)"
        report.impossible(given, f"V_CE(sat) {direction} with temperature here, but a {device.structure} "
                                 f"IGBT's {expected}; check the datasheet value or the structure")


def check_device_consistency(builder: Builder, document: Document, path: DocPath, device: Device) -> None:
    """Record an error or warning in ``builder`` for each value of ``device`` that contradicts another."""
    report = _Reporter(builder, document, path, device)
    _threshold(report, device)
    _on_resistance(report, device)
    _below_t_j_max(report, device)
    _saturation_voltage(report, device)
