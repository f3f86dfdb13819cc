"""The picture of a capture: a scope capture of the independent double-pulse circuit (scipy Radau) drawn as SVG
and PNG, its panels, edge names, peak labels and model overlay; a peak-detect export drawn as an envelope; and
the min/max decimation, which must keep a one-sample spike."""

from __future__ import annotations

import io
import struct
import xml.etree.ElementTree as ElementTree

import numpy as np
import pytest

from margincheck.captures.edges import WaveformError
from margincheck.captures.measurements import measure_double_pulse
from margincheck.captures.reading import read_capture
from margincheck.plot import PlotUnavailable
from margincheck.units import format_value
from tests.captures.double_pulse_circuit import scope

pytest.importorskip("matplotlib", reason="the plot extra (matplotlib) is not installed")

from margincheck.captures.picture import (  # noqa: E402  (after the skip: the module needs matplotlib)
    MAX_LINE_POINTS,
    ModelTrace,
    decimate,
    decimate_envelope,
    render_capture_picture,
)

BUS = 400.0
SVG = "{http://www.w3.org/2000/svg}"
EDGE_NAMES = ("first turn-off", "second turn-on", "second turn-off")
MODEL_LABEL = "cell model $L_s$ <25 nH>"   # drawn as written: no mathtext, escaped in the SVG


def _capture_file(tmp_path, channels: dict, peak_detect: bool = False):
    """The scope's samples written as an .npz capture; a peak-detect export gives every time on two rows,
    the sample ± 2 V (or A) about it."""
    if peak_detect:
        channels = {name: np.repeat(values, 2) + (0.0 if name == "time" else np.tile([2.0, -2.0], values.size))
                    for name, values in channels.items()}
    path = tmp_path / ("peak-detect.npz" if peak_detect else "capture.npz")
    np.savez(path, **channels)
    return read_capture(path)


def _measured(capture):
    channels = capture.channels
    return measure_double_pulse(capture.time, channels["v_ds"], channels["i_d"], channels["v_gs"], BUS, 50e-6,
                                v_gs_idle=channels["v_gs_idle"])


def _render(capture, figures, image_format="svg", **options) -> bytes:
    stream = io.BytesIO()
    render_capture_picture(capture, figures, stream, image_format, BUS, **options)
    return stream.getvalue()


def _svg_texts(data: bytes) -> tuple[set[str], list[str]]:
    """The ids of the SVG's groups and the text of its text elements (a well-formed document)."""
    root = ElementTree.fromstring(data)
    assert root.tag == f"{SVG}svg"
    ids = {element.get("id") for element in root.iter(f"{SVG}g") if element.get("id")}
    return ids, ["".join(element.itertext()) for element in root.iter(f"{SVG}text")]


@pytest.fixture(scope="module")
def capture(circuit_solution, tmp_path_factory):
    return _capture_file(tmp_path_factory.mktemp("capture"), scope(circuit_solution, sample_interval=0.2e-9))


@pytest.fixture(scope="module")
def figures(capture):
    return _measured(capture)


@pytest.fixture(scope="module")
def svg(capture, figures, circuit_solution):
    model = ModelTrace(MODEL_LABEL, circuit_solution.time, circuit_solution.v_ds, circuit_solution.i_d)
    return _svg_texts(_render(capture, figures, overlay=[model], title="bench run 3"))


def test_svg_has_one_panel_per_quantity_for_the_capture_and_each_edge(svg):
    ids, _ = svg
    columns = ["capture", *(name.replace(" ", "-") for name in EDGE_NAMES)]
    assert {f"panel-{row}-{column}" for row in ("v_ds", "i_d", "gate") for column in columns} <= ids


def test_svg_names_every_edge_and_its_energy(svg, figures):
    _, texts = svg
    for name in EDGE_NAMES:
        assert name in texts                                       # on the whole capture's top axis
        assert any(text.startswith(f"{name} at ") for text in texts)   # the zoomed column's title
    assert f"E_on {format_value(figures.turn_on.turn_on_energy, 'energy')} (10%/2% window)" in texts


