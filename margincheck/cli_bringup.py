"""``margincheck bring-up FILE``: from the design's double-pulse capture, a stepped plan up to the target bus
voltage (margincheck.bringup), as text, Markdown or JSON, with an optional picture of the capture."""

from __future__ import annotations

import argparse
import sys
from pathlib import Path
from typing import Callable

from margincheck.errors import InputError, Problem

__all__ = ["add_bring_up_command", "positive_quantity", "run_bring_up"]


def positive_quantity(kind: str) -> Callable[[str], float]:
    """An argparse type: a quantity of ``kind`` (``"47 kohm"``) above zero, as an SI float."""
    def parse(text: str) -> float:
        from margincheck.units import KINDS, QuantityError, parse_quantity

        try:
            value = parse_quantity(text, kind)
        except QuantityError as error:
            raise argparse.ArgumentTypeError(str(error)) from None
        if not value > 0:
            raise argparse.ArgumentTypeError(f'expected {KINDS[kind].noun} above zero, got "{text}"')
        return value
    return parse


def _fraction(text: str) -> float:
    from margincheck.units import QuantityError, parse_tolerance

    try:
        tolerance = parse_tolerance(text, "voltage")
    except QuantityError as error:
        raise argparse.ArgumentTypeError(str(error)) from None
    if not tolerance.relative or not 0 <= tolerance.value < 1:
        raise argparse.ArgumentTypeError(f'expected a percentage from 0 % to below 100 %, e.g. "5 %", got "{text}"')
    return tolerance.value


def _voltages(text: str) -> tuple[float, ...]:
    parse = positive_quantity("voltage")
    return tuple(sorted({parse(item if any(c.isalpha() for c in item) else f"{item} V")
                         for item in text.split(",") if item.strip()}))


def add_bring_up_command(commands: argparse._SubParsersAction, add_input_arguments: Callable) -> None:
    """Register ``bring-up`` on the main parser's subcommands."""
    command = commands.add_parser(
        "bring-up", help="a stepped bus-voltage plan from a low-voltage double-pulse capture",
        description="Read the design's double-pulse capture (captures: section), measure its edges, check the "
                    "measured values against the derated limits, fit the switching-cell model to them, predict "
                    "every finding at the design's worst case, and list bus-voltage steps up to the highest bus "
                    "voltage, each with its pulse settings, predicted peak and stop condition. Exit code 0 when "
                    "the plan reaches the design's highest bus voltage and the fitted model predicts no fail at the "
                    "worst case, 1 otherwise, 2 on bad input.")
    command.add_argument("file", type=Path, metavar="FILE", help="design file with a captures: section")
    add_input_arguments(command)
    command.add_argument("--capture", metavar="N|FILE", default="1",
                         help="which captures: entry, by number from 1 or by its file as written (default 1)")
    command.add_argument("--steps", type=int, default=5, metavar="N",
                         help="number of voltage steps above the capture's voltage (default 5)")
    command.add_argument("--voltages", type=_voltages, default=(), metavar="V1,V2,...",
                         help='explicit step voltages instead of --steps, e.g. "150,250,350,400"')
    command.add_argument("--stop-tolerance", type=_fraction, default=0.20, metavar="PERCENT",
                         help='stop when a measured overshoot above the bus exceeds the predicted one by more than '
                              'this (default "20 %%"); a step is planned only where that threshold stays inside '
                              "the derated limit")
    command.add_argument("--gap", type=positive_quantity("time"), default=5e-6, metavar="TIME",
                         help='off time between the pulses (default "5 us")')
    command.add_argument("--second-pulse", type=positive_quantity("time"), metavar="TIME",
                         help="length of the second pulse (default: a tenth of the first, so that the second "
                              "turn-off switches about 1.1 times the target current)")
    command.add_argument("--bleeder", type=positive_quantity("resistance"), metavar="RESISTANCE",
                         help='the DC link\'s bleeder resistor, e.g. "47 kohm", for the discharge time of each step')
    command.add_argument("--fit-device", action="store_true",
                         help="also fit g_fs and V_th of the device on the bench, within their tolerances")
    command.add_argument("--format", choices=("text", "markdown", "json"), default="text",
                         help="text for a terminal (default), markdown for a bench checklist, json for tools")
    command.add_argument("--output", "-o", type=Path, metavar="PATH",
                         help="write the plan to PATH (atomically; never over an input file) instead of stdout")
    command.add_argument("--plot", type=Path, metavar="PATH.svg|PATH.png",
                         help="also draw the capture with its edges, windows, peaks and the fitted model "
                              '(needs the plot extra: pip install "margincheck[plot]")')


