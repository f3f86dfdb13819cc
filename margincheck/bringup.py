"""A stepped bring-up plan from a low-voltage double-pulse capture: measure it, check it, calibrate the cell
model to it, predict every finding at the design's worst case, and list bus-voltage steps up to the target,
each with its pulse settings, predicted peak, stop condition and stored energy.

Definitions (each step at bus voltage V, target current I, load inductance L_load):

- first pulse t1 = L_load·I/V: the load inductor charges from zero at V/L_load (the on-state drop and the
  inductor's resistance neglected; they lengthen the pulse slightly);
- the second pulse t2 = t1/10 unless given, so that the second turn-off switches I2 = I + V·t2/L_load ≈ 1.1·I (the
  current's fall during the gap, through the freewheeling diode, neglected: it lowers I2);
- predicted peak: the calibrated cell at nominal device values, the larger of the turn-offs at I and I2;
- stop condition: stop if the measured peak exceeds V + (predicted peak − V)·(1 + tolerance), the predicted
  overshoot raised by the stop tolerance (default 20 %); a step is planned only where that threshold stays
  inside the derated limit;
- stored energy E = ½·C·V² of the design's bus capacitors (their largest capacitance); discharge time through a
  bleeder R to 60 V, t = R·C·ln(V/60 V), the residual voltage IEC 60204-1:2016, 6.2.4 allows after 5 s
  (confirmed from a public summary of the clause).

The plan stops at the last step whose predicted peak stays inside the derated limit, or earlier when the
capture itself fails a check or the model cannot be fitted to it.
"""

from __future__ import annotations

import dataclasses
import math
from dataclasses import dataclass

import numpy as np

from margincheck.captures.calibration import Calibration, CalibrationError, calibrate, point_grid
from margincheck.captures.design_section import CaptureSpec
from margincheck.captures.measurements import DoublePulseFigures
from margincheck.cautions import cautions_for
from margincheck.design import Design, Switch
from margincheck.findings import Finding, Status
from margincheck.intervals import Interval
from margincheck.physics.cell_edges import measure_edges
from margincheck.rules import evaluate_design
from margincheck.rules.cell_model import cells_for_grid

__all__ = ["BringUpPlan", "PlanSettings", "PlanStep", "PulseSettings", "SAFE_VOLTAGE", "build_plan",
           "calibrated_design", "discharge_time", "predict_turn_off_peaks", "pulse_settings", "step_voltages"]

SAFE_VOLTAGE = 60.0          # V, IEC 60204-1:2016, 6.2.4: residual voltage after 5 s
#: The fit's relative residual above which the calibrated model is not a basis for the next step (ours).
TRUSTED_RESIDUAL = 0.15
_PEAK_TARGETS = ("ring_frequency", "overshoot")
_LARGEST_SPREAD = 0.5
_BUS_AGREEMENT = 0.10   # the settled v_ds within 10 % of the declared bus (the diode drop and ring are smaller)
_STEPPING = ("Raise the bus one step at a time. After every pulse pair compare the measured peak v_ds with the "
             "step's stop threshold and stop there if it is exceeded; use a v_ds probe rated above the derated "
             "limit, and re-check the plan whenever a gate resistor, the layout or the load inductor changes.")


@dataclass(frozen=True)
class PlanSettings:
    """How the plan is laid out: the number of steps above the capture's voltage (or explicit voltages [V]),
    the stop tolerance (a fraction of the predicted overshoot above the bus), the gap and the second pulse [s]
    (None: a tenth of the first, so that the second turn-off switches about 1.1·I), the bleeder [ohm], the
    calibration tolerance (a fraction, at least the fit's residual) and whether g_fs and V_th are fitted."""

    steps: int = 5
    voltages: tuple[float, ...] = ()
    stop_tolerance: float = 0.20
    gap: float = 5e-6
    second_pulse: float | None = None
    bleeder_resistance: float | None = None
    calibration_tolerance: float = 0.10
    fit_device: bool = False


@dataclass(frozen=True)
class PulseSettings:
    """The double-pulse settings of one step: pulse lengths and gap [s], the currents turned off [A]."""

    first_pulse: float
    gap: float
    second_pulse: float
    first_current: float
    second_current: float


