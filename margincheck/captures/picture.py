"""The picture of a measured double-pulse capture (optional plot extra, matplotlib).

Layout: one row per quantity (v_ds with the bus level, i_d, and the gate voltages when the capture has them),
one column for the whole capture and one column per edge found, zoomed on that edge: the edges last ns, the
capture µs, so a single time axis would show each edge as a vertical stroke. Rows share their value axis, so
the edges compare at a glance. Every column shows the edge instants (the gate's); an edge's column shades its
energy window (the same crossings E_on/E_off are integrated between, ``measurements.edge_instants``) and marks
its peak with the value (v_ds at turn-off, i_d at turn-on). Model traces are drawn dashed over v_ds and i_d.

A peak-detect capture is drawn as its envelope (the band between the lower and upper values). Long captures
are decimated for drawing: each run of samples keeps its lowest and highest value (``decimate``), so a spike
one sample wide is still drawn at its true height, and no line holds more than ``MAX_LINE_POINTS`` points.
Text from files (labels, title) is drawn as written, never read as mathtext. Nothing else imports this module,
so reading and measuring a capture never load matplotlib.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Sequence

import numpy as np

from margincheck.captures.edges import NotMeasurable, check_waveforms, segment
from margincheck.captures.measurements import (
    DoublePulseFigures,
    EdgeInstants,
    TurnOffFigures,
    TurnOnFigures,
    edge_instants,
)
from margincheck.captures.reading import Capture
from margincheck.captures.ringing import RingFigures
from margincheck.plot import CHART_SUFFIXES, PlotUnavailable, pyplot_module
from margincheck.safe_text import printable
from margincheck.units import format_value, with_prefix

__all__ = ["COLUMNS", "MAX_LINE_POINTS", "ModelTrace", "decimate", "decimate_envelope", "render_capture_picture"]

#: Runs of samples a drawn line is reduced to (about four times the pixel columns of a panel at 150 dpi).
COLUMNS = 4000
#: The most points a drawn line holds: the lowest and highest sample of each run.
MAX_LINE_POINTS = 2 * COLUMNS + 2

_EDGE_NAMES = ("first turn-off", "second turn-on", "second turn-off")
_ROWS = (("v_ds", "v_ds [V]"), ("i_d", "i_d [A]"), ("gate", "v_gs [V]"))
_GATES = (("v_gs", "v_gs", "-", "#6c3483"), ("v_gs_idle", "v_gs, idle device", (0, (4, 2, 1, 2)), "#b9770e"))
_MEASURED_COLOUR = {"v_ds": "#1f4e79", "i_d": "#a3262a"}
_OVERLAY_STYLES = ("--", (0, (6, 2, 1, 2)), ":", (0, (2, 2)))
_OVERLAY_COLOURS = ("#111111", "#2f6f4f", "#7d3c98", "#9a6a00")
_BUS_COLOUR = "#7f8c8d"
_EDGE_COLOUR = "#34495e"
_WINDOW_COLOUR = "#f0b27a"
_RING_PERIODS = 5         # a zoomed edge shows this many periods of a measured ring after the peak
_LEAST_ZOOM = 0.05        # ... and spans at least this fraction of the edge's segment
_ZOOM_MARGIN = 0.5        # ... with this fraction of the edge's length on either side


@dataclass(frozen=True, eq=False)
class ModelTrace:
    """A model's waveforms to draw over the capture: ``time`` [s] on the capture's time base, ``v_ds`` [V]
    and ``i_d`` [A] on ``time`` (either may be None)."""

    label: str
    time: np.ndarray
    v_ds: np.ndarray | None = None
    i_d: np.ndarray | None = None

    def __post_init__(self) -> None:
        check_waveforms(self.time, v_ds=self.v_ds, i_d=self.i_d)


@dataclass(frozen=True)
class _Edge:
    """One edge found in the capture: its name, gate instant [s], figures and where they were taken (None when
    the edge could not be measured, with ``why``) and the span its zoomed column shows [s]."""

    name: str
    instant: float
    figures: TurnOffFigures | TurnOnFigures | None
    marks: EdgeInstants | None
    why: str
    span: tuple[float, float]


def decimate(time: np.ndarray, values: np.ndarray, columns: int = COLUMNS) -> tuple[np.ndarray, np.ndarray]:
    """The samples of a line that draw the same at ``columns`` pixel columns: the lowest and the highest
    sample of each run of ``ceil(n / columns)`` samples, in time order (at most ``2·columns + 2`` points).
    Traces of ``2·columns`` samples or fewer are returned as they are."""
    count = len(values)
    if count <= 2 * columns:
        return time, values
    per = -(-count // columns)
    full = count // per
    body = values[:full * per].reshape(full, per)
    picks = np.sort(np.stack([body.argmin(axis=1), body.argmax(axis=1)], axis=1), axis=1)
    picks = (picks + per * np.arange(full)[:, None]).ravel()
    tail = values[full * per:]
    if tail.size:
        picks = np.concatenate([picks, full * per + np.sort([tail.argmin(), tail.argmax()])])
    return time[picks], values[picks]


def decimate_envelope(time: np.ndarray, upper: np.ndarray, lower: np.ndarray, columns: int = COLUMNS
                      ) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """An envelope reduced to ``columns`` runs of samples: each run's first time, the highest of its upper
    values and the lowest of its lower values (a band drawn stepwise from each time to the next)."""
    if len(upper) <= 2 * columns:
        return time, upper, lower
    starts = np.arange(0, len(upper), -(-len(upper) // columns))
    return time[starts], np.maximum.reduceat(upper, starts), np.minimum.reduceat(lower, starts)


def _inside(time: np.ndarray, span: tuple[float, float]) -> slice:
    """The samples of ``span``, with one more on either side so that lines reach the panel's edges."""
    first = max(int(np.searchsorted(time, span[0])) - 1, 0)
    return slice(first, int(np.searchsorted(time, span[1], side="right")) + 1)


