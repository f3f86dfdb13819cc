"""Reading captures: files written here from known arrays are read back in SI units; malformed files are refused
with their file, line and column (exit 2 through the command line). Every expected value is plain arithmetic
on the arrays written (a unit prefix, a probe factor, code * scale + offset, a linear interpolation)."""

from __future__ import annotations

import hashlib
import json

import numpy as np
import pytest

from margincheck.captures.mapping import CaptureMapping, mapping_from_options
from margincheck.captures.reading import read_capture
from margincheck.errors import InputError

TIME = np.array([-2e-9, -1e-9, 0.0, 1e-9, 2e-9, 3e-9])
V_DS = np.array([48.0, 48.5, 60.25, 52.0, 0.5, 0.125])
I_D = np.array([20.0, 20.5, 19.0, 10.0, 0.25, -0.5])
V_GS = np.array([15.0, 14.0, 6.5, 5.0, -2.0, -3.0])


def _rows(separator: str = ",", *columns: np.ndarray) -> str:
    columns = columns or (TIME, V_DS, I_D, V_GS)
    return "".join(separator.join(repr(float(value)) for value in row) + "\n" for row in zip(*columns))


def _write(tmp_path, text: str, name: str = "capture.csv"):
    path = tmp_path / name
    path.write_text(text, encoding="utf-8")
    return path


def _assert_known(capture, time=TIME, **expected):
    np.testing.assert_allclose(capture.time, time, rtol=1e-12, atol=0)
    expected = expected or {"v_ds": V_DS, "i_d": I_D, "v_gs": V_GS}
    assert list(capture.channels) == list(expected)
    for name, values in expected.items():
        np.testing.assert_allclose(capture.channels[name], values, rtol=1e-12, atol=1e-15)


def test_simplest_form_is_si_with_our_names(tmp_path):
    path = _write(tmp_path, "time,v_ds,i_d,v_gs\n" + _rows())
    before = path.read_bytes()
    capture = read_capture(path)
    _assert_known(capture)
    assert path.read_bytes() == before
    assert capture.sha256 == hashlib.sha256(before).hexdigest()
    assert capture.metadata == {} and not capture.peak_detect
    assert capture.lower["v_ds"] is capture.channels["v_ds"]
    assert capture.sample_interval == pytest.approx(1e-9)


def test_metadata_header_lines_before_the_column_header(tmp_path):
    header = "Instrument,bench scope\nRecord Length,6\nTrigger Time,0 s\n\ntime,v_ds,i_d,v_gs\n"
    capture = read_capture(_write(tmp_path, header + _rows()))
    _assert_known(capture)
    assert capture.metadata == {"Instrument": "bench scope", "Record Length": "6", "Trigger Time": "0 s"}


def test_odd_header_byte_order_mark_quotes_crlf_and_blank_lines(tmp_path):
    rows = _rows().splitlines()
    text = '\ufeff"Title","double pulse, Q1"\r\n\r\n "Time" ,"V_DS","I_D","V_GS"\r\n' + "\r\n".join(
        rows[:3]) + "\r\n\r\n" + "\r\n".join(rows[3:]) + "\r\n"
    capture = read_capture(_write(tmp_path, text))
    _assert_known(capture)
    assert capture.metadata == {"Title": "double pulse, Q1"}


def test_units_row_converts_prefixed_units(tmp_path):
    text = "TIME,CH1,CH2,CH3\nus,mV,kA,V\n" + _rows(",", TIME * 1e6, V_DS * 1e3, I_D / 1e3, V_GS)
    mapping = CaptureMapping(columns={"v_ds": "CH1", "i_d": "CH2", "v_gs": "CH3"})
    _assert_known(read_capture(_write(tmp_path, text), mapping))


def test_units_in_brackets_in_the_header(tmp_path):
    text = "Time (us),v_ds [mV],i_d [A]\n" + _rows(",", TIME * 1e6, V_DS * 1e3, I_D)
    _assert_known(read_capture(_write(tmp_path, text)), v_ds=V_DS, i_d=I_D)


@pytest.mark.parametrize("separator", [";", "\t"])
def test_semicolon_and_tab_separators_with_decimal_points(tmp_path, separator):
    text = separator.join(("time", "v_ds", "i_d", "v_gs")) + "\n" + _rows(separator)
    _assert_known(read_capture(_write(tmp_path, text)))


@pytest.mark.parametrize("separator", [";", "\t"])
def test_decimal_commas_with_semicolon_or_tab(tmp_path, separator):
    text = separator.join(("time", "v_ds", "i_d", "v_gs")) + "\n" + _rows(separator).replace(".", ",")
    _assert_known(read_capture(_write(tmp_path, text)))


