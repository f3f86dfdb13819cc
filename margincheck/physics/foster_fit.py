"""A Foster network fitted to points of a datasheet's single-pulse Z_th curve.

The time constants are fixed on a logarithmic grid spanning the points (and a decade beyond each end); the
resistances are the non-negative least-squares solution of

    minimise Σ_k w_k²·(Σ_i R_i·(1 − exp(−t_k/τ_i)) − Z_k)²   subject to R_i ≥ 0

with relative weights w_k = 1/Z_k, so that the short-pulse end, where Z_th is small, is fitted as closely as
the long end. Non-negativity keeps every cell physical (a Foster cell with R < 0 has no meaning).

References
----------
.. [1] C. L. Lawson, R. J. Hanson, *Solving Least Squares Problems*, Prentice-Hall, 1974, ch. 23 (the NNLS
   active-set algorithm) - from memory; checked against scipy.optimize.nnls in the tests.
.. [2] JEDEC JESD51-14, 2010 (Foster networks for transient thermal impedance) - from memory.
"""

from __future__ import annotations

import numpy as np

__all__ = ["fit_foster", "non_negative_least_squares"]

_TIME_CONSTANTS_PER_DECADE = 4


def non_negative_least_squares(matrix, target, tolerance: float = 1e-12):
    """x ≥ 0 minimising ‖A·x − b‖₂, by the Lawson-Hanson active-set method.

    Examples
    --------
    >>> non_negative_least_squares(np.array([[1.0, 0.0], [0.0, 1.0]]), np.array([2.0, -1.0])).tolist()
    [2.0, 0.0]
    """
    matrix, target = np.asarray(matrix, dtype=float), np.asarray(target, dtype=float)
    columns = matrix.shape[1]
    solution = np.zeros(columns)
    passive = np.zeros(columns, dtype=bool)
    threshold = tolerance * max(1.0, float(np.abs(matrix).max()) * columns)
    for _ in range(3 * columns):
        gradient = matrix.T @ (target - matrix @ solution)
        if passive.all() or gradient[~passive].max() <= threshold:
            break
        passive[np.argmax(np.where(passive, -np.inf, gradient))] = True
        while True:
            trial = np.zeros(columns)
            trial[passive] = np.linalg.lstsq(matrix[:, passive], target, rcond=None)[0]
            if trial[passive].min() > 0:
                solution = trial
                break
            leaving = passive & (trial <= 0)
            with np.errstate(divide="ignore", invalid="ignore"):
                ratios = np.where(leaving, np.nan_to_num(solution / (solution - trial)), np.inf)
            solution = solution + ratios.min() * (trial - solution)
            solution[np.argmin(ratios)] = 0.0  # the variable that reached zero first leaves the passive set
            passive &= solution > 0
    return solution


def fit_foster(times, impedances):
    """(R_i [K/W], τ_i [s]) of a Foster network whose Z_th passes through the given curve points.

    ``times`` [s] ascending and ``impedances`` [K/W] positive. Cells with a zero resistance are dropped.
    """
    times, impedances = np.asarray(times, dtype=float), np.asarray(impedances, dtype=float)
    first, last = np.log10(times[0]) - 1.0, np.log10(times[-1]) + 1.0
    count = int(np.ceil((last - first) * _TIME_CONSTANTS_PER_DECADE)) + 1
    time_constants = np.logspace(first, last, count)
    weights = 1.0 / impedances
    response = -np.expm1(-times[:, None] / time_constants[None, :])
    resistances = non_negative_least_squares(response * weights[:, None], impedances * weights)
    keep = resistances > 0
    return resistances[keep], time_constants[keep]
