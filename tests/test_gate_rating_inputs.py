"""The recommended gate range and the transient ratings in a design file: bad forms and contradictions with the
continuous ratings are located errors (exit code 2, nothing on stdout); good forms check."""

import pytest

from tests.conftest import CONTRACT_FILE

CONTRACT_TEXT = CONTRACT_FILE.read_text(encoding="utf-8")
ANCHOR = "      v_gs_min: -20 V\n"   # line 20 of the contract file: the new ratings go on lines 21 and on


def _with_ratings(*lines: str) -> str:
    assert CONTRACT_TEXT.count(ANCHOR) == 1
    return CONTRACT_TEXT.replace(ANCHOR, ANCHOR + "".join(f"      {line}\n" for line in lines))


BAD = {
    "recommended range without its maximum": (
        ["v_gs_recommended: {min: -4 V}"],
        "leg.yaml:21:7: devices.demo-sj650.ratings.v_gs_recommended.max: required field is missing"),
    "recommended minimum below the absolute one": (
        ["v_gs_recommended: {min: -24 V, max: 18 V}"],
        "leg.yaml:21:31: devices.demo-sj650.ratings.v_gs_recommended.min: must be at or above v_gs_min (-20 V), "
        "got -24 V"),
    "recommended maximum above the absolute one": (
        ["v_gs_recommended: {min: -4 V, max: 21 V}"],
        "leg.yaml:21:42: devices.demo-sj650.ratings.v_gs_recommended.max: must be at or below v_gs_max (20 V), "
        "got 21 V"),
    "recommended on-level not positive": (
        ["v_gs_recommended: {min: -4 V, max: 0 V}"],
        "leg.yaml:21:42: devices.demo-sj650.ratings.v_gs_recommended.max: must be above 0 V (the recommended "
        "on-level), got 0 V"),
    "transient gate rating without a pulse": (
        ["v_gs_transient: {max: 25 V}"],
        "leg.yaml:21:7: devices.demo-sj650.ratings.v_gs_transient.pulse: required field is missing"),
    "transient gate rating with a pulse alone": (
        ["v_gs_transient: {pulse: 1 us}"],
        "leg.yaml:21:23: devices.demo-sj650.ratings.v_gs_transient: needs max, min or both beside pulse (the "
        "transient gate ratings)"),
    "transient gate maximum below the continuous one": (
        ["v_gs_transient: {max: 19 V, pulse: 1 us}"],
        "leg.yaml:21:29: devices.demo-sj650.ratings.v_gs_transient.max: must be at or above v_gs_max (20 V), "
        "got 19 V"),
    "transient gate minimum above the continuous one": (
        ["v_gs_transient: {min: -18 V, pulse: 1 us}"],
        "leg.yaml:21:29: devices.demo-sj650.ratings.v_gs_transient.min: must be at or below v_gs_min (-20 V), "
        "got -18 V"),
    "transient drain-source rating below the continuous one": (
        ["v_ds_transient: {value: 600 V, pulse: 1 us}"],
        "leg.yaml:21:31: devices.demo-sj650.ratings.v_ds_transient.value: must be at or above v_ds_max (650 V), "
        "got 600 V"),
    "transient pulse that is not a time": (
        ["v_ds_transient: {value: 750 V, pulse: 1 V}"],
        'leg.yaml:21:45: devices.demo-sj650.ratings.v_ds_transient.pulse: expected a time such as "50 ns", got '
        '"1 V"'),
    "unknown field in a transient rating": (
        ["v_ds_transient: {value: 750 V, pulse: 1 us, repeat: 3}"],
        "leg.yaml:21:51: devices.demo-sj650.ratings.v_ds_transient.repeat: unknown field (allowed here: pulse, "
        "value)"),
}


@pytest.mark.parametrize("lines, message", BAD.values(), ids=BAD.keys())
def test_a_bad_rating_is_a_located_error(tmp_path, monkeypatch, run_cli, lines, message):
    monkeypatch.chdir(tmp_path)
    (tmp_path / "leg.yaml").write_text(_with_ratings(*lines), encoding="utf-8")
    code, out, err = run_cli("check", "leg.yaml", "--format", "json")
    assert (code, out) == (2, ""), err
    assert err.strip() == message


def test_good_ratings_check(tmp_path, monkeypatch, run_cli):
    monkeypatch.chdir(tmp_path)
    (tmp_path / "leg.yaml").write_text(_with_ratings(
        "v_gs_recommended: {min: -5 V, max: 15 V}", "v_gs_transient: {max: 25 V, min: -25 V, pulse: 100 ns}",
        "v_ds_transient: {value: 750 V, pulse: 1 us}"), encoding="utf-8")
    code, out, err = run_cli("check", "leg.yaml", "--format", "json")
    assert code in (0, 1) and err == "", err