def test_peak_detect_pairs_become_upper_and_lower_envelopes(tmp_path):
    low, high = V_DS - 1.0, V_DS + 2.0
    # each time on two consecutive rows, the larger value first for v_ds and second for i_d
    pairs = [(float(t), float(high[k]), -abs(float(I_D[k])), float(low[k]), abs(float(I_D[k])))
             for k, t in enumerate(TIME)]
    text = "time,v_ds,i_d\n" + "".join(f"{t!r},{v_hi!r},{i_lo!r}\n{t!r},{v_lo!r},{i_hi!r}\n"
                                        for t, v_hi, i_lo, v_lo, i_hi in pairs)
    capture = read_capture(_write(tmp_path, text))
    assert capture.peak_detect
    _assert_known(capture, v_ds=high, i_d=np.abs(I_D))
    np.testing.assert_allclose(capture.lower["v_ds"], low)
    np.testing.assert_allclose(capture.lower["i_d"], -np.abs(I_D))


def test_integer_codes_with_scale_and_offset_in_the_header(tmp_path):
    codes = np.array([1200, 1210, 1445, 1280, 250, 242])
    header = "scale.CH1,0.05\noffset.CH1,-12\nscale.TIME,1e-9\noffset.TIME,-2e-9\nTIME,CH1\n"
    text = header + "".join(f"{index},{code}\n" for index, code in enumerate(codes))
    capture = read_capture(_write(tmp_path, text), CaptureMapping(columns={"v_ds": "CH1"}))
    _assert_known(capture, v_ds=codes * 0.05 - 12)


def test_the_mapping_overrides_the_headers_scale(tmp_path):
    text = "scale.CH1,0.05\ntime,CH1\n0,100\n1e-9,200\n"
    capture = read_capture(_write(tmp_path, text), CaptureMapping(columns={"v_ds": "CH1"}, scale={"v_ds": 0.5},
                                                                  offset={"v_ds": 1.0}))
    _assert_known(capture, time=[0.0, 1e-9], v_ds=[51.0, 101.0])


def test_columns_by_number_and_the_mapping_unit_replacing_the_files(tmp_path):
    text = "t,a,b\ns,V,V\n" + _rows(",", TIME, V_DS, I_D / 10)  # a current probe's output recorded in volts
    mapping = mapping_from_options(["v_ds=2", "i_d=b", "i_d.unit=A", "i_d.attenuation=10"])
    _assert_known(read_capture(_write(tmp_path, text), mapping), v_ds=V_DS, i_d=I_D)


def test_attenuation_multiplies_and_deskew_shifts_by_linear_interpolation(tmp_path):
    text = "time,v_ds,i_d\n" + _rows(",", TIME, V_DS / 100, I_D)
    mapping = CaptureMapping(attenuation={"v_ds": 100.0}, deskew={"i_d": 1.5e-9})
    capture = read_capture(_write(tmp_path, text), mapping)
    # i_d's samples move to TIME + 1.5 ns; the time base keeps the samples that every channel covers
    # (from -0.5 ns: 0, 1, 2, 3 ns), and i_d at t is interpolated between its shifted neighbours.
    kept = TIME[2:]
    shifted_i_d = np.array([(I_D[0] + I_D[1]) / 2, (I_D[1] + I_D[2]) / 2, (I_D[2] + I_D[3]) / 2,
                            (I_D[3] + I_D[4]) / 2])
    _assert_known(capture, time=kept, v_ds=V_DS[2:], i_d=shifted_i_d)


def test_npy_columns_in_the_default_order(tmp_path):
    path = tmp_path / "capture.npy"
    np.save(path, np.column_stack([TIME, V_DS, I_D, V_GS]))
    _assert_known(read_capture(path))


def test_npy_structured_fields_are_column_names(tmp_path):
    path = tmp_path / "capture.npy"
    table = np.zeros(len(TIME), dtype=[("Time", "f8"), ("CH1", "f4"), ("CH2", "i2")])
    table["Time"], table["CH1"], table["CH2"] = TIME, V_DS, np.arange(len(TIME))
    np.save(path, table)
    mapping = mapping_from_options(["v_ds=CH1", "i_d=CH2", "i_d.scale=0.5", "i_d.offset=-1"])
    _assert_known(read_capture(path, mapping), v_ds=V_DS, i_d=np.arange(len(TIME)) * 0.5 - 1)


def test_npz_arrays_are_columns(tmp_path):
    path = tmp_path / "capture.npz"
    np.savez(path, time=TIME * 1e6, v_ds=V_DS, i_d=I_D, v_gs=V_GS)
    _assert_known(read_capture(path, CaptureMapping(units={"time": "us"})))


def test_npy_of_integer_codes_needs_a_scale(tmp_path):
    path = tmp_path / "codes.npz"
    np.savez(path, time=TIME, v_ds=np.arange(6, dtype=np.int16))
    with pytest.raises(InputError, match=r'array "v_ds": holds integer codes; give v_ds\'s scale'):
        read_capture(path)


@pytest.mark.parametrize("array, message", [
    (np.array([["a", "b"], ["c", "d"]]), "holds <U1 values"),
    (np.array([[1 + 2j, 3], [4, 5]]), "holds complex128 values"),
])
def test_npy_of_text_or_complex_is_refused(tmp_path, array, message):
    path = tmp_path / "capture.npy"
    np.save(path, array)
    with pytest.raises(InputError, match=message):
        read_capture(path)