def pulse_settings(bus_voltage: float, current: float, load_inductance: float, gap: float,
                   second_pulse: float | None = None) -> PulseSettings:
    """t1 = L_load·I/V; I2 = I + V·t2/L_load, t2 = t1/10 unless given (module notes)."""
    first = load_inductance * current / bus_voltage
    second = 0.1 * first if second_pulse is None else second_pulse
    return PulseSettings(first, gap, second, current, current + bus_voltage * second / load_inductance)


def discharge_time(capacitance: float, resistance: float, voltage: float, safe: float = SAFE_VOLTAGE) -> float:
    """Time for a capacitor C charged to ``voltage`` to fall to ``safe`` through R: t = R·C·ln(V/V_safe) [s]
    (0 at or below the safe voltage)."""
    return resistance * capacitance * math.log(voltage / safe) if voltage > safe else 0.0


def step_voltages(start: float, target: float, steps: int) -> tuple[float, ...]:
    """``steps`` voltages from above ``start`` up to ``target``, evenly spaced, rounded to 5 V (the target
    exact)."""
    if target <= start:
        return (target,)
    raw = start + (target - start) * np.arange(1, steps + 1) / steps
    rounded = [float(5.0 * round(value / 5.0)) for value in raw[:-1]] + [float(target)]
    return tuple(sorted({value for value in rounded if value > start}))


@dataclass(frozen=True)
class PlanStep:
    """One bus-voltage step: its pulses, the predicted peak [V] and margin to the derated limit [V], the stop
    threshold [V], the stored energy [J] and the bleeder's discharge time to 60 V [s] (None without them)."""

    bus_voltage: float
    pulses: PulseSettings
    predicted_peak: float
    margin: float
    stop_threshold: float
    limit: float
    stored_energy: float | None
    discharge_time: float | None

    @property
    def stop_above(self) -> float:
        """Stop when a measured peak exceeds this [V]: the predicted overshoot above the bus raised by the stop
        tolerance, never above the derated limit."""
        return min(self.stop_threshold, self.limit)

    @property
    def inside(self) -> bool:
        """Whether the predicted peak with its stop tolerance stays inside the derated limit (NaN never does): a
        step is planned only where the stop threshold has room below the limit."""
        return bool(self.stop_threshold <= self.limit)


@dataclass(frozen=True)
class BringUpPlan:
    """Everything the plan's reports show."""

    design: Design
    spec: CaptureSpec
    capture_sha256: str
    figures: DoublePulseFigures
    measured: tuple[Finding, ...]
    calibration: Calibration | None
    calibration_problem: str
    predicted: tuple[Finding, ...]
    limit: Finding | None
    steps: tuple[PlanStep, ...]
    planned: int
    stop_reason: str
    settings: PlanSettings
    target_current: float
    cautions: tuple[str, ...]

    @property
    def predicted_failures(self) -> tuple[Finding, ...]:
        """The findings the calibrated model predicts to fail at the design's worst case (any rule)."""
        return tuple(finding for finding in self.predicted if finding.status is Status.FAIL)

    @property
    def exit_code(self) -> int:
        """0 when the plan reaches the target bus voltage and the calibrated model predicts no fail at the
        design's worst case, else 1 (a review gate stops at a shorter plan or a predicted fail)."""
        reaches = self.planned == len(self.steps) and self.planned > 0
        full = reaches and self.steps[-1].bus_voltage >= self.design.conditions.bus_voltage.high
        return 0 if full and not self.predicted_failures else 1


def calibrated_design(design: Design, calibration: Calibration, tolerance: float) -> Design:
    """The design with the fitted loop inductance and common-source inductance, each ± ``tolerance`` widened to
    the fit's residual on the ring frequency and the overshoot (at most ±50 %), and the fitted Q raised by the
    same spread (less damping, a higher peak). g_fs and V_th describe the sample on the bench and stay the
    design's."""
    misses = [abs(target.residual) for target in calibration.targets if target.name in _PEAK_TARGETS]
    spread = min(max(tolerance, *misses), _LARGEST_SPREAD)
    values = {item.name: item.value for item in calibration.values}
    toleranced = lambda value: Interval(value * (1 - spread), value, value * (1 + spread))  # noqa: E731
    changes = {}
    if "loop_inductance" in values:
        changes["loop_inductance"] = toleranced(values["loop_inductance"])
    if "quality_factor" in values:
        changes["loop_quality_factor"] = values["quality_factor"] * (1 + spread)
    if "common_source_inductance" in values:
        changes["switches"] = tuple(
            dataclasses.replace(switch, common_source_inductance=toleranced(values["common_source_inductance"]))
            if switch.ref == calibration.switch else switch for switch in design.switches)
    return dataclasses.replace(design, **changes)


