"""Writing outputs safely: a failure never leaves half a file or overwrites a good one."""

from __future__ import annotations

import os
import tempfile
from pathlib import Path


def write_text_atomic(path: str | Path, text: str) -> Path:
    """Write ``text`` to a temporary file beside ``path``, then rename it into place."""
    return write_bytes_atomic(path, text.encode("utf-8"))


def write_bytes_atomic(path: str | Path, data: bytes) -> Path:
    """Write ``data`` to a temporary file beside ``path``, then rename it into place (folders are made).

    A ``path`` that is a folder, or whose parent is a file, is an InputError naming it.
    """
    from planner.core.errors import InputError

    p = Path(path)
    if p.is_dir():
        raise InputError(str(p), "out", "is a folder; give a file name (e.g. a name inside it)")
    try:
        p.parent.mkdir(parents=True, exist_ok=True)
    except (FileExistsError, NotADirectoryError):
        raise InputError(str(p), "out", "cannot make its folder: a file of that name is in the way") from None
    fd, tmp = tempfile.mkstemp(prefix=f".{p.name}.", suffix=".site_night", dir=p.parent)
    try:
        with os.fdopen(fd, "wb") as fh:
            fh.write(data)
        os.replace(tmp, p)
    except BaseException:
        Path(tmp).unlink(missing_ok=True)
        raise
    return p