def test_svg_labels_the_turn_off_peaks_with_their_values(svg, figures):
    _, texts = svg
    for edge in (figures.first_turn_off, figures.turn_off):
        assert f"peak v_ds {format_value(edge.peak_v_ds, 'voltage')}" in texts
    assert f"peak i_d {format_value(figures.turn_on.peak_current, 'current')}" in texts


def test_svg_names_the_model_overlay_as_written(svg):
    _, texts = svg
    assert f"model: {MODEL_LABEL}" in texts and "bench run 3 (margincheck)" in texts


def test_png_is_a_real_image(capture, figures):
    data = _render(capture, figures, "png")
    assert data[:8] == b"\x89PNG\r\n\x1a\n" and data[12:16] == b"IHDR"
    width, height = struct.unpack(">II", data[16:24])
    assert width > 1000 and height > 600


def test_a_peak_detect_capture_is_drawn_as_its_envelope(circuit_solution, tmp_path):
    capture = _capture_file(tmp_path, scope(circuit_solution, sample_interval=0.4e-9), peak_detect=True)
    assert capture.peak_detect
    ids, texts = _svg_texts(_render(capture, _measured(capture)))
    assert "panel-v_ds-second-turn-off" in ids
    assert "v_ds, measured (peak-detect envelope)" in texts


def test_an_edge_the_capture_does_not_hold_is_named_and_has_no_column(circuit_solution, tmp_path):
    channels = scope(circuit_solution, sample_interval=0.4e-9)
    kept = channels["time"] < 1.7e-6                      # ends before the second pulse does
    capture = _capture_file(tmp_path, {name: values[kept] for name, values in channels.items()})
    ids, texts = _svg_texts(_render(capture, _measured(capture)))
    assert "panel-v_ds-second-turn-on" in ids and "panel-v_ds-second-turn-off" not in ids
    assert any(text.startswith("second turn-off: not found (the second pulse does not end") for text in texts)


def test_only_svg_and_png_are_written(capture, figures):
    with pytest.raises(PlotUnavailable, match="svg or png, not 'pdf'"):
        _render(capture, figures, "pdf")


def test_a_model_trace_must_match_its_time_base():
    with pytest.raises(WaveformError, match="v_ds: 2 samples, time has 3"):
        ModelTrace("model", np.array([0.0, 1e-9, 2e-9]), v_ds=np.array([1.0, 2.0]))


def test_decimation_keeps_a_one_sample_spike_and_dip():
    time = np.arange(10_000_000) * 1e-10
    values = np.sin(time * 2e6)
    values[3_333_333], values[6_666_667] = 50.0, -40.0
    shown_time, shown = decimate(time, values)
    assert shown.size <= MAX_LINE_POINTS
    assert shown.max() == 50.0 and shown_time[np.argmax(shown)] == time[3_333_333]
    assert shown.min() == -40.0 and shown_time[np.argmin(shown)] == time[6_666_667]
    assert np.all(np.diff(shown_time) >= 0)               # still a line in time order


def test_envelope_decimation_keeps_the_extremes_of_both_envelopes():
    time = np.arange(1_000_001) * 1e-10
    upper, lower = np.ones(time.size), -np.ones(time.size)
    upper[123_457], lower[999_999] = 9.0, -7.0
    shown_time, shown_upper, shown_lower = decimate_envelope(time, upper, lower)
    assert shown_time.size <= MAX_LINE_POINTS
    assert shown_upper.max() == 9.0 and shown_lower.min() == -7.0


def test_a_short_trace_is_drawn_as_it_is():
    time, values = np.arange(100.0), np.arange(100.0) ** 2
    shown_time, shown = decimate(time, values)
    assert shown_time is time and shown is values
