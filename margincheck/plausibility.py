"""Plausible ranges of design values: outside them a value is possible but unusual, and the report warns.

These are facts of the trade for discrete power switches and their cells (common practice), chosen wide
so that a warning points at a likely typo or wrong unit ("20 kV" meant as "200 V", "1 mH" for "1 nH"). They
never change a finding's status.
"""

from __future__ import annotations

from margincheck.units import format_value

__all__ = ["PLAUSIBLE", "implausibility"]

#: Field name -> (lowest, highest) plausible value in SI units, and what a value outside suggests.
PLAUSIBLE: dict[str, tuple[float, float, str]] = {
    "v_ds_max": (1.0, 10e3, "discrete switches are rated from a few volts to about 10 kV"),
    "v_gs_max": (1.0, 40.0, "gate ratings of MOSFETs and HEMTs lie between a few volts and about 40 V"),
    "v_gs_min": (-40.0, 0.0, "negative gate ratings lie between 0 V and about -40 V"),
    "i_d_pulse": (0.1, 10e3, "pulsed current ratings of discrete switches lie below about 10 kA"),
    "t_j_max": (323.15, 573.15, "maximum junction temperatures lie between about 50 degC and 300 degC"),
    "bus_voltage": (1.0, 10e3, "a cell for one discrete switch rarely runs above 10 kV"),
    "turn_off_current": (0.01, 10e3, "a discrete switch rarely turns off more than 10 kA"),
    "switching_frequency": (1.0, 100e6, "hard-switched power cells run below about 100 MHz"),
    "case_temperature": (173.15, 573.15, "case temperatures lie between about -100 degC and 300 degC"),
    "inductance": (0.05e-9, 1e-6, "commutation loops measure from a fraction of a nH to some hundreds of nH; "
                                  "check the unit (nH, not uH or mH)"),
    "common_source_inductance": (0.01e-9, 100e-9, "common-source inductance is a fraction of a nH to some tens "
                                                  "of nH"),
    "v_gs_th": (-30.0, 15.0, "gate thresholds lie between about -30 V (depletion mode) and 15 V"),
    "transconductance": (0.01, 10e3, "transconductance of power switches lies between 0.01 S and some 1000 S"),
    "c_iss": (1e-12, 1e-6, "input capacitance lies between pF and about 1 uF"),
    "c_rss": (1e-15, 1e-7, "reverse transfer capacitance lies between fF and about 100 nF"),
    "c_oss": (1e-13, 1e-6, "output capacitance lies between 0.1 pF and about 1 uF"),
    "r_g_internal": (0.01, 100.0, "internal gate resistance lies between 0.01 ohm and about 100 ohm"),
    "r_on": (0.0, 1e3, "gate resistors above 1 kohm are unusual"),
    "r_off": (0.0, 1e3, "gate resistors above 1 kohm are unusual"),
    "r_driver": (0.0, 1e3, "driver output resistance above 1 kohm is unusual"),
    "on": (0.0, 40.0, "gate on-levels lie between 0 V and about 40 V"),
    "off": (-40.0, 15.0, "gate off-levels lie between about -40 V and a few volts"),
    "turn_off_di_dt": (1e6, 1e12, "turn-off di/dt lies between 0.001 A/ns and about 1000 A/ns"),
    "rated_voltage": (1.0, 20e3, "bus capacitors are rated between a few volts and about 20 kV"),
    "capacitance": (1e-12, 10.0, "bus capacitance above 10 F is unusual"),
    "heatsink_temperature": (173.15, 573.15, "heat-sink temperatures lie between about -100 degC and 300 degC"),
    "r_th_jc": (1e-3, 100.0, "junction-to-case thermal resistance lies between 0.001 K/W and about 100 K/W"),
    "r_th_cs": (1e-4, 50.0, "case-to-heat-sink thermal resistance lies between 0.0001 K/W and about 50 K/W"),
    "rms_current": (0.0, 10e3, "a discrete switch rarely carries more than 10 kA rms"),
    "switched_current": (0.0, 10e3, "a discrete switch rarely commutates more than 10 kA"),
    "withstand_time": (0.05e-6, 100e-6, "short-circuit withstand times lie between some 50 ns and some 10 us; "
                                        "check the unit (us, not ms)"),
    "response_time": (1e-9, 1e-3, "protection response times lie between ns and about 1 ms"),
}


def implausibility(field: str, value: float, kind: str) -> str | None:
    """A warning text when ``value`` of ``field`` is outside its plausible range, else None."""
    bounds = PLAUSIBLE.get(field)
    if bounds is None:
        return None
    low, high, reason = bounds
    if low <= value <= high:
        return None
    side = "above" if value > high else "below"
    edge = format_value(high if value > high else low, kind)
    return f"{format_value(value, kind)} is {side} {edge}, which is unusual: {reason}"
