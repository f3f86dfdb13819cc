"""Waivers in the design file: accepted, expired, unmatched or not needed, ignored; and their exit codes."""

import datetime

import pytest

from margincheck.checking import check_file
from margincheck.findings import Status, Verdict

TODAY = datetime.datetime(2026, 12, 1, 12, 0, tzinfo=datetime.timezone.utc)


@pytest.fixture
def passing(contract_data):
    """The contract design with Q1 alone and a 600 V bus capacitor: Q1's turn-off overshoot fails, several
    rules are not evaluated, the rest pass."""
    data = contract_data
    data["capacitors"][0]["rated_voltage"] = "600 V"
    data["switches"] = data["switches"][:1]
    return data


def _waiver(rule="turn-off-overshoot", subject="Q1", expires="2027-06-30"):
    return {"rule": rule, "subject": subject, "reason": "bench build at reduced bus voltage only",
            "accepted_by": "lead engineer (JK)", "expires": expires}


def _waive_all_failures(data, write_design, **overrides):
    """Waive every failing and not-evaluated finding of the design, so that the waivers decide the gate."""
    path = write_design(data)
    report = check_file(path, now=TODAY)
    data["waivers"] = [_waiver(f.rule, f.subject, **overrides) for f in report.findings
                       if f.status in (Status.FAIL, Status.NOT_EVALUATED)]
    return write_design(data)


def test_a_valid_waiver_waives_and_the_gate_passes(passing, write_design, run_cli):
    path = _waive_all_failures(passing, write_design)
    report = check_file(path, now=TODAY)
    overshoot = next(f for f in report.findings if (f.rule, f.subject) == ("turn-off-overshoot", "Q1"))
    assert overshoot.status is Status.WAIVED and overshoot.waived_status is Status.FAIL
    assert "lead engineer (JK)" in overshoot.waiver and overshoot.margin < 0  # the value is kept, not hidden
    assert report.verdict is Verdict.MARGINAL and report.exit_code == 0
    assert all(outcome.state.value == "applied" for outcome in report.waivers)
    code, out, _ = run_cli("check", path)
    assert code == 0 and "WAIVED" in out


def test_an_expired_waiver_fails(passing, write_design, run_cli):
    path = _waive_all_failures(passing, write_design, expires="2026-11-30")
    report = check_file(path, now=TODAY)
    assert report.exit_code == 1 and not any(f.status is Status.WAIVED for f in report.findings)
    assert all(outcome.state.value == "expired" for outcome in report.waivers)
    assert "EXPIRED waiver" in next(f for f in report.findings if f.rule == "turn-off-overshoot").waiver


def test_a_waiver_holds_through_its_expiry_day(passing, write_design):
    path = _waive_all_failures(passing, write_design, expires="2026-12-01")
    assert check_file(path, now=TODAY).exit_code == 0


def test_a_waiver_that_matches_no_finding_is_reported(passing, write_design):
    passing["waivers"] = [_waiver(subject="Q9"), _waiver(rule="bus-voltage")]
    report = check_file(write_design(passing), now=TODAY)
    states = [outcome.state.value for outcome in report.waivers]
    assert states == ["unmatched", "not-needed"]
    assert report.exit_code == 1  # the overshoot still fails: an unused waiver waives nothing


def test_no_waivers_ignores_them_all(passing, write_design, run_cli):
    path = _waive_all_failures(passing, write_design)
    code, out, _ = run_cli("check", path, "--no-waivers")
    assert code == 1 and "ignored (--no-waivers)" in out


def test_a_waiver_with_an_impossible_date_is_a_located_error(passing, write_design, run_cli):
    passing["waivers"] = [_waiver(expires="2027-02-30")]
    code, _, err = run_cli("check", write_design(passing))
    assert code == 2 and "waivers[0].expires" in err and "not a calendar date" in err


def test_waived_findings_are_counted_in_every_format(passing, write_design, run_cli, tmp_path):
    path = _waive_all_failures(passing, write_design)
    run_cli("check", path, "--report", f"junit:{tmp_path / 'j.xml'}", "--report", f"sarif:{tmp_path / 's.sarif'}",
            "--report", f"markdown:{tmp_path / 'm.md'}", "--report", f"html:{tmp_path / 'h.html'}")
    assert "<skipped" in (tmp_path / "j.xml").read_text(encoding="utf-8")
    assert '"suppressions"' in (tmp_path / "s.sarif").read_text(encoding="utf-8")
    assert "| WAIVED |" in (tmp_path / "m.md").read_text(encoding="utf-8")
    assert "WAIVED" in (tmp_path / "h.html").read_text(encoding="utf-8")
