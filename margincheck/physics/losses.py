"""Switching energies of a hard-switched cell with a clamped inductive load (piecewise-linear waveforms).

With the load current I clamped by the opposite diode, the switch sees at turn-on first the current rise
(t_ri, at full voltage V) and then the voltage fall (t_fv, at full current I); at turn-off the voltage rise
(t_rv) and then the current fall (t_fi). With linear ramps each interval dissipates ½·V·I·t, so

    E_on  = ½·V·I·(t_ri + t_fv) + Q_rr·V + E_oss(V)                                                 (1)
    E_off = ½·V·I·(t_rv + t_fi)                                                                    (2)

where Q_rr·V is the opposite diode's recovery charge taken from the bus through the switch and E_oss(V) the
energy of the switch's own output capacitance, dumped in its channel at hard turn-on.

References
----------
.. [1] N. Mohan, T. M. Undeland, W. P. Robbins, *Power Electronics: Converters, Applications, and Design*,
   3rd ed., Wiley, 2003, sec. 2-5 (switching losses with linearised waveforms, W = ½·V·I·t) - from memory.
.. [2] design.md section 8: E = ½·V·I·t (400 V, 20 A, 20 ns gives 80 µJ).
"""

from __future__ import annotations

__all__ = ["linear_transition_energy", "turn_off_energy", "turn_on_energy"]


def linear_transition_energy(voltage, current, duration):
    """Energy of one linear transition at full voltage or full current, ½·V·I·t [J].

    Examples
    --------
    >>> round(linear_transition_energy(400.0, 20.0, 20e-9) * 1e6, 6)  # design.md section 8 anchor
    80.0
    """
    return 0.5 * voltage * current * duration


def turn_on_energy(voltage, current, current_rise_time, voltage_fall_time, recovery_charge=0.0,
                   output_energy=0.0):
    """E_on of Eq. (1) [J]: V [V], I [A], t_ri and t_fv [s], Q_rr [C], E_oss(V) [J]."""
    return (linear_transition_energy(voltage, current, current_rise_time + voltage_fall_time)
            + recovery_charge * voltage + output_energy)  # Eq. (1)


def turn_off_energy(voltage, current, voltage_rise_time, current_fall_time):
    """E_off of Eq. (2) [J]: V [V], I [A], t_rv and t_fi [s]."""
    return linear_transition_energy(voltage, current, voltage_rise_time + current_fall_time)  # Eq. (2)
