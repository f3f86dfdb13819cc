"""Input problems: where they are and what is wrong, collected so that all of them are reported at once."""

from __future__ import annotations

import difflib
from dataclasses import dataclass
from typing import Collection

from margincheck.safe_text import printable

__all__ = ["InputError", "Location", "Problem", "closest_name_hint", "format_path"]


@dataclass(frozen=True, order=True)
class Location:
    """A 1-based line and column in an input file."""

    line: int
    column: int


@dataclass(frozen=True)
class Problem:
    """One thing wrong with an input file, printed as ``file:line:col: path: message``."""

    file: str
    location: Location | None
    path: str
    message: str

    def __str__(self) -> str:
        where = f"{self.file}:{self.location.line}:{self.location.column}" if self.location else self.file
        text = f"{where}: {self.path}: {self.message}" if self.path else f"{where}: {self.message}"
        return printable(text)  # paths and messages quote the file: never let them drive the terminal

    def sort_key(self) -> tuple[str, int, int]:
        location = self.location or Location(0, 0)
        return self.file, location.line, location.column


class InputError(Exception):
    """The input could not be read, validated or built; carries every problem found (exit code 2)."""

    def __init__(self, problems: list[Problem]):
        self.problems = sorted(problems, key=Problem.sort_key)
        super().__init__("\n".join(str(problem) for problem in self.problems))


def format_path(path: tuple[str | int, ...]) -> str:
    """Render a document path as the user would write it: ``switches[0].gate_drive.r_off``."""
    text = ""
    for part in path:
        if isinstance(part, int):
            text += f"[{part}]"
        else:
            text += f".{part}" if text else str(part)
    return text


def closest_name_hint(name: str, known: Collection[str], listed_as: str) -> str:
    """The end of an "unknown name" message: ``; did you mean "x"?`` with the closest of ``known`` (difflib),
    or, when none is close, every known name: `` (LISTED_AS: a, b, c)``."""
    guess = difflib.get_close_matches(name, known, n=1)
    return f'; did you mean "{guess[0]}"?' if guess else f" ({listed_as}: {', '.join(known)})"
