"""Plain-text layout shared by the terminal reports: wrapped labelled lines, section headings, override lines.

Every piece of text from the design file goes through ``printable`` and becomes a ``rich.text.Text``, so it is
never read as markup.
"""

from __future__ import annotations

import textwrap

from rich.text import Text

from margincheck.design import Design
from margincheck.safe_text import printable

__all__ = ["INDENT", "KEEP_TOGETHER", "LABEL_WIDTH", "override_lines", "section_rule", "wrapped"]

#: Width of the label column of the header lines (``design``, ``policy``...)
LABEL_WIDTH = 13
#: Indent of a finding's detail lines
INDENT = 4
#: Joins a name to its value so that a line never breaks between them
KEEP_TOGETHER = "\u00a0"


def wrapped(prefix: str, text: str, width: int, indent: int, hang: int = 0, label_style: str = "dim") -> list[Text]:
    """``prefix`` and ``text`` wrapped to ``width`` columns: indented by ``indent`` spaces, continuation lines
    by ``hang`` more. ``prefix`` (a label) is styled with ``label_style``."""
    pieces = textwrap.wrap(prefix + printable(text), width=max(width, 40), initial_indent=" " * indent,
                           subsequent_indent=" " * (indent + hang), break_on_hyphens=False)
    lines = [Text(piece.replace(KEEP_TOGETHER, " ")) for piece in pieces]
    if lines and prefix:
        lines[0].stylize(label_style, indent, indent + len(prefix))
    return lines


def section_rule(title: str, width: int) -> Text:
    """A section heading: the title (wrapped when it is long), then a rule to the right margin."""
    pieces = textwrap.wrap(printable(title), width=max(width, 40) - 4, break_on_hyphens=False) or [""]
    line = Text("\n".join(pieces), style="bold")
    line.append(" " + "─" * max(width - len(pieces[-1]) - 1, 3), style="dim")
    return line


def override_lines(design: Design, width: int) -> list[Text]:
    """One header line per ``--set`` override, with what the file writes there: a report of a changed design
    must not pass for a report of the file as written."""
    lines = []
    for item in design.overrides:
        written = "not in the file" if item.file_text is None else f"the file: {item.file_text}"
        lines += wrapped(f"{'override':<{LABEL_WIDTH}}", f"--set {item.text} ({written})", width, 0,
                         hang=LABEL_WIDTH, label_style="bold yellow")
    return lines
