"""``--set PATH=VALUE`` through the command line: it changes the finding it should, a bad override is one
located line with exit code 2, the input file is never written, and the report says it was overridden."""

import contextlib
import hashlib
import io
import json

import pytest

from margincheck.cli import main
from margincheck.errors import InputError
from margincheck.loading import load_document
from margincheck.overrides import apply_overrides, parse_overrides
from tests.conftest import CONTRACT_FILE

WIDER_BUS = "conditions.bus_voltage={nominal: 400 V, tolerance: 10 %}"


@pytest.fixture(scope="module")
def overridden_check(tmp_path_factory):
    """One check of the contract design with the bus tolerance widened: text on stdout, JSON to a file, and
    the design file's bytes before and after."""
    folder = tmp_path_factory.mktemp("set")
    design = folder / "leg.yaml"
    design.write_bytes(CONTRACT_FILE.read_bytes())
    before = design.read_bytes()
    out = io.StringIO()
    with pytest.MonkeyPatch.context() as patch, contextlib.redirect_stdout(out):
        patch.chdir(folder)
        code = main(["check", "leg.yaml", "--set", WIDER_BUS, "--report", "json:report.json"])
    return {"code": code, "text": out.getvalue(), "report": json.loads((folder / "report.json").read_text()),
            "before": before, "after": design.read_bytes()}


def test_set_changes_the_finding_it_overrides(overridden_check):
    # 400 V + 10 % = 440 V against 0.75 x 650 V = 487.5 V (steady_voltage of the default policy): margin
    # (487.5 - 440) / 487.5 = 0.0974; the file as written gives 420 V (arithmetic only).
    finding = next(item for item in overridden_check["report"]["findings"]
                   if (item["rule"], item["subject"]) == ("bus-voltage", "Q1"))
    assert finding["value"] == {"magnitude": 440.0, "units": "V"}
    assert finding["margin"] == pytest.approx((487.5 - 440.0) / 487.5, rel=1e-9)
    assert overridden_check["code"] == 1, overridden_check["text"]


def test_set_never_writes_the_input_file_and_the_record_keeps_its_hash(overridden_check):
    assert overridden_check["after"] == overridden_check["before"]
    assert overridden_check["report"]["design"]["sha256"] == hashlib.sha256(overridden_check["before"]).hexdigest()


def test_report_made_with_overrides_says_so(overridden_check):
    assert overridden_check["report"]["overrides"] == [
        {"set": WIDER_BUS, "path": "conditions.bus_voltage", "file_value": '{"nominal": "400 V", "tolerance": "5 %"}'}]
    header = overridden_check["text"].split("verdict")[0]
    assert f"override     --set {WIDER_BUS}" in header, overridden_check["text"]


