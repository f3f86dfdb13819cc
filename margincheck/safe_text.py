"""Untrusted text (titles, refs, keys, values from a design file) made safe to show anywhere."""

from __future__ import annotations

import unicodedata

__all__ = ["printable"]

#: Control characters, line and paragraph separators, lone surrogates.
_ESCAPED_CATEGORIES = frozenset({"Cc", "Zl", "Zp", "Cs"})


def _is_noncharacter(code: int) -> bool:
    """U+FDD0..U+FDEF and the last two code points of every plane (U+FFFE, U+FFFF...): never text."""
    return 0xFDD0 <= code <= 0xFDEF or code & 0xFFFE == 0xFFFE


def _needs_escape(char: str) -> bool:
    category = unicodedata.category(char)
    if category == "Cf":
        return char != "\u200d"  # keep the zero-width joiner of emoji sequences
    return category in _ESCAPED_CATEGORIES or _is_noncharacter(ord(char))


def _escape(char: str) -> str:
    code = ord(char)
    return f"\\x{code:02x}" if code < 0x100 else f"\\u{code:04x}" if code <= 0xFFFF else f"\\U{code:08x}"


def printable(text: object) -> str:
    """``text`` with every character that could drive a terminal, split a line or break a file format shown
    as an escape (``\\xNN``, ``\\uNNNN``, ``\\UNNNNNNNN``).

    Escaped: control characters (ANSI escapes, carriage returns, bells, NEL...), format characters that can
    reorder a line (the Unicode bidirectional overrides), the line and paragraph separators U+2028/U+2029
    (line ends to ``str.splitlines`` and to JavaScript), lone surrogates, and the noncharacters such as
    U+FFFE/U+FFFF. Together these are every character XML 1.0 forbids and every one a line-splitter treats
    as a line end, so no text from a file can rewrite what a terminal or log shows, forge a second
    ``file:line:col`` record, or make a report ill-formed.

    Examples
    --------
    >>> printable("Q1\\x1b[2J")
    'Q1\\\\x1b[2J'
    >>> printable("a\\u2028b\\uffff")
    'a\\\\u2028b\\\\uffff'
    """
    return "".join(_escape(char) if _needs_escape(char) else char for char in str(text))
