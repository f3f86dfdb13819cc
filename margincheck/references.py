"""File references inside a design (device files, policy files), confined to the design's folder tree.

A design file may come from an untrusted pull request, so what it names may not leave the folder that holds
it: no absolute paths, no ``..`` that climbs out, no symbolic link that points out. A user can allow more with
an explicit root (``--allow-root DIR``). A refused file is never opened, so no message can quote it.
"""

from __future__ import annotations

import os
from pathlib import Path
from typing import Sequence

__all__ = ["FileReferenceError", "resolve_reference"]

_HOW_TO_ALLOW = "move it inside that folder, or allow its folder with --allow-root DIR"


class FileReferenceError(ValueError):
    """A file reference that leaves the allowed folders."""


def _inside(path: Path, roots: Sequence[Path]) -> bool:
    return any(path == root or root in path.parents for root in roots)


def resolve_reference(base: Path, reference: str, allowed_roots: Sequence[Path] = ()) -> Path:
    """The real path of the file that ``reference`` (written in a file in folder ``base``) names.

    Raises
    ------
    FileReferenceError
        When the reference holds a NUL character, is absolute (and no root is allowed), climbs out of ``base``
        with ``..``, or
        resolves through a symbolic link to somewhere outside ``base`` and every allowed root.
    """
    if "\x00" in reference:  # no file system takes it, and os.stat() raises ValueError on it
        raise FileReferenceError("a file name may not contain a NUL character")
    written = Path(reference)
    roots = [base.resolve(), *(Path(root).resolve() for root in allowed_roots)]
    if written.is_absolute() and not allowed_roots:
        raise FileReferenceError("an absolute path is not allowed; give a path relative to the design file, "
                                 "or allow its folder with --allow-root DIR")
    lexical = Path(os.path.normpath(base.resolve() / written))
    if not _inside(lexical, roots):
        raise FileReferenceError(f"the path leads outside the design file's folder; {_HOW_TO_ALLOW}")
    try:
        resolved = lexical.resolve()
    except OSError as error:  # a name too long for the file system, a loop of links...
        raise FileReferenceError(f"the path cannot be used ({error.strerror or error})") from None
    if not _inside(resolved, roots):
        raise FileReferenceError(f"the path goes through a symbolic link to a place outside the design file's "
                                 f"folder; {_HOW_TO_ALLOW}")
    return resolved
