"""The SOA chart: per switch, its boundaries at the hottest case (log-log, one per pulse of the checked points)
and every checked point, labelled, with the status shown by marker shape as well as colour. Switches whose
charts would be identical share one chart, and a figure holds at most ``MAX_CHARTS`` charts (the others are
named in a note). Text from the design file is drawn as written, never read as mathtext.

Plotting is an optional extra (``pip install "margincheck[plot]"``, matplotlib); nothing else imports this
module, so a check without ``--plot`` never loads matplotlib.
"""

from __future__ import annotations

import io
import math
from dataclasses import dataclass
from pathlib import Path
from typing import Sequence

from margincheck.findings import Status
from margincheck.rules.soa import SoaView
from margincheck.safe_text import printable
from margincheck.units import format_value

__all__ = ["CHART_SUFFIXES", "MAX_CHARTS", "ChartPlan", "PlotUnavailable", "chart_format", "chart_plan",
           "pyplot_module", "render_soa_chart", "soa_chart_svg"]

CHART_SUFFIXES = {".svg": "svg", ".png": "png"}

#: The most charts one figure holds: the cost of a figure grows with its charts (a 400-switch design drew for
#: minutes), so switches with identical charts share one and the rest beyond the cap are named, not drawn.
MAX_CHARTS = 12
_NAMED_SUBJECTS = 6  # refs named in a chart title or note before "and N more"

#: Status -> (marker, colour, words in the legend). Shapes differ, so the chart reads in grey print too.
_MARKERS = {
    Status.PASS: ("o", "#2f6f4f", "pass"),
    Status.MARGINAL: ("D", "#9a6a00", "marginal"),
    Status.FAIL: ("X", "#a3262a", "fail"),
}
_LINE_STYLES = ("-", "--", "-.", ":")
_BOUNDARY_COLOUR = "#34495e"
_DERATED_COLOUR = "#9aa7b4"


class PlotUnavailable(RuntimeError):
    """The plot extra is not installed, or the chart's file type is not one it can write."""


def pyplot_module():
    try:
        import matplotlib

        matplotlib.use("Agg")  # files only, never a window
        from matplotlib import pyplot
    except ImportError:
        raise PlotUnavailable('the SOA chart needs the plot extra: pip install "margincheck[plot]"') from None
    return pyplot


def _drawable(value: float | None) -> bool:
    """Whether a coordinate can be drawn on a log axis."""
    return value is not None and math.isfinite(value) and value > 0


def _draw_switch(axes, view: SoaView, subjects: str) -> None:
    for index, (label, voltages, currents) in enumerate(view.boundaries):
        style = _LINE_STYLES[index % len(_LINE_STYLES)]
        axes.loglog(voltages, currents, style, color=_BOUNDARY_COLOUR, linewidth=1.3, label=f"boundary, {label}")
        axes.loglog(voltages, view.factor * currents, style, color=_DERATED_COLOUR, linewidth=0.9,
                    label=f"derated x {view.factor:g}" if index == 0 else None)
    axes.axvline(view.v_ds_max, color=_BOUNDARY_COLOUR, linewidth=0.8, linestyle=(0, (1, 3)))
    axes.annotate("V(BR)DSS", (view.v_ds_max, 1.0), xycoords=("data", "axes fraction"), xytext=(-4, -12),
                  textcoords="offset points", ha="right", fontsize=7, color=_BOUNDARY_COLOUR)
    shown = set()
    for number, point in enumerate(view.points):
        if not (_drawable(point.voltage) and _drawable(point.current)) or point.status not in _MARKERS:
            continue
        marker, colour, words = _MARKERS[point.status]
        artist, = axes.plot([point.voltage], [point.current], linestyle="none", marker=marker, markersize=7,
                            color=colour, markeredgecolor="black", markeredgewidth=0.5,
                            label=None if words in shown else f"point: {words}")
        artist.set_gid(f"soa-point-{view.subject}-{number}")
        shown.add(words)
        near_the_edge = point.voltage > view.v_ds_max / 4  # label to the left, clear of the V(BR)DSS line
        axes.annotate(printable(point.name), (point.voltage, point.current), xytext=(-6 if near_the_edge else 6, 4),
                      textcoords="offset points", ha="right" if near_the_edge else "left", fontsize=7,
                      parse_math=False)  # text from the file is shown as written, never read as mathtext
    axes.set_title(f"{printable(subjects)}: SOA at T_c = {format_value(view.case_temperature, 'temperature')}",
                   fontsize=9, loc="left", parse_math=False)
    axes.set_xlabel("V_DS [V]", fontsize=8)
    axes.set_ylabel("I_D [A]", fontsize=8)
    axes.grid(True, which="both", linewidth=0.3, color="#c8c8c8")
    axes.tick_params(labelsize=7)
    axes.legend(fontsize=7, loc="lower left", frameon=False)