def _zoom_span(time: np.ndarray, figures: DoublePulseFigures, instant: float, measured, marks) -> tuple[float, float]:
    """The time a zoomed column shows [s]: the gate instant, the energy window, the peak and a few periods of
    the ring after it, with a margin; at least ``_LEAST_ZOOM`` of the edge's segment and never beyond it."""
    part = segment(time, figures.edges, instant)
    start, end = float(time[part.start]), float(time[part.stop - 1])
    points = [instant]
    if marks is not None:
        points += [value for value in (marks.window_start, marks.window_end, marks.peak) if np.isfinite(value)]
        ring = getattr(measured, "ring", None)
        if isinstance(ring, RingFigures):
            points.append(marks.peak + _RING_PERIODS / ring.frequency)
    first, last = min(points), max(points)
    margin = max(_ZOOM_MARGIN * (last - first), 0.5 * _LEAST_ZOOM * (end - start))
    return max(start, first - margin), min(end, last + margin)


def _edges(capture: Capture, figures: DoublePulseFigures, bus_voltage: float) -> tuple[list[_Edge], list[str]]:
    """The edges found (in time order), and a line for each edge not found."""
    edges = figures.edges
    found, missing = [], []
    instants = (edges.first_turn_off, edges.second_turn_on, edges.second_turn_off)
    measured_edges = (figures.first_turn_off, figures.turn_on, figures.turn_off)
    for name, instant, measured in zip(_EDGE_NAMES, instants, measured_edges):
        if isinstance(instant, NotMeasurable):
            missing.append(f"{name}: not found ({instant.reason})")
            continue
        why, marks = "", None
        if isinstance(measured, NotMeasurable):
            measured, why = None, measured.reason
        else:
            marks = edge_instants(capture.time, capture.channels["v_ds"], capture.channels["i_d"], edges, measured,
                                  bus_voltage)
        span = _zoom_span(capture.time, figures, instant, measured, marks)
        found.append(_Edge(name, instant, measured, marks, why, span))
    return found, missing


def _draw_channel(axes, capture: Capture, signal: str, part: slice, colour: str, style, label: str) -> None:
    time = capture.time[part]
    upper = capture.channels[signal][part]
    if capture.peak_detect:
        time, upper, lower = decimate_envelope(time, upper, capture.lower[signal][part])
        axes.fill_between(time, lower, upper, step="post", color=colour, alpha=0.45, linewidth=0.6,
                          label=f"{label} (peak-detect envelope)")
    else:
        axes.plot(*decimate(time, upper), linestyle=style, color=colour, linewidth=0.8, label=label)


def _draw_overlays(axes, overlay: Sequence[ModelTrace], signal: str, span: tuple[float, float]) -> None:
    for number, trace in enumerate(overlay):
        values = getattr(trace, signal)
        if values is None:
            continue
        part = _inside(trace.time, span)
        axes.plot(*decimate(trace.time[part], values[part]), linestyle=_OVERLAY_STYLES[number % len(_OVERLAY_STYLES)],
                  color=_OVERLAY_COLOURS[number % len(_OVERLAY_COLOURS)], linewidth=1.0,
                  label=f"model: {printable(trace.label)}")