def predict_turn_off_peaks(design: Design, switch: Switch, calibration: Calibration, bus_voltages,
                           currents) -> np.ndarray:
    """Peak v_ds [V] of the calibrated cell's turn-off at each (bus voltage, current) pair (NaN where the edge
    does not finish)."""
    bus_voltages, currents = np.broadcast_arrays(np.asarray(bus_voltages, float), np.asarray(currents, float))
    grid = point_grid(calibration.point, bus_voltages.size) | {"bus_voltage": bus_voltages.ravel(),
                                                              "turn_off_current": currents.ravel()}
    cells = cells_for_grid(switch, design, grid, [])
    with np.errstate(all="ignore"):
        figures = measure_edges({"turn_off": cells["turn_off"]}, bus_voltages.size)
    return figures["turn_off"]["peak_voltage"].reshape(bus_voltages.shape)


def _bus_capacitance(design: Design) -> float | None:
    """The design's bus capacitance at its largest [F] (None when no capacitor states one)."""
    values = [item.capacitance.high if item.capacitance.has_high else item.capacitance.nominal
              for item in design.capacitors if item.capacitance is not None]
    values = [value for value in values if math.isfinite(value)]
    return sum(values) if values else None


def _step(voltage: float, peaks: np.ndarray, pulses: PulseSettings, limit: float, settings: PlanSettings,
          capacitance: float | None) -> PlanStep:
    peak = float(np.max(peaks)) if np.isfinite(peaks).all() else math.nan
    energy = None if capacitance is None else 0.5 * capacitance * voltage ** 2
    discharge = None if capacitance is None or settings.bleeder_resistance is None else discharge_time(
        capacitance, settings.bleeder_resistance, voltage)
    return PlanStep(voltage, pulses, peak, limit - peak, voltage + (peak - voltage) * (1.0 + settings.stop_tolerance),
                    limit, energy, discharge)


def _steps(design: Design, switch: Switch, calibration: Calibration, spec: CaptureSpec, limit: float,
           current: float, settings: PlanSettings) -> tuple[PlanStep, ...]:
    voltages = settings.voltages or step_voltages(spec.bus_voltage, design.conditions.bus_voltage.high,
                                                  settings.steps)
    pulses = [pulse_settings(voltage, current, spec.load_inductance, settings.gap, settings.second_pulse)
              for voltage in voltages]
    points = np.array([[voltage, voltage] for voltage in voltages])
    currents = np.array([[item.first_current, item.second_current] for item in pulses])
    peaks = predict_turn_off_peaks(design, switch, calibration, points, currents)
    capacitance = _bus_capacitance(design)
    return tuple(_step(voltage, row, item, limit, settings, capacitance)
                 for voltage, row, item in zip(voltages, peaks, pulses))


def _settled_level(figures: DoublePulseFigures) -> float | None:
    """The level v_ds settles at after the first turn-off's ring [V] (None when the ring was not measured)."""
    edge = figures.first_turn_off
    ring = getattr(edge, "ring", None)
    return getattr(ring, "settled_level", None)


def _untrusted(calibration: Calibration, figures: DoublePulseFigures, bus_voltage: float) -> str:
    """Why the fitted model is not a basis for raising the voltage ('' when it is): the capture's settled v_ds
    after the turn-off disagrees with the declared bus voltage (a wrong bus_voltage, unit or attenuation), a
    figure the peak rests on could not be measured, or the fit misses it."""
    settled = _settled_level(figures)
    if settled is not None and abs(settled - bus_voltage) > _BUS_AGREEMENT * bus_voltage:
        return (f"the capture's v_ds settles at {settled:.4g} V after the turn-off, but the test's bus_voltage is "
                f"{bus_voltage:.4g} V: check bus_voltage, the v_ds unit and the probe attenuation")
    fitted = {target.name for target in calibration.targets}
    missing = [name for name in _PEAK_TARGETS if name not in fitted]
    if missing:
        return (f"the capture gives no usable {missing[0].replace('_', ' ')} to check the model against: its "
                "prediction is not a basis for a higher voltage")
    for target in calibration.targets:
        if target.name in _PEAK_TARGETS and abs(target.residual) > TRUSTED_RESIDUAL:
            return (f"the fitted model misses the measured {target.description} by {target.residual:+.0%} "
                    f"(more than {TRUSTED_RESIDUAL:.0%}): its prediction is not a basis for a higher voltage")
    return ""


