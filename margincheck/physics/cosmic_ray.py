"""Cosmic-ray induced failure rate of a power device blocking a DC voltage (single-event burnout by the
neutrons of the terrestrial cosmic radiation).

A device blocking a DC voltage fails at random, at a rate that depends exponentially on the voltage [2]. The
empirical form used here, per device, is [1]

    λ(V) = C3·exp(C2/(C1 − V))   for V > C1,   λ = 0 for V ≤ C1                                  (1)

with device constants C1 [V], C2 [V] (> 0) and C3 [failures per unit time]: above C1 the rate rises steeply
with V toward C3; as V falls to C1 the exponent goes to −∞, so the rate vanishes there and (1) is continued
by 0 below C1. The rate scales with the neutron flux, which rises with altitude h [m] as the air above
thins, and falls as the junction grows hotter [1]:

    λ(V, h, T_j) = λ(V)·exp((1 − (1 − h/44300)^5.26)/0.143)·exp((25 °C − T_j)/47.6 K)            (2)

``(1 − h/44300)^5.26`` is the pressure ratio p(h)/p0 of the standard atmosphere's lowest layer: from the U.S.
Standard Atmosphere 1976 (sea level 288.15 K, lapse rate −0.0065 K/m, g0 = 9.80665 m/s², M = 0.0289644
kg/mol, R* = 8.31432 N·m/(mol·K), valid up to 11 km [3]), p/p0 = (1 − h/(T0/|L|))^(g0·M/(R*·|L|)) with
T0/|L| = 44 331 m and g0·M/(R*·|L|) = 5.2559, which the rounded 44300 and 5.26 match to 0.1 %.

What is confirmed and what is not
---------------------------------
- Confirmed: the failure rate of DC-stressed power devices depends exponentially on the applied voltage,
  and the cause is cosmic radiation (Kabza et al. [2], abstract); the pressure ratio of the standard
  atmosphere [3].
- From memory, not confirmed against the paper: the form of (1), its continuation by 0 below C1, and the
  altitude (0.143) and temperature (47.6 K) factors of (2), recalled as Zeller's [1]; equation numbers of [1]
  not confirmed. The device file's constants must come from the same form.

References
----------
.. [1] H. R. Zeller, "Cosmic ray induced failures in high power semiconductor devices", Solid-State
   Electronics 38(12), 1995, pp. 2041-2046 - from memory.
.. [2] H. Kabza, H.-J. Schulze, Y. Gerstenmaier, P. Voss, F. Pfirsch, "Cosmic radiation as a cause for power
   device failure and possible countermeasures", Proc. 6th Int. Symp. on Power Semiconductor Devices and ICs
   (ISPSD), Davos, 1994, doi:10.1109/ISPSD.1994.583620.
.. [3] U.S. Standard Atmosphere, 1976, NOAA/NASA/USAF, Washington D.C., 1976: the pressure equation of a
   layer with a constant lapse rate, and the layer table (layer 0: 0 to 11 000 m, −0.0065 K/m).
"""

from __future__ import annotations

import numpy as np

__all__ = ["ALTITUDE_RANGE", "altitude_factor", "blocking_failure_rate", "cosmic_ray_failure_rate",
           "temperature_factor"]

#: Altitudes [m] where Eq. (2)'s pressure ratio holds: up to the top of the standard atmosphere's lowest layer
#: (11 km [3]); down to 500 m below sea level (the lowest land is some 430 m below it: common practice).
ALTITUDE_RANGE = (-500.0, 11_000.0)

_SCALE_HEIGHT = 44_300.0      # m, Eq. (2) [1] - from memory (T0/|L| = 44 331 m in [3])
_PRESSURE_EXPONENT = 5.26     # Eq. (2) [1] - from memory (g0·M/(R*·|L|) = 5.2559 in [3])
_ALTITUDE_SCALE = 0.143       # Eq. (2) [1] - from memory
_REFERENCE_TEMPERATURE = 298.15  # K (25 °C), Eq. (2) [1] - from memory
_TEMPERATURE_SCALE = 47.6     # K, Eq. (2) [1] - from memory


def blocking_failure_rate(voltage, c1, c2, c3):
    """λ(V) of Eq. (1) at sea level and 25 °C [same unit as ``c3``].

    Parameters
    ----------
    voltage : float or ndarray
        DC voltage the device blocks [V].
    c1, c2 : float
        Device constants [V]: the voltage below which the rate vanishes, and the steepness (> 0).
    c3 : float
        Device constant: the rate the expression tends to at high voltage [1/s or FIT].

    Returns
    -------
    float or ndarray
        The failure rate [unit of ``c3``]; 0 at and below ``c1``.

    Examples
    --------
    >>> round(float(blocking_failure_rate(900.0, 600.0, 300.0, 1000.0)), 4)  # 1000·e^-1
    367.8794
    """
    voltage = np.asarray(voltage, dtype=float)
    above = voltage - c1
    with np.errstate(divide="ignore", over="ignore", invalid="ignore"):
        rate = c3 * np.exp(-c2 / np.where(above > 0, above, np.nan))  # Eq. (1), written for V > C1
    return np.where(above > 0, rate, np.where(np.isnan(voltage), np.nan, 0.0))


def altitude_factor(altitude):
    """The altitude factor of Eq. (2), 1 at sea level [dimensionless]; NaN outside ``ALTITUDE_RANGE``.

    Parameters
    ----------
    altitude : float or ndarray
        Height above sea level [m].

    Examples
    --------
    >>> float(altitude_factor(0.0))
    1.0
    >>> round(float(altitude_factor(2000.0)), 2)
    4.52
    """
    altitude = np.asarray(altitude, dtype=float)
    inside = (altitude >= ALTITUDE_RANGE[0]) & (altitude <= ALTITUDE_RANGE[1])
    pressure_ratio = (1.0 - np.where(inside, altitude, np.nan) / _SCALE_HEIGHT) ** _PRESSURE_EXPONENT  # p/p0 [3]
    return np.exp((1.0 - pressure_ratio) / _ALTITUDE_SCALE)  # Eq. (2)


def temperature_factor(junction_temperature):
    """The junction-temperature factor of Eq. (2), 1 at 25 °C, larger when colder [dimensionless].

    Parameters
    ----------
    junction_temperature : float or ndarray
        Junction temperature [K].
    """
    return np.exp((_REFERENCE_TEMPERATURE - np.asarray(junction_temperature, dtype=float)) / _TEMPERATURE_SCALE)


def cosmic_ray_failure_rate(voltage, altitude, junction_temperature, c1, c2, c3):
    """λ(V, h, T_j) of Eq. (2) [unit of ``c3``]: the blocking failure rate at altitude and temperature.

    Parameters
    ----------
    voltage : float or ndarray
        DC voltage the device blocks [V].
    altitude : float or ndarray
        Height above sea level [m]; NaN results outside ``ALTITUDE_RANGE``.
    junction_temperature : float or ndarray
        Junction temperature [K].
    c1, c2, c3 : float
        The device constants of Eq. (1) [V, V, rate].

    Returns
    -------
    float or ndarray
        The failure rate [unit of ``c3``], rising with voltage and altitude and falling with temperature.
    """
    return (blocking_failure_rate(voltage, c1, c2, c3) * altitude_factor(altitude)
            * temperature_factor(junction_temperature))  # Eq. (2)