def _spec(design, choice: str):
    """The captures: entry chosen by number (from 1) or by its file as written."""
    specs = design.captures
    if not specs:
        raise InputError([Problem(str(design.file), None, "captures",
                                  "the design has no captures: section; add one with file, switch, bus_voltage and "
                                  "load_inductance")])
    if choice.isdigit() and 1 <= int(choice) <= len(specs):
        return specs[int(choice) - 1]
    named = [spec for spec in specs if spec.name.endswith(choice)]
    if len(named) == 1:
        return named[0]
    raise InputError([Problem(str(design.file), None, "--capture",
                              f'no single captures: entry "{choice}"; give a number from 1 to {len(specs)} or a '
                              "file as written in the design")])


def _measure(spec):
    """Read the capture of ``spec`` and measure its edges (maxima on the upper envelope of a peak-detect file)."""
    from margincheck.captures.measurements import measure_double_pulse
    from margincheck.captures.reading import read_capture

    capture = read_capture(spec.file, spec.mapping, spec.name)
    missing = [signal for signal in ("v_ds", "i_d", "v_gs") if signal not in capture.channels]
    if missing:
        raise InputError([Problem(spec.name, None, "", f"the capture has no {missing[0]} channel; map it in the "
                                  "design's captures: entry (columns)")])
    channels = capture.channels
    figures = measure_double_pulse(capture.time, channels["v_ds"], channels["i_d"], channels["v_gs"],
                                   spec.bus_voltage, spec.load_inductance, channels.get("v_gs_idle"))
    return capture, figures


def run_bring_up(arguments: argparse.Namespace, options: dict) -> int:
    """Build and write the plan; exit 0 when it reaches the design's highest bus voltage, else 1."""
    from margincheck.bringup import PlanSettings, build_plan
    from margincheck.captures.measured_check import measured_findings
    from margincheck.design import load_design
    from margincheck.output import write_atomically
    from margincheck.report.bringup_report import RENDERERS
    from margincheck.rules import RULES

    design = load_design(arguments.file, **options, rule_ids=RULES)
    spec = _spec(design, arguments.capture)
    capture, figures = _measure(spec)
    measured = tuple(measured_findings(design, spec, figures, capture.sha256))
    settings = PlanSettings(steps=arguments.steps, voltages=arguments.voltages,
                            stop_tolerance=arguments.stop_tolerance, gap=arguments.gap,
                            second_pulse=arguments.second_pulse, bleeder_resistance=arguments.bleeder,
                            fit_device=arguments.fit_device)
    plan = build_plan(design, spec, figures, measured, capture.sha256, settings)
    render = RENDERERS[arguments.format]
    read = [Path(item.name) for item in design.inputs] + [spec.file]
    if arguments.output is None:
        render(plan, sys.stdout)
    else:
        write_atomically(arguments.output, lambda stream: render(plan, stream), read)
    if arguments.plot is not None:
        _picture(arguments.plot, plan, capture, read)
    return plan.exit_code


def _picture(path: Path, plan, capture, read: list[Path]) -> None:
    """The capture with its edges, windows and peaks, and the fitted model's edges overlaid (aligned on the
    capture's edges at 50 % of the bus voltage)."""
    from margincheck.captures.calibration import fitted_waveforms
    from margincheck.captures.picture import ModelTrace, render_capture_picture
    from margincheck.output import write_atomically
    from margincheck.plot import chart_format

    overlay = []
    if plan.calibration is not None:
        waves = fitted_waveforms(plan.design, plan.calibration)
        for edge, figure in (("turn_off", plan.figures.first_turn_off), ("turn_on", plan.figures.turn_on)):
            shift = _alignment(capture, waves[edge], figure, plan.spec.bus_voltage, edge == "turn_on")
            if shift is not None:
                time, signals = waves[edge]
                overlay.append(ModelTrace(f"fitted model, {edge.replace('_', '-')}", time + shift,
                                          signals["v_ds"], signals["i_d"]))
    write_atomically(path, lambda stream: render_capture_picture(
        capture, plan.figures, stream, chart_format(path), plan.spec.bus_voltage, overlay=overlay,
        title=f"{plan.spec.switch}: {plan.spec.name}"), read, binary=True)


def _alignment(capture, waves, figure, bus_voltage: float, falling: bool) -> float | None:
    """The time shift that puts the model's 50 % v_ds crossing on the capture's (None when either is missing)."""
    from margincheck.captures.edges import NotMeasurable

    if waves is None or isinstance(figure, NotMeasurable):
        return None
    model_time, signals = waves
    half = 0.5 * bus_voltage
    model = _first_crossing(model_time, signals["v_ds"], half, falling)
    near = capture.time >= figure.instant - 50e-9
    measured = _first_crossing(capture.time[near], capture.channels["v_ds"][near], half, falling)
    return None if model is None or measured is None else measured - model


def _first_crossing(time, signal, level: float, falling: bool) -> float | None:
    """The first instant [s] ``signal`` crosses ``level`` (edge_figures.crossing, interpolated), or None."""
    import math

    from margincheck.physics import edge_figures as ef

    waves = ef.Waveforms(time[:, None], {})
    instant = float(ef.crossing(waves, signal[:, None], level, rising=not falling).at(waves.time)[0])
    return None if math.isnan(instant) else instant