def _planned(steps: tuple[PlanStep, ...], limit: Finding, target: float) -> tuple[int, str]:
    """How many steps the plan keeps, and why it ends where it does."""
    for index, step in enumerate(steps):
        if not step.inside:
            peak = "could not be predicted" if math.isnan(step.predicted_peak) else (
                f"is predicted at {step.predicted_peak:.4g} V (stop threshold {step.stop_threshold:.4g} V)")
            return index, (f"at {step.bus_voltage:.4g} V the peak v_ds {peak}, which leaves no room below the "
                           f"derated limit {limit.limit:.4g} V ({limit.basis})")
    if not steps:
        return 0, "no step above the capture's bus voltage"
    if steps[-1].bus_voltage < target:
        return len(steps), (f"the last step given, {steps[-1].bus_voltage:.4g} V, stays inside the limit; the "
                            f"design's highest bus voltage is {target:.4g} V")
    return len(steps), f"the last step reaches the design's highest bus voltage, {target:.4g} V"


def build_plan(design: Design, spec: CaptureSpec, figures: DoublePulseFigures, measured: tuple[Finding, ...],
               capture_sha256: str, settings: PlanSettings = PlanSettings()) -> BringUpPlan:
    """The bring-up plan of ``spec.switch`` from the figures of its capture and their checks (``measured``)."""
    switch = next(item for item in design.switches if item.ref == spec.switch)
    current = design.conditions.turn_off_current.high if design.conditions.turn_off_current is not None \
        else math.nan
    plan = dict(design=design, spec=spec, capture_sha256=capture_sha256, figures=figures, measured=measured,
                settings=settings, target_current=current, cautions=(_STEPPING, *cautions_for(design, list(measured))))
    failing = [finding for finding in measured if finding.status is Status.FAIL]
    try:
        calibration = calibrate(design, spec.switch, figures, spec.bus_voltage, settings.fit_device)
    except CalibrationError as error:
        return BringUpPlan(calibration=None, calibration_problem=str(error), predicted=(), limit=None, steps=(),
                           planned=0, stop_reason=f"the model could not be fitted to the capture: {error}", **plan)
    predicted = tuple(evaluate_design(calibrated_design(design, calibration, settings.calibration_tolerance)))
    limit = next((finding for finding in predicted
                  if finding.rule == "turn-off-overshoot" and finding.subject == switch.ref), None)
    problem = _untrusted(calibration, figures, spec.bus_voltage)
    plan["cautions"] = (_STEPPING, *cautions_for(design, list(predicted)))
    common = dict(calibration=calibration, calibration_problem=problem, predicted=predicted, limit=limit, **plan)
    if limit is None or limit.limit is None or not math.isfinite(current):
        return BringUpPlan(steps=(), planned=0, stop_reason="the derated peak-voltage limit or the design's "
                           "turn-off current is not known: no step can be judged", **common)
    above = [voltage for voltage in settings.voltages if voltage > design.conditions.bus_voltage.high]
    if above:
        return BringUpPlan(steps=(), planned=0, stop_reason=(
            f"a step voltage given, {above[0]:.4g} V, is above the design's highest bus voltage "
            f"{design.conditions.bus_voltage.high:.4g} V: the plan does not go beyond the design"), **common)
    steps = _steps(design, switch, calibration, spec, limit.limit, current, settings)
    if failing:
        reason = (f"the capture at {spec.bus_voltage:.4g} V already fails {failing[0].rule}: resolve it before "
                  "raising the voltage")
        return BringUpPlan(steps=steps, planned=0, stop_reason=reason, **common)
    if problem:
        return BringUpPlan(steps=steps, planned=0, stop_reason=problem, **common)
    planned, reason = _planned(steps, limit, design.conditions.bus_voltage.high)
    return BringUpPlan(steps=steps, planned=planned, stop_reason=reason, **common)
