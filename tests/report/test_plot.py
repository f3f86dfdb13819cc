"""The SOA chart: an SVG or PNG file is produced, is a valid image, and draws every checked point."""

import struct
import sys
import xml.etree.ElementTree as ElementTree

import pytest

from tests.conftest import EXAMPLES

pytest.importorskip("matplotlib", reason="the plot extra (matplotlib) is not installed")

EXAMPLE = EXAMPLES / "solar-string-sic-leg.yaml"
SVG = "{http://www.w3.org/2000/svg}"


def test_svg_chart_has_every_point(run_cli, tmp_path):
    chart = tmp_path / "soa.svg"
    code, _, _ = run_cli("check", EXAMPLE, "--plot", chart)
    assert code == 1   # the example fails one gate check; the chart is drawn all the same
    root = ElementTree.parse(chart).getroot()  # a well-formed SVG document
    assert root.tag == f"{SVG}svg"
    points = [element.get("id") for element in root.iter(f"{SVG}g") if element.get("id", "").startswith("soa-point-")]
    # two switches, each with one operating point and the turn-off transient
    assert sorted(points) == ["soa-point-Q1-0", "soa-point-Q1-1", "soa-point-Q2-0", "soa-point-Q2-1"]


def test_png_chart_is_a_real_image(run_cli, tmp_path):
    chart = tmp_path / "soa.png"
    code, _, _ = run_cli("check", EXAMPLE, "--plot", chart)
    assert code == 1
    data = chart.read_bytes()
    assert data[:8] == b"\x89PNG\r\n\x1a\n" and data[12:16] == b"IHDR"
    width, height = struct.unpack(">II", data[16:24])
    assert width > 400 and height > 400


def test_unknown_chart_type_is_refused_before_the_check(run_cli, tmp_path):
    code, _, err = run_cli("check", EXAMPLE, "--plot", tmp_path / "soa.pdf")
    assert code == 2 and ".svg or .png" in err
    assert not (tmp_path / "soa.pdf").exists()


def test_without_the_plot_extra_the_option_says_how_to_install_it(run_cli, tmp_path, monkeypatch):
    monkeypatch.setitem(sys.modules, "matplotlib", None)  # import matplotlib now raises ImportError
    code, _, err = run_cli("check", EXAMPLE, "--plot", tmp_path / "soa.svg")
    assert code == 2 and 'pip install "margincheck[plot]"' in err


def test_chart_never_overwrites_an_input(run_cli, write_design, contract_data):
    design = write_design(contract_data, "leg.svg")  # a design whose name looks like a chart
    before = design.read_bytes()
    code, _, err = run_cli("check", design, "--plot", design)
    assert code == 2 and "refusing" in err
    assert design.read_bytes() == before
