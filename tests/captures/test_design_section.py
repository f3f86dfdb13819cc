"""The design's optional ``captures:`` section: parsed into CaptureSpec entries whose mapping reads the file;
file references confined to the design's folder; problems located in the design."""

from __future__ import annotations

import numpy as np
import pytest

from margincheck.captures.reading import read_capture
from margincheck.design import load_design
from margincheck.errors import InputError


def _entry(**changes) -> dict:
    entry = {"file": "captures/q1-off.csv", "switch": "Q1", "bus_voltage": "48 V", "load_inductance": "100 uH",
             "time_column": "TIME", "columns": {"v_ds": "CH1", "i_d": 3},
             "units": {"time": "us", "v_ds": "mV"}, "attenuation": {"v_ds": 10}, "deskew": {"i_d": "-2 ns"},
             "scale": {"i_d": 0.5}, "offset": {"i_d": -1}}
    entry.update(changes)
    return entry


@pytest.fixture
def capture_file(tmp_path):
    folder = tmp_path / "captures"
    folder.mkdir()
    path = folder / "q1-off.csv"
    path.write_text("TIME,CH1,CH2\n0,100,4\n0.002,200,6\n0.004,300,8\n", encoding="utf-8")
    return path


def test_a_captures_entry_becomes_a_spec_that_reads_its_file(capture_file, write_design, contract_data):
    contract_data["captures"] = [_entry()]
    design = load_design(write_design(contract_data))
    (spec,) = design.captures
    assert (spec.switch, spec.bus_voltage, spec.load_inductance) == (
        "Q1", 48.0, pytest.approx(100e-6))
    assert spec.file == capture_file.resolve()
    assert spec.mapping.columns == {"v_ds": "CH1", "i_d": 3, "time": "TIME"}
    assert spec.mapping.deskew == {"i_d": pytest.approx(-2e-9)}
    capture = read_capture(spec.file, spec.mapping, spec.name)
    # time in us; v_ds in mV x 10; i_d = code * 0.5 - 1 in A, moved 2 ns earlier and interpolated back onto
    # the time base (which keeps 0 and 2 ns: i_d's shifted samples end at 2 ns)
    np.testing.assert_allclose(capture.time, [0.0, 2e-9])
    np.testing.assert_allclose(capture.channels["v_ds"], [1.0, 2.0])
    np.testing.assert_allclose(capture.channels["i_d"], [2.0, 3.0])


def test_the_section_is_optional(write_design, contract_data):
    assert load_design(write_design(contract_data)).captures == ()


@pytest.mark.parametrize("changes, message", [
    ({"switch": "Q9"}, r'captures\[0\].switch: no switch with ref "Q9"'),
    ({"file": "../elsewhere.csv"}, r"captures\[0\].file: capture file \"../elsewhere.csv\": the path leads outside"),
    ({"file": "captures/missing.csv"}, r'captures\[0\].file: capture file "captures/missing.csv": no such file'),
    ({"units": {"v_ds": "A"}}, r'captures\[0\].units.v_ds: expected a voltage such as "400 V", got "1 A"'),
    ({"attenuation": {"v_ds": 0}}, r"captures\[0\].attenuation.v_ds"),
    ({"deskew": {"i_d": "2 V"}}, r"captures\[0\].deskew.i_d: expected a time"),
    ({"separator": "|"}, r"captures\[0\].separator"),
])
def test_problems_in_the_section_are_located(capture_file, write_design, contract_data, changes, message):
    contract_data["captures"] = [_entry(**changes)]
    with pytest.raises(InputError, match=message):
        load_design(write_design(contract_data))
