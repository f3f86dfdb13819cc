"""What a device's technology calls its terminals and ratings: an IGBT states V_CE, V_GE and I_C where a MOSFET or
a GaN HEMT states V_DS, V_GS and I_D (design.md section 5: the same rule ids read either).

Inside, every device keeps the MOSFET names (``v_ds_max`` holds an IGBT's V_CES); the design file and the reports
use the technology's own names. ``design_name`` gives a field's name in the file, ``in_terms_of`` rewrites a
finding's text, and ``FOREIGN_FIELDS`` lists the fields one technology states and the other cannot.
"""

from __future__ import annotations

import re

__all__ = ["FOREIGN_FIELDS", "IGBT", "IGBT_NAMES", "design_name", "in_terms_of", "is_igbt"]

IGBT = "igbt"

#: The IGBT's name of each internal (MOSFET-named) device field.
IGBT_NAMES = {
    "v_ds_max": "v_ce_max", "v_gs_max": "v_ge_max", "v_gs_min": "v_ge_min", "i_d_pulse": "i_c_pulse",
    "v_gs_th": "v_ge_th", "v_gs_th_hot": "v_ge_th_hot", "v_gs_th_temperature_coefficient":
    "v_ge_th_temperature_coefficient", "c_iss": "c_ies", "c_rss": "c_res", "c_oss": "c_oes",
    "v_ds": "v_ce", "v_gs": "v_ge", "i_d": "i_c",
}

#: Fields that only an IGBT states (its names and its own characteristics) and fields it cannot state.
_IGBT_ONLY = frozenset(IGBT_NAMES.values()) | {"v_ce_sat", "v_ce_sat_hot", "v_ce_sat_temperature_coefficient",
                                               "structure", "tail"}
_MOSFET_ONLY = frozenset(IGBT_NAMES) | {"q_gd", "r_ds_on", "r_ds_on_hot", "r_ds_on_temperature_coefficient"}
FOREIGN_FIELDS = {True: _MOSFET_ONLY - _IGBT_ONLY, False: _IGBT_ONLY - _MOSFET_ONLY}

#: Words of a finding's text (basis, note, missing fields) that name a MOSFET quantity, with the IGBT's word.
_WORDS = {"V_DS": "V_CE", "V_GS": "V_GE", "V_gs": "V_ge", "V_ds": "V_ce", "I_D": "I_C", "I_DM": "I_CM",
          "V(BR)DSS": "V(BR)CES", "drain-source": "collector-emitter", "gate-source": "gate-emitter",
          "v_ds": "v_ce", "v_gs": "v_ge", "i_d": "i_c", "c_iss": "c_ies", "c_rss": "c_res", "c_oss": "c_oes",
          "C_iss": "C_ies", "C_rss": "C_res", "C_oss": "C_oes"}
# A word stands alone or starts a field name (v_ds_max, v_gs_th_hot); never inside another word.
_PATTERN = re.compile(r"(?<![A-Za-z0-9_])(" + "|".join(re.escape(word) for word in
                                                      sorted(_WORDS, key=len, reverse=True)) + r")(?![A-Za-z0-9])")


def is_igbt(technology: str | None) -> bool:
    """Whether ``technology`` names an IGBT."""
    return technology == IGBT


def design_name(technology: str | None, field: str) -> str:
    """The name the design file uses for the internal device field ``field`` of a device of ``technology``."""
    return IGBT_NAMES.get(field, field) if is_igbt(technology) else field


def in_terms_of(technology: str | None, text: str) -> str:
    """``text`` with the MOSFET's quantity names replaced by the IGBT's for an IGBT (unchanged otherwise).

    >>> in_terms_of("igbt", "V_pk <= peak_voltage * v_ds_max; devices.Q.characteristics.v_gs_th_hot")
    'V_pk <= peak_voltage * v_ce_max; devices.Q.characteristics.v_ge_th_hot'
    """
    if not is_igbt(technology):
        return text
    return _PATTERN.sub(lambda match: _WORDS[match.group(1)], text)