def _same_chart_key(view: SoaView) -> tuple:
    """What a switch's chart shows, its name aside: switches with equal keys share one chart."""
    boundaries = tuple((label, tuple(map(float, voltages)), tuple(map(float, currents)))
                       for label, voltages, currents in view.boundaries)
    return view.case_temperature, view.v_ds_max, view.factor, boundaries, view.points


def _subjects_text(subjects: Sequence[str]) -> str:
    shown = ", ".join(subjects[:_NAMED_SUBJECTS])
    rest = len(subjects) - _NAMED_SUBJECTS
    return f"{shown} and {rest} more" if rest > 0 else shown


@dataclass(frozen=True)
class ChartPlan:
    """The charts to draw: one per group of switches whose charts would be identical, at most ``MAX_CHARTS``;
    ``omitted`` names the switches whose charts are left out beyond the cap (their points are in the reports'
    SOA tables)."""

    charts: tuple[tuple[SoaView, tuple[str, ...]], ...]
    omitted: tuple[str, ...]

    @property
    def note(self) -> str:
        """What the chart leaves out, in words (empty when nothing is)."""
        if not self.omitted:
            return ""
        return (f"{len(self.omitted)} switch(es) with other SOA charts are not drawn ({_subjects_text(self.omitted)}): "
                f"at most {MAX_CHARTS} charts are drawn; every checked point is in the SOA tables")


def chart_plan(views: Sequence[SoaView]) -> ChartPlan:
    """Group the switches whose charts would be identical, and cap the number of charts drawn."""
    groups: dict[tuple, tuple[SoaView, list[str]]] = {}
    for view in views:
        groups.setdefault(_same_chart_key(view), (view, []))[1].append(view.subject)
    ordered = list(groups.values())
    charts = tuple((view, tuple(subjects)) for view, subjects in ordered[:MAX_CHARTS])
    omitted = tuple(subject for _, subjects in ordered[MAX_CHARTS:] for subject in subjects)
    return ChartPlan(charts, omitted)


def _figure(views: Sequence[SoaView]):
    pyplot = pyplot_module()
    plan = chart_plan(views)
    count = len(plan.charts)
    figure, axes_list = pyplot.subplots(count, 1, figsize=(6.4, 3.6 * count), squeeze=False)
    for axes, (view, subjects) in zip(axes_list[:, 0], plan.charts):
        _draw_switch(axes, view, _subjects_text(subjects) + (f" ({len(subjects)} switches alike)"
                                                             if len(subjects) > 1 else ""))
    figure.suptitle("Safe operating area at the hottest case (margincheck)", fontsize=10)
    if plan.note:
        figure.text(0.01, 0.001, printable(plan.note), fontsize=6, wrap=True, va="bottom", parse_math=False)
    figure.tight_layout()
    return pyplot, figure


def render_soa_chart(views: Sequence[SoaView], stream, image_format: str) -> None:
    """Draw the chart of ``views`` into a binary ``stream`` as ``svg`` or ``png``."""
    if not views:
        raise PlotUnavailable("no switch has an SOA to draw (see the soa findings: inputs are missing)")
    pyplot, figure = _figure(views)
    try:
        figure.savefig(stream, format=image_format, dpi=150, metadata={"Date": None} if image_format == "svg" else {})
    finally:
        pyplot.close(figure)


def soa_chart_svg(views: Sequence[SoaView]) -> str:
    """The chart as SVG text, for embedding in a report."""
    buffer = io.BytesIO()
    render_soa_chart(views, buffer, "svg")
    return buffer.getvalue().decode("utf-8")


def chart_format(path: Path) -> str:
    """The image format for a chart file name (.svg or .png)."""
    try:
        return CHART_SUFFIXES[path.suffix.lower()]
    except KeyError:
        raise PlotUnavailable(f"{path}: the chart is written as .svg or .png") from None