def test_npy_saved_as_columns_by_samples_is_refused(tmp_path):
    path = tmp_path / "capture.npy"
    np.save(path, np.vstack([TIME, V_DS, I_D, V_GS]))
    with pytest.raises(InputError, match=r"shape \(4, 6\) has more columns than samples"):
        read_capture(path)


def test_no_time_column_says_how_to_name_it(tmp_path):
    with pytest.raises(InputError, match=r'capture.csv:1:1: no time column .* "X", "v_ds": name it with time_column'):
        read_capture(_write(tmp_path, "X,v_ds\n0,1\n1,2\n"))


def test_npy_of_objects_is_never_unpickled(tmp_path):
    path = tmp_path / "capture.npy"
    np.save(path, np.array([[0.0, {"a": 1}], [1.0, None]], dtype=object), allow_pickle=True)
    with pytest.raises(InputError, match="cannot be read as a NumPy array without pickled objects"):
        read_capture(path)


MALFORMED = [
    ("text cell", "time,v_ds\n0,1\n1e-9,abc\n", 'capture.csv:3:6: column 2 "v_ds": not a number: "abc"'),
    ("short row", "time,v_ds,i_d\n0,1,2\n1e-9,3\n", "capture.csv:3:8: row of 2 cells: the column header (line 1) "
                                                    "has 3 cells"),
    ("time backwards", "time,v_ds\n0,1\n2e-9,2\n1e-9,3\n",
     "capture.csv:4:1: column 1 \"time\": time goes backwards from the previous row's 2e-09 s"),
    ("nan", "time,v_ds\n0,1\n1e-9,nan\n",
     'capture.csv:3:6: column 2 "v_ds": nan is not a finite number (after scale, unit and attenuation)'),
    ("missing mapped column", "time,CH1\n0,1\n1e-9,2\n",
     'capture.csv:1:1: no column is mapped to v_ds, i_d, v_gs or v_gs_idle; the columns are "time", "CH1"'),
    ("current unit for v_ds", "time,v_ds\ns,A\n0,1\n1e-9,2\n",
     'capture.csv:2:1: column 2 "v_ds": the file\'s unit "A" cannot be used for v_ds: expected a voltage'),
    ("mixed decimal marks", "time;v_ds\n0,5;1,5\n1.5;2\n",
     'capture.csv:3:1: column 1 "time": "1.5" has a decimal point, but the first data row (line 2) uses the '
     "other mark"),
    ("lone repeated time", "time,v_ds\n0,1\n1e-9,2\n1e-9,3\n",
     "capture.csv:4:1: column 1 \"time\": time repeats the previous row's 1e-09 s; only a peak-detect export"),
    ("no data", "time,v_ds\n", "capture.csv: no data row"),
    ("one pair", "time,v_ds\n0,1\n0,2\n", 'capture.csv:3:1: column 1 "time": a peak-detect export of one pair'),
]


@pytest.mark.parametrize("text, expected", [case[1:] for case in MALFORMED], ids=[case[0] for case in MALFORMED])
def test_malformed_capture_is_one_located_line_and_exit_2(tmp_path, run_cli, monkeypatch, text, expected):
    path = _write(tmp_path, text)
    before = path.read_bytes()
    monkeypatch.chdir(tmp_path)
    code, out, err = run_cli("capture", "capture.csv")
    assert (code, out) == (2, "")
    assert len(err.splitlines()) == 1 and err.startswith(expected), err
    assert path.read_bytes() == before


def test_a_peak_detect_row_without_its_partner_is_located(tmp_path):
    path = _write(tmp_path, "time,v_ds\n0,1\n0,2\n1e-9,3\n2e-9,4\n2e-9,5\n")
    with pytest.raises(InputError, match=r'capture.csv:5:1: column 1 "time": a peak-detect export .* this row '
                                         r"breaks that \(2e-09 s\)"):
        read_capture(path)


def test_bad_map_option_is_exit_2(run_cli, tmp_path):
    path = _write(tmp_path, "time,v_ds\n0,1\n1e-9,2\n")
    code, _, err = run_cli("capture", path, "--map", "v_ds.unit=A")
    assert code == 2
    assert err.startswith('--map: v_ds.unit=A: expected a voltage such as "400 V", got "1 A"')


def test_summary_in_text_and_json(tmp_path, run_cli):
    path = _write(tmp_path, "Probe,10x\ntime,v_ds,i_d,v_gs\n" + _rows())
    code, out, _ = run_cli("capture", path, "--format", "json")
    summary = json.loads(out)
    assert code == 0
    assert summary["samples"] == 6 and summary["metadata"] == {"Probe": "10x"}
    assert summary["time"] == {"units": "s", "start": -2e-9, "stop": 3e-9, "sample_interval": pytest.approx(1e-9)}
    assert summary["channels"]["v_ds"] == {"units": "V", "min": 0.125, "max": 60.25}
    code, out, _ = run_cli("capture", path)
    assert code == 0
    assert "6 samples" in out and "v_ds             125 mV to 60.25 V" in out and "Probe: 10x" in out