@pytest.mark.parametrize(("override", "expected"), [
    ("switches.Q2.common_source_inductance=1 V",
     'leg.yaml (--set switches.Q2.common_source_inductance=1 V): switches[1].common_source_inductance: expected an '
     'inductance such as "25 nH", got "1 V"'),
    ("switches.Q7.gate_drive.r_off=2 ohm",
     'leg.yaml (--set switches.Q7.gate_drive.r_off=2 ohm): switches has no entry with ref "Q7" (refs: Q1, Q2)'),
    ("switches.Q2.gate_drive.r_of=2 ohm",
     'leg.yaml (--set switches.Q2.gate_drive.r_of=2 ohm): switches[1].gate_drive.r_of: unknown field; did you mean '
     '"r_off"? (allowed here: off, on, r_driver, r_off, r_on, tolerance)'),
    ("switches[1].common_source_inductance.nominal=1 nH",
     "leg.yaml (--set switches[1].common_source_inductance.nominal=1 nH): switches[1].common_source_inductance is a "
     "single value (12 nH), not a mapping or a list: set it whole, --set switches[1].common_source_inductance=VALUE"),
    ("switches.Q2.source_connection=",
     "leg.yaml (--set switches.Q2.source_connection=): switches[1].source_connection: required field is missing; "
     "expected kelvin | shared"),
    ("switches.Q2.gate_drive", '--set switches.Q2.gate_drive: expected PATH=VALUE with a dotted PATH, e.g. --set '
                               'switches.Q2.gate_drive.r_off="2.2 ohm"'),
    ("capacitors..rated_voltage=500 V", "--set capacitors..rated_voltage=500 V: expected PATH=VALUE"),
    ("capacitors.C1.rated_voltage=[500 V", "--set capacitors.C1.rated_voltage=[500 V: capacitors.C1.rated_voltage: "
                                           "VALUE: not valid YAML"),
    ("capacitors.C1.rated_voltage=!!python/name:os.system ''",
     "--set capacitors.C1.rated_voltage=!!python/name:os.system '': capacitors.C1.rated_voltage: VALUE: YAML tag "
     '"tag:yaml.org,2002:python/name:os.system" is not allowed; write plain values'),
])
def test_bad_override_is_one_located_line_and_exit_2(write_design, monkeypatch, run_cli, override, expected):
    design = write_design(CONTRACT_FILE.read_text(encoding="utf-8"))
    monkeypatch.chdir(design.parent)
    before = design.read_bytes()
    for command in ("validate", "check"):
        code, out, err = run_cli(command, "leg.yaml", "--set", override)
        assert (code, out) == (2, ""), err
        assert len(err.splitlines()) == 1 and err.startswith(expected), err
    assert design.read_bytes() == before


def test_set_reaches_every_design_of_a_batch(write_design, run_cli):
    first = write_design(CONTRACT_FILE.read_text(encoding="utf-8"), "a/leg.yaml")
    second = write_design(CONTRACT_FILE.read_text(encoding="utf-8"), "b/leg.yaml")
    code, _, err = run_cli("check", first, second, "--set", "switches.Q3.gate_drive.r_off=2 ohm")
    assert code == 2
    assert [line.split(" (--set")[0] for line in err.splitlines()] == [str(first), str(second)], err


def test_validate_counts_the_overrides(run_cli):
    code, out, _ = run_cli("validate", CONTRACT_FILE, "--set", "switches.Q1.gate_drive.r_off=4.7 ohm",
                           "--set", "capacitors.C1.rated_voltage=630 V")
    assert code == 0
    assert "valid margincheck/1 design with 2 --set override(s)" in out


def test_path_by_ref_index_and_dotted_name_reach_the_same_document():
    # A device name may hold a dot: its PATH is matched whole before it is split.
    document = load_document(CONTRACT_FILE)
    document.data["devices"]["sj.650"] = document.data["devices"].pop("demo-sj650")
    applied = apply_overrides(document, parse_overrides([
        "switches.Q2.gate_drive.r_off=2.2 ohm", "switches[0].turn_off_di_dt=6 A/ns",
        "devices.sj.650.ratings.v_ds_max=700 V", "commutation_loop.resistance=5 mohm"]))
    assert [item.path for item in applied] == [
        ("switches", 1, "gate_drive", "r_off"), ("switches", 0, "turn_off_di_dt"),
        ("devices", "sj.650", "ratings", "v_ds_max"), ("commutation_loop", "resistance")]
    assert [item.file_text for item in applied] == ["10 ohm", None, "650 V", None]
    assert document.data["switches"][1]["gate_drive"]["r_off"] == "2.2 ohm"


def test_a_device_file_is_refused_by_name(write_design):
    design = write_design("format: margincheck/1\ndevices:\n  demo: devices/demo.yaml\n")
    document = load_document(design)
    with pytest.raises(InputError, match=r'devices\.demo is a device file \("devices/demo\.yaml"\), which --set '
                                         "does not change"):
        apply_overrides(document, parse_overrides(["devices.demo.ratings.v_ds_max=700 V"]))