def _time_axis(axes_column, span: tuple[float, float]) -> None:
    """Time ticks in the prefix that suits the column's span (ns for an edge, us for the capture)."""
    from matplotlib.ticker import FuncFormatter

    length = span[1] - span[0]
    shown, unit = with_prefix(length, "time")
    scale = length / shown
    axes_column[-1].xaxis.set_major_formatter(FuncFormatter(lambda t, _: f"{t / scale:.6g}"))
    axes_column[-1].set_xlabel(f"t [{unit}]", fontsize=8)
    axes_column[0].set_xlim(*span)


def _draw_column(axes_column, rows: Sequence[str], capture: Capture, span: tuple[float, float], edges: list[_Edge],
                 overlay: Sequence[ModelTrace], bus_voltage: float) -> None:
    """The traces of ``span`` in each row, the bus level and the edge instants."""
    part = _inside(capture.time, span)
    for axes, row in zip(axes_column, rows):
        if row == "gate":
            for signal, label, style, colour in _GATES:
                if signal in capture.channels:
                    _draw_channel(axes, capture, signal, part, colour, style, label)
        else:
            _draw_channel(axes, capture, row, part, _MEASURED_COLOUR[row], "-", f"{row}, measured")
            _draw_overlays(axes, overlay, row, span)
        if row == "v_ds":
            axes.axhline(bus_voltage, linestyle="--", linewidth=0.8, color=_BUS_COLOUR,
                         label=f"bus {format_value(bus_voltage, 'voltage')}")
        for edge in edges:
            if span[0] <= edge.instant <= span[1]:
                axes.axvline(edge.instant, linestyle=(0, (1, 2)), linewidth=0.8, color=_EDGE_COLOUR,
                             label="edge instant (gate)")
        axes.margins(y=0.1)      # room above the peaks for their labels
        axes.grid(True, linewidth=0.3, color="#d5d8dc")
        axes.tick_params(labelsize=7)
    _time_axis(axes_column, span)


def _label_edges(axes, edges: list[_Edge]) -> None:
    """The name of each edge above its line, on the top axis of the whole-capture column."""
    top = axes.secondary_xaxis("top")
    top.set_xticks([edge.instant for edge in edges], [edge.name for edge in edges], fontsize=7, color=_EDGE_COLOUR)
    top.tick_params(length=3, color=_EDGE_COLOUR)


def _mark_peak(axes, edge: _Edge, labelled: bool) -> None:
    """The peak of the edge (v_ds at turn-off, ▼; i_d at turn-on, ▲), with its value when ``labelled``."""
    turning_on = isinstance(edge.figures, TurnOnFigures)
    value = edge.figures.peak_current if turning_on else edge.figures.peak_v_ds
    if isinstance(value, NotMeasurable):
        return
    marker, kind, words = ("^", "current", "peak i_d") if turning_on else ("v", "voltage", "peak v_ds")
    axes.plot([edge.marks.peak], [value], linestyle="none", marker=marker, markersize=6, color="black",
              label=f"{words} (turn-{'on' if turning_on else 'off'})")
    if labelled:
        leftward = edge.marks.peak > 0.5 * sum(edge.span)   # the label stays inside the panel
        axes.annotate(f"{words} {format_value(value, kind)}", (edge.marks.peak, value),
                      xytext=(-5 if leftward else 5, 3), textcoords="offset points",
                      ha="right" if leftward else "left", fontsize=7)


def _shown(value, kind: str) -> str:
    """A figure in engineering units, or "not measured"."""
    return "not measured" if isinstance(value, NotMeasurable) else format_value(value, kind)


def _edge_title(edge: _Edge) -> str:
    heading = f"{edge.name} at {format_value(edge.instant, 'time')}"
    if edge.figures is None:
        return f"{heading}\nnot measured: {printable(edge.why)}"
    if isinstance(edge.figures, TurnOnFigures):
        energy = f"E_on {_shown(edge.figures.turn_on_energy, 'energy')}"
    else:
        energy = f"E_off {_shown(edge.figures.turn_off_energy, 'energy')}"
    return f"{heading}\n{energy} ({edge.figures.window.start:.0%}/{edge.figures.window.end:.0%} window)"


def _mark_edge(axes_column, rows: Sequence[str], edge: _Edge) -> None:
    """In the edge's column: its title, the energy window shaded, the peak marked and labelled."""
    axes_column[0].set_title(_edge_title(edge), fontsize=8, loc="left", parse_math=False)
    if edge.figures is None:
        return
    start, end = edge.marks.window_start, edge.marks.window_end
    if np.isfinite(start) and np.isfinite(end):
        for axes in axes_column:
            axes.axvspan(start, end, color=_WINDOW_COLOUR, alpha=0.35, linewidth=0, label="energy window")
    _mark_peak(axes_column[rows.index(_peak_row(edge))], edge, labelled=True)


