"""Untrusted text (titles, refs, keys, values from a design file) made safe to show anywhere."""

from __future__ import annotations

import unicodedata

__all__ = ["printable"]


def printable(text: object) -> str:
    """``text`` with every control character (ANSI escapes, carriage returns, bells...) shown as ``\\xNN``.

    Format characters that can reorder a line (the Unicode bidirectional overrides) are shown as
    ``\\uNNNN``, so that no text from a file can rewrite what a terminal or log shows.

    Examples
    --------
    >>> printable("Q1\\x1b[2J")
    'Q1\\\\x1b[2J'
    """
    shown = []
    for char in str(text):
        category = unicodedata.category(char)
        if category == "Cc":
            shown.append(f"\\x{ord(char):02x}" if ord(char) < 0x100 else f"\\u{ord(char):04x}")
        elif category == "Cf" and char not in "\u200d":  # keep the zero-width joiner of emoji sequences
            shown.append(f"\\u{ord(char):04x}")
        else:
            shown.append(char)
    return "".join(shown)
