"""The switching-cell model fitted to a measured double-pulse capture, and what it predicts elsewhere.

The capture is taken at a reduced bus voltage; the uncertain inputs of the cell (margincheck.physics.
switching_cell) are fitted so that the simulated edges, measured by the same definitions as the capture's
(``measurements.measure_edge`` on uniformly resampled simulated waveforms), reproduce the measured ones:

========================  ===================================================  ============================
target                    measured on                                          informs
========================  ===================================================  ============================
ring frequency f_d        the v_ds ring after the first turn-off               L_loop (with C_oss)
ring damping ratio ζ      its logarithmic decrement                            the loop's Q
overshoot V_pk − V_bus    the first turn-off                                   L_loop·di/dt
turn-off |di/dt|          the first turn-off, 10-90 %                          L_s (shared source), g_fs, V_th
turn-on di/dt             the second turn-on, 10-90 %                          L_s (shared source), g_fs, V_th
turn-on v_ds dip          the second turn-on                                   L_loop·di/dt
========================  ===================================================  ============================

Fitted inputs: the loop inductance and its quality factor always; the common-source inductance of the switch
under test when its gate loop shares it; g_fs and V_th only on request and only within their tolerance (they
describe the sample on the bench, not the production spread, so they are not carried into the worst case).
Every other input keeps its nominal value from the design. These figures do not separate g_fs, V_th and L_s
(slower gate and stronger source feedback give the same edges): with them all fitted, the fit returns one of a
family of equivalent sets, whose predictions at other voltages agree (tests/captures/test_calibration.py).

Method (ours): Levenberg-Marquardt [1] on the relative residuals (simulated − measured)/measured, in the
logarithm of each positive input (V_th linear), with the Jacobian from forward differences. Each iteration
simulates every trial step and its difference steps as corners of one vectorised run. Inputs stay inside
their bounds (the loop at least 1.2 times the common-source inductances it holds; Q between 0.5 and 200).

References
----------
.. [1] D. W. Marquardt, "An algorithm for least-squares estimation of nonlinear parameters", J. SIAM 11(2),
   1963, pp. 431-441 - from memory.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Callable

import numpy as np

from margincheck.captures.edges import NotMeasurable
from margincheck.captures.measurements import DoublePulseFigures, TurnOffFigures, TurnOnFigures, measure_edge
from margincheck.design import Design, Switch
from margincheck.errors import format_path
from margincheck.intervals import Interval
from margincheck.physics.cell_edges import ring_period, simulated_time
from margincheck.physics.switching_cell import STATES, Cell, simulate_edge
from margincheck.rules.cell_model import cell_inputs, cells_for_grid
from margincheck.rules.switching_model import nominal_grid

__all__ = ["Calibration", "CalibrationError", "FittedValue", "TargetFit", "calibrate", "fitted_waveforms",
           "measured_targets", "nominal_point", "point_grid", "simulate_as_captured", "simulated_waveforms"]

_STEP = 0.03                 # forward-difference step in the fitted coordinates (3 % of a logarithmic input)
_DAMPING = (1e-3, 1e-2, 1e-1, 1.0, 10.0)   # the Marquardt λ of the trial steps of one iteration
_ITERATIONS = 12
_SAMPLES_PER_PERIOD = 60     # uniform resampling of a simulated edge, per ring period
_QUALITY_BOUNDS = (0.5, 200.0)
_LOOP_OVER_LEADS = 1.2       # the loop is at least this multiple of the common-source inductances it holds
_TOLERANCE = 1e-4            # the integrator's error per step in the fit (tighter than the rules': the figures
                             # are differenced)


class CalibrationError(ValueError):
    """The capture does not give what the fit needs (no measurable figure, or a cell that cannot be built)."""


@dataclass(frozen=True)
class Target:
    """A measured figure the fit matches: its name, words, quantity kind, and how to read it off the figures of a
    turn-off and a turn-on (NotMeasurable where it cannot be read)."""

    name: str
    description: str
    kind: str
    read: Callable[[TurnOffFigures | NotMeasurable, TurnOnFigures | NotMeasurable], float | NotMeasurable]


def _off(attribute: str):
    def read(turn_off, turn_on):
        return turn_off if isinstance(turn_off, NotMeasurable) else getattr(turn_off, attribute)
    return read


def _on(attribute: str):
    def read(turn_off, turn_on):
        return turn_on if isinstance(turn_on, NotMeasurable) else getattr(turn_on, attribute)
    return read


def _ring(attribute: str):
    def read(turn_off, turn_on):
        if isinstance(turn_off, NotMeasurable):
            return turn_off
        return turn_off.ring if isinstance(turn_off.ring, NotMeasurable) else getattr(turn_off.ring, attribute)
    return read


TARGETS = (
    Target("ring_frequency", "ring frequency after turn-off", "frequency", _ring("frequency")),
    Target("ring_damping_ratio", "damping ratio of that ring", "dimensionless", _ring("damping_ratio")),
    Target("overshoot", "turn-off overshoot above the bus", "voltage", _off("overshoot")),
    Target("turn_off_di_dt", "turn-off |di/dt|", "current_slew_rate", _off("di_dt")),
    Target("turn_on_di_dt", "turn-on di/dt", "current_slew_rate", _on("di_dt")),
    Target("voltage_dip", "turn-on v_ds dip", "voltage", _on("voltage_dip")),
)


@dataclass(frozen=True)
class TargetFit:
    """One target: measured, simulated with the design's values, simulated with the fitted values, and the
    residual (fitted − measured)/measured."""

    name: str
    description: str
    kind: str
    measured: float
    at_start: float
    fitted: float

    @property
    def residual(self) -> float:
        return (self.fitted - self.measured) / abs(self.measured)


@dataclass(frozen=True)
class FittedValue:
    """A fitted input: its name among the cell inputs, the design field it stands for, its kind, the value the
    fit started from (the design's nominal or a first estimate), the fitted value, and the design's interval."""

    name: str
    field: str
    kind: str
    start: float
    value: float
    design: Interval | None

    @property
    def within_design(self) -> bool | None:
        """Whether the fitted value lies inside the design's stated interval (None when it states none)."""
        if self.design is None or not (self.design.has_low or self.design.has_high):
            return None
        low = self.design.low if self.design.has_low else -math.inf
        high = self.design.high if self.design.has_high else math.inf
        return low * (1 - 1e-9) <= self.value <= high * (1 + 1e-9)


@dataclass(frozen=True)
class Calibration:
    """The cell fitted to one capture of ``switch``: the test's bus voltage and currents, the fitted values,
    each target's fit, the iterations taken, and every cell input at the fitted point (``point``)."""

    switch: str
    bus_voltage: float
    turn_off_current: float
    turn_on_current: float
    values: tuple[FittedValue, ...]
    targets: tuple[TargetFit, ...]
    iterations: int
    point: dict[str, float]
    notes: tuple[str, ...]

    @property
    def largest_residual(self) -> float:
        """The largest |residual| over the targets."""
        return max(abs(target.residual) for target in self.targets)


def measured_targets(figures: DoublePulseFigures) -> tuple[dict[str, float], dict[str, str]]:
    """The measured value of each target (first turn-off, else the second; the second turn-on), and why each
    missing one is missing."""
    turn_off = figures.first_turn_off
    if isinstance(turn_off, NotMeasurable):
        turn_off = figures.turn_off
    values, missing = {}, {}
    for target in TARGETS:
        value = target.read(turn_off, figures.turn_on)
        if isinstance(value, NotMeasurable) or not (np.isfinite(value) and value > 0):
            missing[target.name] = value.reason if isinstance(value, NotMeasurable) else f"measured {value:.3g}"
        else:
            values[target.name] = float(value)
    return values, missing


def _switched_current(figures: DoublePulseFigures, attribute: str) -> float:
    for edge in ((figures.first_turn_off, figures.turn_off) if attribute == "turn_off" else (figures.turn_on,)):
        if not isinstance(edge, NotMeasurable) and not isinstance(edge.current, NotMeasurable):
            return float(edge.current)
    raise CalibrationError(f"the capture's {attribute.replace('_', '-')} current could not be measured")


@dataclass(frozen=True)
class _Coordinate:
    """A fitted input in the fit's coordinates: u = ln(value/start) (or value − start for V_th [V])."""

    name: str
    start: float
    low: float
    high: float
    logarithmic: bool = True

    def value(self, u):
        return self.start * np.exp(u) if self.logarithmic else self.start + u

    def bounds(self) -> tuple[float, float]:
        if self.logarithmic:
            return math.log(self.low / self.start), math.log(self.high / self.start)
        return self.low - self.start, self.high - self.start


class _TestCell:
    """The cell of the capture's test: the design's nominal values at the test's bus voltage and currents, with
    the fitted inputs set per corner; simulated and measured like the capture."""

    def __init__(self, switch: Switch, design: Design, bus_voltage: float, currents: tuple[float, float]):
        self.switch, self.design = switch, design
        self.notes: list[str] = []
        inputs = cell_inputs(switch, design, self.notes)
        missing = [item.field for item in inputs.values() if item.interval is None]
        if missing:
            raise CalibrationError(f"the cell cannot be built: {missing[0]} is not given")
        self.inputs = inputs
        self.nominal = nominal_point(inputs, bus_voltage)
        self.currents = currents

    def grid(self, values: dict[str, np.ndarray], current: float) -> dict[str, np.ndarray]:
        """Every cell input: the nominal values and the test's current at every corner of ``values`` (one
        corner when it is empty), and ``values``."""
        corners = len(next(iter(values.values()))) if values else 1
        return point_grid(self.nominal | {"turn_off_current": current}, corners) | values

    def figures(self, values: dict[str, np.ndarray]) -> list[tuple]:
        """(turn-off, turn-on) figures at every corner of ``values`` (fitted inputs by name, one array each)."""
        off_current, on_current = self.currents
        cells_off = cells_for_grid(self.switch, self.design, self.grid(values, off_current), [])["turn_off"]
        cells_on = cells_for_grid(self.switch, self.design, self.grid(values, on_current), [])["turn_on"]
        off = simulate_as_captured(cells_off, "turn_off", self.nominal["bus_voltage"], off_current)
        on = simulate_as_captured(cells_on, "turn_on", self.nominal["bus_voltage"], on_current)
        return list(zip(off, on))


def point_grid(point: dict[str, float], corners: int) -> dict[str, np.ndarray]:
    """A corner grid holding ``point`` (cell inputs by name) at each of ``corners`` corners."""
    return {name: np.full(corners, value) for name, value in point.items()}


def nominal_point(inputs: dict, bus_voltage: float) -> dict[str, float]:
    """Every cell input (``cell_model.cell_inputs``) at its nominal value, at ``bus_voltage`` [V]."""
    return {name: float(values[0]) for name, values in nominal_grid(inputs).items()} | {"bus_voltage": bus_voltage}


def simulated_waveforms(cell: Cell, edge: str) -> list[tuple[np.ndarray, dict[str, np.ndarray]] | None]:
    """Simulate one edge at every corner of ``cell``: per corner, uniform sample times [s] from the gate step
    (about _SAMPLES_PER_PERIOD per ring period) and the signals ``v_ds``, ``i_d``, ``v_gs``, ``v_gs_idle`` on
    them, or None where the edge did not finish."""
    corners = np.broadcast(cell.bus_voltage, cell.load_current, cell.dut.v_th).shape[0]
    end = simulated_time(cell, edge)
    period = np.broadcast_to(ring_period(cell), (corners,))
    possible = np.isfinite(end)
    trajectory = simulate_edge(cell, edge, np.where(possible, end, 0.0), period / 10.0, _TOLERANCE)
    index = {name: position for position, name in enumerate(STATES)}
    results = []
    for corner in range(corners):
        if not (possible[corner] and trajectory.completed[corner]):
            results.append(None)
            continue
        time, unique = np.unique(trajectory.time[:, corner], return_index=True)
        uniform = np.arange(0.0, time[-1], period[corner] / _SAMPLES_PER_PERIOD)
        state = trajectory.state[unique, corner]
        results.append((uniform, {name: np.interp(uniform, time, state[:, index[column]]) for name, column in
                                  (("v_ds", "v_ds"), ("i_d", "i_L"), ("v_gs", "v_gs"), ("v_gs_idle", "v_go"))}))
    return results


def simulate_as_captured(cell: Cell, edge: str, bus_voltage: float, current: float) -> list:
    """Simulate one edge at every corner of ``cell`` and measure each corner's waveforms by the capture's
    definitions (NotMeasurable where the edge did not finish)."""
    return [NotMeasurable("the simulated edge did not finish") if waves is None
            else measure_edge(*waves, bus_voltage, current, edge == "turn_on")
            for waves in simulated_waveforms(cell, edge)]


def fitted_waveforms(design: Design, calibration: Calibration) -> dict[str, tuple | None]:
    """The fitted model's waveforms of the capture's turn-off and turn-on (``simulated_waveforms``, one corner)."""
    switch = next(item for item in design.switches if item.ref == calibration.switch)
    waves = {}
    for edge, current in (("turn_off", calibration.turn_off_current), ("turn_on", calibration.turn_on_current)):
        grid = point_grid(calibration.point | {"turn_off_current": current}, 1)
        waves[edge] = simulated_waveforms(cells_for_grid(switch, design, grid, [])[edge], edge)[0]
    return waves


def _residuals(figures: list[tuple], measured: dict[str, float]) -> np.ndarray:
    """(corners, targets) relative residuals; NaN where a simulated figure is not measurable."""
    rows = []
    for turn_off, turn_on in figures:
        row = []
        for target in TARGETS:
            if target.name not in measured:
                continue
            value = target.read(turn_off, turn_on)
            value = np.nan if isinstance(value, NotMeasurable) else float(value)
            row.append((value - measured[target.name]) / abs(measured[target.name]))
        rows.append(row)
    return np.array(rows, dtype=float)


def _coordinates(switch: Switch, test: _TestCell, measured: dict[str, float], fit_device: bool
                 ) -> list[_Coordinate]:
    """The fitted inputs with their start values and bounds."""
    nominal = test.nominal
    leads = nominal.get("common_source_inductance", 0.0) + nominal.get("opposite.common_source_inductance", 0.0)
    start_loop = _loop_from_ring(test, measured) or nominal["loop_inductance"]
    coordinates = [_Coordinate("loop_inductance", start_loop, max(_LOOP_OVER_LEADS * leads, 0.05 * start_loop),
                               20.0 * start_loop)]
    if "ring_damping_ratio" in measured:
        quality = float(np.clip(0.5 / measured["ring_damping_ratio"], *_QUALITY_BOUNDS))
        coordinates.append(_Coordinate("quality_factor", quality, *_QUALITY_BOUNDS))
    if switch.source_connection == "shared":
        start = max(nominal.get("common_source_inductance", 0.0), 0.1e-9)
        coordinates.append(_Coordinate("common_source_inductance", start, 0.01e-9, 0.5 * start_loop))
    if fit_device:
        for name, logarithmic in (("transconductance", True), ("v_gs_th", False)):
            interval = test.inputs[name].interval
            if interval.has_low and interval.has_high and interval.high > interval.low:
                coordinates.append(_Coordinate(name, nominal[name], interval.low, interval.high, logarithmic))
    return coordinates


def _loop_from_ring(test: _TestCell, measured: dict[str, float]) -> float | None:
    """L = 1/((2π·f)²·C) from the measured ring and the switch's C_oss at the bus (the first estimate)."""
    if "ring_frequency" not in measured:
        return None
    cell = cells_for_grid(test.switch, test.design, test.grid({}, test.currents[0]), [])["turn_off"]
    capacitance = float(cell.dut.c_oss.capacitance(test.nominal["bus_voltage"])[0]) + float(
        np.asarray(cell.node_capacitance).reshape(-1)[0])
    return 1.0 / ((2.0 * math.pi * measured["ring_frequency"]) ** 2 * capacitance)


def _fit(test: _TestCell, coordinates: list[_Coordinate], measured: dict[str, float]):
    """Levenberg-Marquardt over ``coordinates``: the best point, its residuals, and the iterations taken."""
    bounds = np.array([coordinate.bounds() for coordinate in coordinates])
    count = len(coordinates)

    def evaluate(points: np.ndarray) -> np.ndarray:
        values = {coordinate.name: coordinate.value(points[:, k]) for k, coordinate in enumerate(coordinates)}
        return _residuals(test.figures(values), measured)

    def with_steps(points: np.ndarray) -> np.ndarray:   # each point, then its forward-difference steps
        steps = points[:, None, :] + np.vstack([np.zeros(count), _STEP * np.eye(count)])[None]
        return np.clip(steps, bounds[:, 0], bounds[:, 1]).reshape(-1, count)

    point = np.zeros((1, count))
    evaluated = evaluate(with_steps(point))
    iterations = 0
    while iterations < _ITERATIONS:
        iterations += 1
        residual, jacobian = _linearised(evaluated[: count + 1], with_steps(point))
        if not np.isfinite(residual).all():
            raise CalibrationError("the model's edges could not be measured at the design's values")
        trials = np.clip(point + _marquardt_steps(residual, jacobian), bounds[:, 0], bounds[:, 1])
        evaluated_trials = evaluate(with_steps(trials)).reshape(len(_DAMPING), count + 1, -1)
        costs = np.where(np.isfinite(evaluated_trials[:, 0]).all(axis=1),
                         np.sum(evaluated_trials[:, 0] ** 2, axis=1), np.inf)
        best = int(np.argmin(costs))
        if not costs[best] < np.sum(residual ** 2) * (1.0 - 1e-6):
            break
        moved = np.max(np.abs(trials[best] - point[0]))
        point, evaluated = trials[best][None], evaluated_trials[best]
        if moved < 1e-3:
            break
    values = {coordinate.name: float(coordinate.value(point[0, k])) for k, coordinate in enumerate(coordinates)}
    return values, evaluated[0], iterations


def _linearised(rows: np.ndarray, points: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """The residual at the first point and the Jacobian from the forward-difference points after it (a row a
    difference step cannot measure counts as not moving)."""
    residual = rows[0]
    delta = points[1:] - points[0]
    steps = np.where(np.abs(np.diag(delta)) > 0, np.diag(delta), np.inf)
    jacobian = ((rows[1:] - residual) / steps[:, None]).T
    return residual, np.where(np.isfinite(jacobian), jacobian, 0.0)


def _marquardt_steps(residual: np.ndarray, jacobian: np.ndarray) -> np.ndarray:
    """Steps δ = −(JᵀJ + λ·diag(JᵀJ))⁻¹·Jᵀr for each λ of _DAMPING."""
    normal = jacobian.T @ jacobian
    scale = np.diag(normal) + 1e-12
    gradient = jacobian.T @ residual
    return np.array([-np.linalg.solve(normal + damping * np.diag(scale), gradient) for damping in _DAMPING])


_FIELDS = {"loop_inductance": ("commutation_loop.inductance", "inductance"),
           "quality_factor": ("commutation_loop.quality_factor", "dimensionless")}


def _field(name: str, test: _TestCell) -> tuple[str, str, Interval | None]:
    if name in _FIELDS:
        field, kind = _FIELDS[name]
        interval = test.inputs[name].interval if name in test.inputs else None
        if name == "quality_factor" and test.design.loop_quality_factor is not None:
            interval = Interval.exact(float(test.design.loop_quality_factor))
        return field, kind, interval
    item = test.inputs[name]
    return item.field, item.kind, item.interval


def calibrate(design: Design, switch_ref: str, figures: DoublePulseFigures, bus_voltage: float,
              fit_device: bool = False) -> Calibration:
    """Fit the cell of ``switch_ref`` to the figures of its capture taken at ``bus_voltage``.

    Parameters
    ----------
    design : Design
        The design (nominal values of every input that is not fitted).
    switch_ref : str
        The switch under test in the capture.
    figures : DoublePulseFigures
        The capture's measured edges (``measure_double_pulse``).
    bus_voltage : float
        The test's bus voltage [V].
    fit_device : bool
        Also fit g_fs and V_th within their tolerances.

    Raises
    ------
    CalibrationError
        When no target can be measured on the capture or the cell cannot be built from the design.
    """
    switch = next((item for item in design.switches if item.ref == switch_ref), None)
    if switch is None:
        raise CalibrationError(f'no switch with ref "{switch_ref}"')
    measured, missing = measured_targets(figures)
    if not {"ring_frequency", "overshoot", "voltage_dip"} & measured.keys():
        raise CalibrationError("neither the ring, the overshoot nor the turn-on dip could be measured on the "
                               "capture: " + "; ".join(f"{name}: {why}" for name, why in missing.items()))
    currents = (_switched_current(figures, "turn_off"), _switched_current(figures, "turn_on"))
    test = _TestCell(switch, design, bus_voltage, currents)
    coordinates = _coordinates(switch, test, measured, fit_device)
    start_point = {coordinate.name: np.array([coordinate.start]) for coordinate in coordinates}
    at_start = _residuals(test.figures(start_point), measured)[0]
    values, fitted, iterations = _fit(test, coordinates, measured)
    names = [target for target in TARGETS if target.name in measured]
    targets = tuple(TargetFit(target.name, target.description, target.kind, measured[target.name],
                              measured[target.name] * (1.0 + start), measured[target.name] * (1.0 + end))
                    for target, start, end in zip(names, at_start, fitted))
    fitted_values = []
    for coordinate in coordinates:
        field, kind, interval = _field(coordinate.name, test)
        fitted_values.append(FittedValue(coordinate.name, field, kind, coordinate.start, values[coordinate.name],
                                         interval))
    notes = [f"{name} not matched: {why}" for name, why in missing.items()]
    if switch.source_connection != "shared":
        notes.append(f"{format_path(switch.path)}: Kelvin source: the common-source inductance does not slow the "
                     "gate and is not fitted")
    return Calibration(switch.ref, bus_voltage, *currents, tuple(fitted_values), targets, iterations,
                       test.nominal | {"turn_off_current": currents[0]} | values,
                       tuple(dict.fromkeys(test.notes + notes)))
