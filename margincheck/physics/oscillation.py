"""Small-signal modes of the commutation cell in the active region: does a parasitic oscillation grow?

Linearised about a state x₀ of the simulation (the switch under test in saturation, half-way through its
current transition), the cell's equations d/dt q(x) = f(x) become the matrix pencil

    C·δẋ = J·δx,   C = ∂q/∂x,  J = ∂f/∂x,                                                           (1)

whose finite generalised eigenvalues λ (det(J − λ·C) = 0) are the modes. C is singular where a row is algebraic
(a gate loop without inductance), so the eigenvalues are found by shift and invert: with σ not an eigenvalue,
μ = eig((J − σC)⁻¹·C) and λ = σ + 1/μ; the algebraic rows give μ = 0 (λ infinite) and are dropped.

A mode λ = α ± jω with α > 0 grows as exp(α·t). It only matters for as long as the device stays in the
active region, where the channel's transconductance closes the loop; the build-up over that time is

    G = exp(α·t_active)                                                                              (2)

References
----------
.. [1] J. Lemmon, M. Mazzola, J. Gafford, C. Parker, "Stability considerations for silicon carbide field-effect
   transistors", IEEE Trans. Power Electron. 28(10), 2013, p. 4453 (turn-off oscillation of the cell as an
   oscillator: a pole pair in the right half plane while the device is in its active region).
.. [2] G. H. Golub, C. F. Van Loan, *Matrix Computations*, 4th ed., Johns Hopkins, 2013, sec. 7.7 (the
   generalised eigenvalue problem; shift and invert) - from memory.
"""

from __future__ import annotations

import numpy as np

__all__ = ["growing_mode"]

_SHIFT = -1.234e7       # rad/s: a real, slow, stable shift, far from the cell's modes
_FASTEST = 1e14         # rad/s: faster "modes" are the algebraic rows' infinite eigenvalues


def growing_mode(capacitance: np.ndarray, jacobian: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """The oscillatory mode with the largest growth rate, per corner.

    Parameters
    ----------
    capacitance, jacobian : ndarray
        C = ∂q/∂x and J = ∂f/∂x at the linearisation point, shape (corners, n, n).

    Returns
    -------
    growth_rate : ndarray
        α of the least damped mode with ω ≠ 0 [1/s] (negative: decaying); −inf where there is none.
    frequency : ndarray
        Its frequency ω/2π [Hz].
    """
    shifted = jacobian - _SHIFT * capacitance
    with np.errstate(all="ignore"):
        mu = np.linalg.eigvals(np.linalg.solve(shifted, capacitance))
        finite = np.abs(mu) > 1.0 / _FASTEST
        modes = np.where(finite, _SHIFT + 1.0 / np.where(finite, mu, 1.0), np.nan)
    oscillatory = np.isfinite(modes) & (np.abs(modes.imag) > 1e-6 * np.abs(modes))
    rates = np.where(oscillatory, modes.real, -np.inf)
    best = np.argmax(rates, axis=-1)
    rows = np.arange(rates.shape[0])
    return rates[rows, best], np.abs(modes[rows, best].imag) / (2.0 * np.pi)


def build_up(growth_rate, active_time):
    """G = exp(α·t_active) of Eq. (2), capped at e^50 so that it stays finite."""
    return np.exp(np.minimum(np.asarray(growth_rate) * np.asarray(active_time), 50.0))
