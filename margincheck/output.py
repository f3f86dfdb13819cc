"""Writing report files: atomically, and never over a file the check read."""

from __future__ import annotations

import os
import tempfile
from pathlib import Path
from typing import IO, Callable, Iterable

__all__ = ["OutputError", "write_atomically"]


class OutputError(OSError):
    """A report file that may not or could not be written."""


def write_atomically(target: Path, write: Callable[[IO], None], inputs: Iterable[Path], *,
                     binary: bool = False) -> None:
    """Write ``target`` through ``write(stream)`` into a temporary file beside it, then rename it into place.

    A reader never sees a half-written report, and a failed run leaves any earlier report as it was.
    ``binary`` opens the stream in bytes (an image) instead of UTF-8 text.

    Raises
    ------
    OutputError
        When ``target`` is one of ``inputs`` (the check never writes over what it read), or on an OS error.
    """
    resolved = target.resolve()
    if any(resolved == Path(item).resolve() for item in inputs):
        raise OutputError(f"{target}: refusing to write the report over an input file")
    resolved.parent.mkdir(parents=True, exist_ok=True)  # a report folder such as out/ is made on first use
    descriptor, temporary = tempfile.mkstemp(prefix=f".{target.name}.", suffix=".tmp", dir=resolved.parent)
    try:
        text_options = {} if binary else {"encoding": "utf-8", "newline": "\n"}
        with os.fdopen(descriptor, "wb" if binary else "w", **text_options) as stream:
            write(stream)
        os.replace(temporary, resolved)
    except BaseException:
        Path(temporary).unlink(missing_ok=True)
        raise