def _legend(figure, axes_grid) -> None:
    """One legend below the panels, each label once; its text is never read as mathtext."""
    handles, labels = [], []
    for axes in axes_grid.flat:
        for handle, label in zip(*axes.get_legend_handles_labels()):
            if label not in labels:
                handles.append(handle)
                labels.append(label)
    legend = figure.legend(handles, labels, loc="outside lower center", ncol=min(len(labels), 4), fontsize=7,
                           frameon=False)
    for text in legend.get_texts():
        text.set_parse_math(False)


def _peak_row(edge: _Edge) -> str:
    """The row whose peak an edge marks: i_d at turn-on, v_ds at turn-off."""
    return "i_d" if isinstance(edge.figures, TurnOnFigures) else "v_ds"


def _draw_picture(figure, axes_grid, rows: Sequence[tuple[str, str]], capture: Capture, edges: list[_Edge],
                  missing: list[str], bus_voltage: float, overlay: Sequence[ModelTrace], title: str) -> None:
    names = [name for name, _ in rows]
    whole = (float(capture.time[0]), float(capture.time[-1]))
    _draw_column(axes_grid[:, 0], names, capture, whole, edges, overlay, bus_voltage)
    axes_grid[0, 0].set_title("whole capture", fontsize=8, loc="left")
    _label_edges(axes_grid[0, 0], edges)
    for column, edge in enumerate(edges, start=1):
        _draw_column(axes_grid[:, column], names, capture, edge.span, edges, overlay, bus_voltage)
        _mark_edge(axes_grid[:, column], names, edge)
        if edge.figures is not None:
            _mark_peak(axes_grid[names.index(_peak_row(edge)), 0], edge, labelled=False)
    columns = ["capture", *(edge.name.replace(" ", "-") for edge in edges)]
    for row, (name, label) in enumerate(rows):
        axes_grid[row, 0].set_ylabel(label, fontsize=8)
        for axes, column in zip(axes_grid[row], columns):
            axes.set_gid(f"panel-{name}-{column}")
    _legend(figure, axes_grid)
    heading = printable(title or f"{capture.file}: double-pulse capture")
    figure.suptitle("\n".join([f"{heading} (margincheck)", *map(printable, missing)]), fontsize=9, parse_math=False)


def render_capture_picture(capture: Capture, figures: DoublePulseFigures, stream, image_format: str,
                           bus_voltage: float, overlay: Sequence[ModelTrace] = (), title: str = "") -> None:
    """Draw the picture of a measured double-pulse capture into a binary ``stream``.

    Parameters
    ----------
    capture : Capture
        The capture (``read_capture``).
    figures : DoublePulseFigures
        Its figures, from ``measure_double_pulse`` on ``capture.time`` and ``capture.channels``.
    stream : binary file
        Where the image is written.
    image_format : {"svg", "png"}
        The image's format (``margincheck.plot.chart_format`` of a file name gives it).
    bus_voltage : float
        The test's bus voltage [V], as given to ``measure_double_pulse``.
    overlay : sequence of ModelTrace
        Model waveforms drawn dashed over v_ds and i_d, named in the legend.
    title : str
        The picture's title (default: the capture's file name); drawn as written.

    Raises
    ------
    PlotUnavailable
        The plot extra (matplotlib) is not installed, or ``image_format`` is neither svg nor png.
    """
    if image_format not in CHART_SUFFIXES.values():
        raise PlotUnavailable(f"the picture is written as svg or png, not {image_format!r}")
    pyplot = pyplot_module()
    edges, missing = _edges(capture, figures, bus_voltage)
    has_gate = any(signal in capture.channels for signal, *_ in _GATES)
    rows = [row for row in _ROWS if row[0] != "gate" or has_gate]
    figure, axes_grid = pyplot.subplots(len(rows), 1 + len(edges), sharex="col", sharey="row", squeeze=False,
                                        figsize=(4.8 + 3.4 * len(edges), 2.2 * len(rows) + 1.4),
                                        width_ratios=[1.5] + [1.0] * len(edges), layout="constrained")
    try:
        _draw_picture(figure, axes_grid, rows, capture, edges, missing, bus_voltage, overlay, title)
        with pyplot.rc_context({"svg.fonttype": "none"}):   # text stays text: searchable, and smaller
            figure.savefig(stream, format=image_format, dpi=150,
                           metadata={"Date": None} if image_format == "svg" else {})
    finally:
        pyplot.close(figure)
