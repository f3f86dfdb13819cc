"""TR-BDF2: an L-stable, second-order implicit integrator for charge-oriented circuit equations, one step size
per corner, every corner advanced at once.

The circuit is written as

    d/dt q(x) = f(x, t)                                                                            (1)

with x the node voltages and branch currents, q(x) the capacitor charges and inductor flux linkages (rows
whose q is constant are algebraic constraints: a gate loop without inductance, a diode without charge). A step
of length h from t_n is a trapezoidal stage to t_n + γh followed by a second-order backward difference over
(t_n, t_n + γh, t_n + h), γ = 2 − √2:

    q(y) − q(x_n) = (γh/2)·(f(x_n) + f(y))                                                          (2)
    q(z) − [q(y) − (1 − γ)²·q(x_n)]/(γ(2 − γ)) = h·(1 − γ)/(2 − γ)·f(z)                               (3)

Each stage is solved by Newton's method with the exact Jacobians ∂q/∂x and ∂f/∂x. The method is L-stable (the
stiff and algebraic parts, a conducting diode or an ideal gate driver, are damped, not rung) and of order 2;
its local error is estimated from the second divided difference of f over the three stage points,

    e_q ≈ 2·k·h·(f(x_n)/γ − f(y)/(γ(1 − γ)) + f(z)/(1 − γ)),  k = (−3γ² + 4γ − 2)/(12(2 − γ)),       (4)

filtered through the stage-3 Newton matrix (so that algebraic rows do not drive the step), and the step is
accepted when the weighted error is at most 1 and resized by 0.9·err^(−1/3) (between 0.2× and 4×).

References
----------
.. [1] R. E. Bank, W. M. Coughran, W. Fichtner, E. H. Grosse, D. J. Rose, R. K. Smith, "Transient simulation of
   silicon devices and circuits", IEEE Trans. Computer-Aided Design 4(4), 1985, pp. 436-451 (the TR-BDF2
   method and its error estimate, Eq. (4)) - from memory.
.. [2] M. E. Hosea, L. F. Shampine, "Analysis and implementation of TR-BDF2", Applied Numerical Mathematics
   20, 1996, pp. 21-37 (L-stability, γ = 2 − √2) - from memory.
The accuracy of the whole (integrator and circuit) is checked in the tests against scipy's Radau on a circuit
written apart from this one.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Protocol

import numpy as np

__all__ = ["Trajectory", "integrate"]

_GAMMA = 2.0 - np.sqrt(2.0)
_TR = _GAMMA / 2.0                                          # Eq. (2)
_BDF_Y = 1.0 / (_GAMMA * (2.0 - _GAMMA))                    # Eq. (3)
_BDF_X = (1.0 - _GAMMA) ** 2 / (_GAMMA * (2.0 - _GAMMA))
_BDF_F = (1.0 - _GAMMA) / (2.0 - _GAMMA)
_ERROR = (-3.0 * _GAMMA ** 2 + 4.0 * _GAMMA - 2.0) / (12.0 * (2.0 - _GAMMA))   # Eq. (4)
_NEWTON_ITERATIONS = 8
_NEWTON_TOLERANCE = 0.05   # Newton update, in units of the error weights
_COMPACT = 0.75   # the share of the corners worked on below which the rest are taken apart


class ChargeSystem(Protocol):
    """What the integrator needs of a circuit: charges and currents with their Jacobians, per corner."""

    def charges(self, state: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """q(x) of shape (corners, n) and ∂q/∂x of shape (corners, n, n)."""

    def currents(self, state: np.ndarray, time: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """f(x, t) of shape (corners, n) and ∂f/∂x of shape (corners, n, n)."""

    def subset(self, corners: np.ndarray) -> ChargeSystem:
        """The same circuit at the corners of the index array ``corners`` only."""


@dataclass(frozen=True)
class Trajectory:
    """Samples of every corner: times (samples, corners) and states (samples, corners, n). A corner that
    finished early repeats its last sample; ``completed`` is False where a corner ran out of steps."""

    time: np.ndarray
    state: np.ndarray
    completed: np.ndarray


@dataclass
class _Stage:
    state: np.ndarray
    charge: np.ndarray
    current: np.ndarray
    matrix: np.ndarray
    converged: np.ndarray


def _solve(matrix: np.ndarray, vector: np.ndarray) -> np.ndarray:
    return np.linalg.solve(matrix, vector[..., None])[..., 0]


def _newton(system: ChargeSystem, guess: np.ndarray, constant: np.ndarray, coefficient: np.ndarray,
            time: np.ndarray, weights: np.ndarray, moving: np.ndarray) -> _Stage:
    """Solve q(y) − constant − coefficient·f(y, time) = 0 for every corner that is ``moving``.

    Once every corner's update is small, q and f at the new point are taken from the last evaluation by their
    linearisation, q(y − Δ) ≈ q(y) − (∂q/∂x)·Δ (exact to O(Δ²)), which saves an evaluation per stage.
    """
    state = guess.copy()
    converged = ~moving
    identity = np.eye(guess.shape[1])
    everyone = bool(moving.all())
    for _ in range(_NEWTON_ITERATIONS):
        charge, capacitance = system.charges(state)
        current, jacobian = system.currents(state, time)
        matrix = capacitance - coefficient[:, None, None] * jacobian
        residual = charge - constant - coefficient[:, None] * current
        if not everyone:   # corners that have finished hold still (an identity row for every state)
            matrix = np.where(moving[:, None, None], matrix, identity)
            residual = np.where(moving[:, None], residual, 0.0)
        with np.errstate(all="ignore"):
            update = _solve(matrix, residual)
        update = np.where(np.isfinite(update), update, 0.0)
        state = state - update
        converged = converged | (np.max(np.abs(update) / weights, axis=1) < _NEWTON_TOLERANCE)
        if converged.all():
            charge = charge - np.einsum("cij,cj->ci", capacitance, update)
            current = current - np.einsum("cij,cj->ci", jacobian, update)
            return _Stage(state, charge, current, matrix, np.isfinite(state).all(axis=1))
    charge, _ = system.charges(state)
    current, _ = system.currents(state, time)
    return _Stage(state, charge, current, matrix, converged & np.isfinite(state).all(axis=1))


def _consistent(system: ChargeSystem, start: np.ndarray, step: np.ndarray, weights: np.ndarray) -> np.ndarray:
    """A backward-Euler step so short that the differential states do not move, which puts the algebraic
    ones where the new input (a driver that has just stepped) wants them."""
    charge, _ = system.charges(start)
    moving = np.ones(start.shape[0], dtype=bool)
    settled = _newton(system, start, charge, step, np.zeros(start.shape[0]), weights, moving)
    return np.where(settled.converged[:, None], settled.state, start)


def integrate(system: ChargeSystem, start: np.ndarray, end_time: np.ndarray, first_step: np.ndarray,
              largest_step: np.ndarray, absolute_tolerance: np.ndarray, relative_tolerance: float,
              max_steps: int) -> Trajectory:
    """Integrate Eq. (1) from t = 0 with state ``start`` (corners, n) to ``end_time`` (corners,) [s].

    Only the corners still short of their end are worked on: when they fall to _COMPACT of those worked on,
    the circuit is taken at them alone (``system.subset``), so that the corners that need the most steps (an
    oscillating corner) do not make every corner pay for them.

    Parameters
    ----------
    system : ChargeSystem
        The circuit.
    start : ndarray
        Initial states, shape (corners, n); the algebraic rows are made consistent with the inputs at t = 0+
        by a backward-Euler step of 10⁻³ of the first step.
    end_time, first_step, largest_step : ndarray
        Per corner: where to stop, the first step and the largest step [s].
    absolute_tolerance : ndarray
        Per corner and state, the absolute error that is acceptable (volts, amperes, coulombs).
    relative_tolerance : float
        Relative error per step.
    max_steps : int
        Steps (accepted or not) after which corners still short of ``end_time`` are marked not completed.
    """
    corners = start.shape[0]
    state = _consistent(system, start.astype(float), first_step * 1e-3, absolute_tolerance)
    charge, _ = system.charges(state)
    current, _ = system.currents(state, np.zeros(corners))
    run = _Run(system, np.arange(corners), np.zeros(corners), state, charge, current, np.zeros_like(state),
               np.minimum(first_step, largest_step), end_time, largest_step, absolute_tolerance)
    time, times, states = np.zeros(corners), _Samples(np.zeros(corners)), _Samples(state)
    for _ in range(max_steps):
        moving = run.time < run.end_time * (1.0 - 1e-12)
        if not moving.any():
            break
        if moving.sum() <= _COMPACT * moving.size:
            run = run.subset(np.flatnonzero(moving))
            moving = moving[moving]
        _advance(run, moving, relative_tolerance)
        time[run.corners], state[run.corners] = run.time, run.state
        times.append(time)
        states.append(state)
    completed = time >= end_time * (1.0 - 1e-9)
    return Trajectory(times.stacked(), states.stacked(), completed)


@dataclass
class _Run:
    """The corners worked on (``corners``, indices into the whole) and their per-corner integration state."""

    system: ChargeSystem
    corners: np.ndarray
    time: np.ndarray
    state: np.ndarray
    charge: np.ndarray
    current: np.ndarray
    slope: np.ndarray   # the last accepted step's dx/dt, for the first Newton guess
    step: np.ndarray
    end_time: np.ndarray
    largest_step: np.ndarray
    absolute_tolerance: np.ndarray

    def subset(self, keep: np.ndarray) -> _Run:
        """The run at the corners ``keep`` (indices into this run's corners) only."""
        arrays = {name: getattr(self, name)[keep] for name in (
            "corners", "time", "state", "charge", "current", "slope", "step", "end_time", "largest_step",
            "absolute_tolerance")}
        return _Run(self.system.subset(keep), **arrays)


def _advance(run: _Run, moving: np.ndarray, relative_tolerance: float) -> None:
    """One TR-BDF2 step, Eqs. (2)-(4), of every ``moving`` corner of ``run``: accepted or resized."""
    time, state, charge, current, system = run.time, run.state, run.charge, run.current, run.system
    absolute_tolerance = run.absolute_tolerance
    step = np.where(moving, np.minimum(run.step, run.end_time - time), 0.0)
    weights = absolute_tolerance + relative_tolerance * np.abs(state)
    trapezoid = _newton(system, state + _GAMMA * step[:, None] * run.slope, charge + _TR * step[:, None] * current,
                        _TR * step, time + _GAMMA * step, weights, moving)
    guess = state + (trapezoid.state - state) / _GAMMA
    backward = _newton(system, guess, _BDF_Y * trapezoid.charge - _BDF_X * charge, _BDF_F * step,
                       time + step, weights, moving)
    estimate = 2.0 * _ERROR * step[:, None] * (current / _GAMMA - trapezoid.current / (_GAMMA * (1.0 - _GAMMA))
                                               + backward.current / (1.0 - _GAMMA))
    with np.errstate(all="ignore"):
        error_state = _solve(backward.matrix, np.where(moving[:, None], estimate, 0.0))
        scale = absolute_tolerance + relative_tolerance * np.maximum(np.abs(state), np.abs(backward.state))
        error = np.max(np.abs(error_state) / scale, axis=1)
    solved = trapezoid.converged & backward.converged & np.isfinite(error)
    accept = moving & solved & (error <= 1.0)
    run.time = np.where(accept, time + step, time)
    with np.errstate(all="ignore"):
        run.slope = np.where(accept[:, None], (backward.state - state) / np.where(step > 0, step, 1.0)[:, None],
                             run.slope)
    run.state = np.where(accept[:, None], backward.state, state)
    run.charge = np.where(accept[:, None], backward.charge, charge)
    run.current = np.where(accept[:, None], backward.current, current)
    with np.errstate(divide="ignore"):
        factor = np.clip(0.9 * np.where(error > 0, error, 1e-12) ** (-1.0 / 3.0), 0.2, 4.0)
    factor = np.where(solved, factor, 0.25)
    run.step = np.minimum(np.where(moving, step * factor, step), run.largest_step)


class _Samples:
    """The samples of a trajectory in one array that grows in place (realloc), so that the samples are never
    held twice (a list of samples stacked at the end would be)."""

    def __init__(self, first: np.ndarray):
        self.count = 0
        self.array = np.empty((64,) + first.shape)
        self.append(first)

    def append(self, sample: np.ndarray) -> None:
        """Store a copy of ``sample``."""
        if self.count == self.array.shape[0]:
            self.array.resize((2 * self.count,) + sample.shape, refcheck=False)
        self.array[self.count] = sample
        self.count += 1

    def stacked(self) -> np.ndarray:
        """The samples so far, shape (samples, ...)."""
        self.array.resize((self.count,) + self.array.shape[1:], refcheck=False)
        return self.array
