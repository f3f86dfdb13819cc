"""The policy files shipped with margincheck, each against the published table it quotes.

The table values below are typed from the document as read (not copied from the policy files): a shipped
policy whose factor drifts from its table fails here, and so does a shipped policy that no test quotes.
"""

import re

import pytest

from margincheck.design import load_design
from margincheck.policy import DEFAULT_POLICY, SHIPPED_POLICY_FOLDER, SWITCH_KEYS, shipped_policy_names
from tests.conftest import CONTRACT_FILE

#: MIL-DTL-917F(SH), Table XIX "Application stress limits and derating factor for rectifiers, SCRs, GTOs,
#: bipolar transistors, and IGBTs", rows "Transistors, field effect", as read at
#: electricalcontrolequipment.emilspec.com/MIL-DTL-917/page60.html (revision header "MIL-DTL-917F(SH)" on
#: page29.html of the same rendering). Stress limit as a fraction of the rating named.
MIL_DTL_917F_TABLE_XIX_FET = {
    "drain to gate voltage (a) DC": 0.5,                   # x V_DGR
    "drain to gate voltage (b) nominal working": 0.6,      # x V_DGR
    "drain to gate voltage (c) repetitive peak": 0.7,      # x V_DGR
    "drain to gate voltage (d) non-repetitive": 0.8,       # x V_DGR
    "average drain current (a) nominal value": 0.6,        # x I_D(on)
    "average drain current (b) maximum value": 0.8,        # x I_D(on)
    "gate to source voltage": 0.7,                         # x V_GS
}

#: Each shipped policy: the table row behind each key it sets (every other key keeps the default policy's).
QUOTED_ROWS = {
    "mil-dtl-917f-fet": ("MIL-DTL-917F(SH)", "Table XIX", {
        "peak_voltage": MIL_DTL_917F_TABLE_XIX_FET["drain to gate voltage (c) repetitive peak"],
        "steady_voltage": MIL_DTL_917F_TABLE_XIX_FET["drain to gate voltage (a) DC"],
        "gate_voltage": MIL_DTL_917F_TABLE_XIX_FET["gate to source voltage"],
    }),
}

_OTHER_KEYS = ("pulse_current", "capacitor_voltage", "spurious_turn_on", "cmti", "soa", "short_circuit",
               "marginal_band", "tj")


def test_every_shipped_policy_is_quoted_here():
    assert set(shipped_policy_names()) == set(QUOTED_ROWS)


@pytest.mark.reference
@pytest.mark.parametrize("name", sorted(QUOTED_ROWS))
def test_shipped_policy_factors_are_its_tables_values(name):
    _, _, rows = QUOTED_ROWS[name]
    policy = load_design(CONTRACT_FILE, name).policy
    assert policy.name == name
    assert {key: getattr(policy, key) for key in rows} == rows
    left_out = set(_OTHER_KEYS + SWITCH_KEYS) - set(rows)
    assert all(getattr(policy, key) == getattr(DEFAULT_POLICY, key) for key in left_out)
    assert policy.technologies == ()


@pytest.mark.parametrize("name", sorted(QUOTED_ROWS))
def test_shipped_policy_names_its_document_and_the_edition_caveat(name):
    document, table, _ = QUOTED_ROWS[name]
    basis = load_design(CONTRACT_FILE, name).policy.basis
    assert document in basis and table in basis
    assert "verify against the edition you are bound by" in basis


@pytest.mark.parametrize("name", sorted(QUOTED_ROWS))
def test_every_factor_in_a_shipped_file_has_its_table_row_and_mapping_beside_it(name):
    document, table, rows = QUOTED_ROWS[name]
    text = (SHIPPED_POLICY_FOLDER / f"{name}.yaml").read_text(encoding="utf-8")
    for key in rows:
        comment = re.search(rf"((?:#.*\n)+){key}: ", text)
        assert comment, f"{key} has no comment block right above it"
        assert f"{document} {table}" in comment.group(1) and "Mapping:" in comment.group(1), comment.group(1)


def test_a_shipped_policy_is_selected_by_name_in_the_design(write_design, contract_data, run_cli):
    contract_data["derating"] = "mil-dtl-917f-fet"
    code, out, _ = run_cli("check", write_design(contract_data), "--format", "json")
    assert '"name": "mil-dtl-917f-fet"' in out, out
    assert code == 1  # 0.5 x 650 V = 325 V is below the contract design's 420 V bus: bus-voltage fails
