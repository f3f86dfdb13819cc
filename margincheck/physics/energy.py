"""Energy stored in the bus capacitance: the hazard figure the cautions quote."""

from __future__ import annotations

__all__ = ["capacitor_energy"]


def capacitor_energy(capacitance, voltage):
    """Energy stored in a capacitor charged to ``voltage`` [J].

    Parameters
    ----------
    capacitance : float or ndarray
        Capacitance C [F].
    voltage : float or ndarray
        Voltage across it V [V].

    Returns
    -------
    float or ndarray
        W = ½·C·V² [J], the work ∫ C·v dv of charging it from 0 to V.

    References
    ----------
    .. [1] D. Halliday, R. Resnick, J. Walker, *Fundamentals of Physics*, 10th ed., Wiley, 2014,
       Eq. 25-21 (energy stored in a capacitor, U = CV²/2) - from memory.

    Examples
    --------
    >>> round(capacitor_energy(100e-6, 420.0), 6)
    8.82
    """
    return 0.5 * capacitance * voltage**2
