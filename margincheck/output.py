"""Writing report files: atomically, never over a file the check read, and never replacing what is not a file.

A regular file (or a new one) is written into a temporary file beside it and renamed into place; it gets the
permissions the umask gives a new file (or keeps those of the file it replaces). A character device
(``/dev/null``, a terminal) or a named pipe is written straight into, never renamed over, so that a report
sent to ``/dev/null`` by a CI job running as root leaves the device alone. Anything else (a folder, a socket, a
block device) is refused.
"""

from __future__ import annotations

import contextlib
import os
import stat
import tempfile
from pathlib import Path
from typing import IO, Callable, Iterable

__all__ = ["OutputError", "write_atomically"]

_NEW_FILE_MODE = 0o666  # what open() asks for a new file, before the umask


class OutputError(OSError):
    """A report file that may not or could not be written."""


def _umask() -> int:
    mask = os.umask(0o077)  # reading the umask means setting it; it is put back at once
    os.umask(mask)
    return mask


def _stream_options(binary: bool) -> dict:
    return {} if binary else {"encoding": "utf-8", "newline": "\n"}


def _existing_mode(target: Path) -> int | None:
    """The mode of what ``target`` names now (following links), or None when nothing is there."""
    try:
        return os.stat(target).st_mode
    except FileNotFoundError:
        return None


def _write_into(target: Path, write: Callable[[IO], None], binary: bool, is_pipe: bool) -> None:
    """Write straight into a character device or a named pipe (opened without blocking: a pipe with no reader
    is an error, not a hang)."""
    flags = os.O_WRONLY | getattr(os, "O_NOCTTY", 0) | (getattr(os, "O_NONBLOCK", 0) if is_pipe else 0)
    try:
        descriptor = os.open(target, flags)
    except OSError as error:
        reason = "a named pipe that nobody reads" if is_pipe else (error.strerror or str(error))
        raise OutputError(f"{target}: cannot write the report into {reason}") from None
    if is_pipe:
        os.set_blocking(descriptor, True)
    with os.fdopen(descriptor, "wb" if binary else "w", **_stream_options(binary)) as stream:
        write(stream)


def write_atomically(target: Path, write: Callable[[IO], None], inputs: Iterable[Path], *,
                     binary: bool = False) -> None:
    """Write ``target`` through ``write(stream)``.

    A regular file goes through a temporary file beside it renamed into place: a reader never sees a
    half-written report, and a failed run leaves any earlier report as it was. ``binary`` opens the stream in
    bytes (an image) instead of UTF-8 text.

    Raises
    ------
    OutputError
        When ``target`` is one of ``inputs`` (the check never writes over what it read), is neither a regular
        file, a character device nor a named pipe, or on an OS error.
    """
    resolved = target.resolve()
    if any(resolved == Path(item).resolve() for item in inputs):
        raise OutputError(f"{target}: refusing to write the report over an input file")
    mode = _existing_mode(target)
    if mode is not None and (stat.S_ISCHR(mode) or stat.S_ISFIFO(mode)):
        _write_into(target, write, binary, is_pipe=stat.S_ISFIFO(mode))
        return
    if mode is not None and not stat.S_ISREG(mode):
        raise OutputError(f"{target}: not a regular file, a character device or a named pipe; refusing to "
                          "replace it with the report")
    resolved.parent.mkdir(parents=True, exist_ok=True)  # a report folder such as out/ is made on first use
    descriptor, temporary = tempfile.mkstemp(prefix=f".{target.name}.", suffix=".tmp", dir=resolved.parent)
    try:
        os.fchmod(descriptor, stat.S_IMODE(mode) if mode is not None else _NEW_FILE_MODE & ~_umask())
        with os.fdopen(descriptor, "wb" if binary else "w", **_stream_options(binary)) as stream:
            write(stream)
        os.replace(temporary, resolved)
    except BaseException:
        with contextlib.suppress(OSError):
            Path(temporary).unlink(missing_ok=True)
        raise
