"""Files in and out, safely: text read as UTF-8 or refused in one line; outputs checked before the work
starts and written atomically (a failure or an interrupt never leaves half a file or overwrites a good one).

Temporary files and folders are named ``.NAME.XXXXXXXX.part`` beside their destination; they are
removed on any failure, on Ctrl-C and on SIGTERM (the command shell turns SIGTERM into
:class:`Terminated`, so every ``finally`` runs). Written files get the permissions an ordinary
``open()`` would give them under the user's umask.
"""

from __future__ import annotations

import contextlib
import errno
import os
import signal
import tempfile
from collections.abc import Iterator
from pathlib import Path

from planner.core.errors import InputError

#: Suffix of temporary files and folders beside an output.
PART_SUFFIX = ".part"
#: Characters of a destination's name kept in its temporary name (so long names still fit).
_TEMP_NAME_CHARS = 32
#: Longest file name most file systems allow (bytes), when the system does not say.
_DEFAULT_NAME_MAX = 255


class Terminated(BaseException):
    """SIGTERM, raised like KeyboardInterrupt so that every clean-up runs before the process ends."""


@contextlib.contextmanager
def signals_held() -> Iterator[None]:
    """Hold SIGINT and SIGTERM while a rename or a clean-up runs, so it is never cut in half; a signal that
    arrives meanwhile takes effect as soon as the block ends."""
    if not hasattr(signal, "pthread_sigmask"):
        yield
        return
    old = signal.pthread_sigmask(signal.SIG_BLOCK, {signal.SIGINT, signal.SIGTERM})
    try:
        yield
    finally:
        signal.pthread_sigmask(signal.SIG_SETMASK, old)


def current_umask() -> int:
    """The process's umask (read by setting it and putting it back)."""
    mask = os.umask(0o022)
    os.umask(mask)
    return mask


def temp_prefix(dest: Path) -> str:
    """Prefix of a temporary name beside ``dest``: hidden, and short whatever the length of ``dest``'s name."""
    return f".{dest.name[:_TEMP_NAME_CHARS]}."


def read_text(path: str | Path, what: str = "text file") -> str:
    """The whole file as text. Not found, a folder, unreadable, binary or not UTF-8: one InputError naming it.

    A UTF-8 byte-order mark (which some Windows editors write) is dropped.
    """
    p = Path(path)
    try:
        data = p.read_bytes()
    except FileNotFoundError:
        raise InputError(str(p), "-", "file not found") from None
    except IsADirectoryError:
        raise InputError(str(p), "-", f"is a folder, expected a {what}") from None
    except OSError as exc:
        raise InputError(str(p), "-", f"cannot be read ({exc.strerror or exc})") from None
    return decode_text(data, str(p), what)


def decode_text(data: bytes, file: str, what: str = "text file") -> str:
    """Bytes of a text file → str; binary data or another encoding is an InputError saying where."""
    if b"\x00" in data[:65536]:
        raise InputError(file, "-", f"is a binary file, not a {what}")
    try:
        return data.decode("utf-8-sig")
    except UnicodeDecodeError as exc:
        offset = exc.start + (3 if data.startswith(b"\xef\xbb\xbf") else 0)
        line = data.count(b"\n", 0, offset) + 1
        col = offset - (data.rfind(b"\n", 0, offset) + 1) + 1
        raise InputError(
            file,
            "-",
            f"not UTF-8 text (byte 0x{data[offset]:02X} at line {line}, column {col}); save the {what} as UTF-8",
        ) from None


def _name_max(folder: Path) -> int:
    try:
        return int(os.pathconf(folder, "PC_NAME_MAX"))
    except (OSError, ValueError, AttributeError):
        return _DEFAULT_NAME_MAX


def _kind(path: Path, shown: Path, field: str) -> str | None:
    """``"dir"``, ``"file"`` or None (absent); a name too long for the system is an InputError."""
    try:
        return "dir" if path.stat().st_mode & 0o040000 else "file"
    except (FileNotFoundError, NotADirectoryError):
        return None
    except OSError as exc:
        if exc.errno == errno.ENAMETOOLONG:
            raise _too_long(shown, field, max(path.parts, key=lambda part: len(os.fsencode(part)))) from None
        raise InputError(str(shown), field, f"cannot be checked ({exc.strerror or exc})") from None


