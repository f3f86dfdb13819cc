"""The SOA chart: an SVG or PNG file is produced, is a valid image, and draws every checked point."""

import shutil
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
    # two identical switches share one chart: one operating point and the turn-off transient
    assert sorted(points) == ["soa-point-Q1-0", "soa-point-Q1-1"]


def test_png_chart_is_a_real_image(run_cli, tmp_path):
    chart = tmp_path / "soa.png"
    code, _, _ = run_cli("check", EXAMPLE, "--plot", chart)
    assert code == 1
    data = chart.read_bytes()
    assert data[:8] == b"\x89PNG\r\n\x1a\n" and data[12:16] == b"IHDR"
    width, height = struct.unpack(">II", data[16:24])
    assert width > 400 and height > 400


def test_every_plot_given_is_written(run_cli, tmp_path):
    code, _, err = run_cli("check", EXAMPLE, "--plot", tmp_path / "soa.svg", "--plot", tmp_path / "soa.png")
    assert code == 1, err
    assert ElementTree.parse(tmp_path / "soa.svg").getroot().tag == f"{SVG}svg"
    assert (tmp_path / "soa.png").read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"


def test_a_batch_writes_every_plot_of_every_design(run_cli, tmp_path):
    (tmp_path / "devices").mkdir()
    for device in (EXAMPLES / "devices").iterdir():
        (tmp_path / "devices" / device.name).write_bytes(device.read_bytes())
    shutil.copytree(EXAMPLES / "policies", tmp_path / "policies")
    for name in ("a.yaml", "b.yaml"):
        (tmp_path / name).write_bytes(EXAMPLE.read_bytes())
    charts = tmp_path / "charts"
    code, _, err = run_cli("check", tmp_path / "a.yaml", tmp_path / "b.yaml", "--plot", charts / "{name}.svg",
                           "--plot", charts / "{name}.png")
    assert code == 1, err
    assert sorted(path.name for path in charts.iterdir()) == ["a.png", "a.svg", "b.png", "b.svg"]


def test_a_second_plot_of_an_unknown_type_is_refused_before_the_check(run_cli, tmp_path):
    code, _, err = run_cli("check", EXAMPLE, "--plot", tmp_path / "soa.svg", "--plot", tmp_path / "soa.pdf")
    assert code == 2 and ".svg or .png" in err and not (tmp_path / "soa.svg").exists()


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


def _many_switches(write_design, currents: list[float]) -> object:
    """The solar example with its device inline and one switch per entry of ``currents`` (its SOA point's I_D),
    in legs of two."""
    from margincheck.loading import load_document

    design = load_document(EXAMPLE).data
    design["devices"] = {"demo-sic1200": load_document(EXAMPLES / "devices" / "demo-sic1200.yaml").data}
    design["derating"] = "default"  # its policy file stays behind in examples/
    template = design["switches"][0]
    design["switches"] = [{**template, "ref": f"Q{index + 1}", "leg": f"L{index // 2 + 1}",
                           "soa_points": [{**template["soa_points"][0], "i_d": f"{current:g} A"}]}
                          for index, current in enumerate(currents)]
    return write_design(design)


def test_identical_switches_share_one_chart(write_design):
    from margincheck.checking import check_file
    from margincheck.plot import chart_plan

    report = check_file(_many_switches(write_design, [5.0] * 6 + [6.0, 6.0]))
    plan = chart_plan(report.soa)
    assert [subjects for _, subjects in plan.charts] == [("Q1", "Q2", "Q3", "Q4", "Q5", "Q6"), ("Q7", "Q8")]
    assert (plan.omitted, plan.note) == ((), "")


def test_charts_beyond_the_cap_are_named_not_drawn(write_design, run_cli, tmp_path):
    from margincheck.plot import MAX_CHARTS

    design = _many_switches(write_design, [1.0 + 0.2 * index for index in range(MAX_CHARTS + 2)])
    code, _, err = run_cli("check", design, "--report", f"html:{tmp_path / 'review.html'}", "--plot",
                           tmp_path / "soa.svg")
    assert (code, err) == (1, "")   # the solar leg fails its gate-off check; charts and report are written
    html = (tmp_path / "review.html").read_text(encoding="utf-8")
    assert (f"2 switch(es) with other SOA charts are not drawn (Q13, Q14): at most {MAX_CHARTS} charts are drawn; "
            "every checked point is in the SOA tables") in html
    root = ElementTree.parse(tmp_path / "soa.svg").getroot()
    drawn = {element.get("id").rsplit("-", 1)[0] for element in root.iter(f"{SVG}g")
             if element.get("id", "").startswith("soa-point-")}
    assert drawn == {f"soa-point-Q{index + 1}" for index in range(MAX_CHARTS)}