def _too_long(p: Path, field: str, name: str, limit: int = _DEFAULT_NAME_MAX) -> InputError:
    shown = str(p) if len(str(p)) <= 80 else str(p)[:77] + "..."
    size = len(os.fsencode(name))
    return InputError(shown, field, f"a name of {size} bytes is longer than the file system allows ({limit})")


def check_writable(path: str | Path, *, folder: bool = False, field: str = "--out") -> Path:
    """Refuse, before any long computation, an output that cannot be written.

    ``path`` is a file (or, with ``folder``, a folder written whole) that may not exist yet, nor its
    parent folders. Refused: a file where a folder is needed (or the reverse), a parent that is a file,
    a name longer than the file system allows, and a destination whose nearest existing folder the
    user may not write to. Nothing is created.
    """
    p = Path(path)
    kind = _kind(p, p, field)
    if folder and kind == "file":
        raise InputError(str(p), field, "exists and is not a folder")
    if not folder and kind == "dir":
        raise InputError(str(p), field, "is a folder; give a file name (e.g. a name inside it)")
    missing = [p]
    anchor = p.parent
    while (anchor_kind := _kind(anchor, p, field)) is None and anchor != anchor.parent:
        missing.append(anchor)
        anchor = anchor.parent
    if anchor_kind != "dir":
        raise InputError(str(p), field, f"cannot make its folder: a file of that name is in the way ({anchor})")
    limit = _name_max(anchor)
    for part in missing:
        if len(os.fsencode(part.name)) > limit:
            raise _too_long(p, field, part.name, limit)
    if not os.access(anchor, os.W_OK | os.X_OK):
        raise InputError(str(p), field, f"cannot write in {anchor} (permission denied or read-only)")
    return p


def check_outputs(*dests: tuple[str | Path | None, str]) -> None:
    """:func:`check_writable` for each ``(path, option)`` a command was given (None: not given)."""
    for path, field in dests:
        if path is not None:
            check_writable(path, field=field)


def _os_error(p: Path, exc: OSError) -> InputError:
    """A failed write as one line (disk full, permission, name too long, ...)."""
    if exc.errno in (errno.ENOTDIR, errno.EEXIST):
        return InputError(str(p), "out", "cannot make its folder: a file of that name is in the way")
    return InputError(str(p), "out", f"cannot write ({exc.strerror or exc})")


def write_text_atomic(path: str | Path, text: str) -> Path:
    """Write ``text`` (UTF-8) to a temporary file beside ``path``, then rename it into place."""
    return write_bytes_atomic(path, text.encode("utf-8"))


def write_bytes_atomic(path: str | Path, data: bytes) -> Path:
    """Write ``data`` to a temporary file beside ``path``, then rename it into place (folders are made).

    A ``path`` that is a folder, whose parent is a file, or that cannot be written is an InputError
    naming it. The file gets mode 0666 less the umask, as ``open()`` would give it.
    """
    p = Path(path)
    if p.is_dir():
        raise InputError(str(p), "out", "is a folder; give a file name (e.g. a name inside it)")
    try:
        p.parent.mkdir(parents=True, exist_ok=True)
        fd, tmp = tempfile.mkstemp(prefix=temp_prefix(p), suffix=PART_SUFFIX, dir=p.parent)
    except OSError as exc:
        raise _os_error(p, exc) from None
    try:
        with os.fdopen(fd, "wb") as fh:
            os.fchmod(fh.fileno(), 0o666 & ~current_umask())
            fh.write(data)
        with signals_held():
            os.replace(tmp, p)
    except OSError as exc:
        Path(tmp).unlink(missing_ok=True)
        raise _os_error(p, exc) from None
    except BaseException:
        with signals_held():
            Path(tmp).unlink(missing_ok=True)
        raise
    return p
