"""Writing files so that a crash never leaves a half-written one, and JSON without NaN.

No numpy and no project model here: every writer of crossplan (project
files, exports, measurements, presets) comes through :func:`atomic_write`,
and every JSON it prints through :func:`finite`.
"""

from __future__ import annotations

import errno
import json
import math
import os
import tempfile
from pathlib import Path
from typing import Any, Callable

__all__ = ["atomic_write", "atomic_write_text", "finite", "dumps", "os_error_text", "make_folder"]


#: Plain words for the file-system errors a command can meet (errno name -> reason).
_OS_REASONS = {
    "EISDIR": "is a folder, where a file is expected",
    "ENOTDIR": "a part of the path is a file, where a folder is expected",
    "ENOENT": "no such file or folder",
    "EEXIST": "exists already",
    "EACCES": "permission denied",
    "EPERM": "permission denied",
    "EROFS": "the file system is read-only",
    "ENOSPC": "no space left on the device",
    "EDQUOT": "the disk quota is used up",
    "ENAMETOOLONG": "the name is too long for the file system",
    "EMFILE": "too many open files",
}


def os_error_text(e: OSError) -> str:
    """One line for a file-system error: the path(s) and the reason in plain words."""
    own = e.strerror and e.errno and e.strerror != os.strerror(e.errno)
    reason = (e.strerror if own else
              _OS_REASONS.get(errno.errorcode.get(e.errno or 0, ""), e.strerror or str(e)))
    paths = [str(f) for f in (e.filename, e.filename2) if f is not None]
    where = " -> ".join(repr(p) for p in paths)
    return f"{where}: {reason}" if where else reason


def make_folder(path: str | os.PathLike) -> Path:
    """Make the folder ``path`` (and its parents) if missing; an OSError names it and says why.

    A file standing where the folder should be is :class:`NotADirectoryError`
    (``mkdir`` says only that it exists).
    """
    p = Path(path)
    if p.exists() and not p.is_dir():
        raise NotADirectoryError(errno.ENOTDIR, "is a file, where a folder is expected", str(p))
    try:
        p.mkdir(parents=True, exist_ok=True)
    except OSError as e:
        raise type(e)(e.errno, e.strerror, str(p)) from None
    return p


def atomic_write(path: str | os.PathLike, write: Callable[[str], None]) -> None:
    """Make ``path`` by ``write(tmp)`` into a temporary file of the same folder, then rename.

    The temporary file is flushed to disk (``fsync``) and renamed over
    ``path``, an atomic step on POSIX and Windows, so ``path`` is always
    either the old file or the new one. It keeps the old file's permissions
    (0644 for a new one); on any failure the temporary file is removed and
    the error raised. A file-system error (:class:`OSError`) is raised
    again naming ``path`` (not the temporary file), as a folder where the
    file should be (:class:`IsADirectoryError`) when ``path`` is one.
    """
    p = Path(path)
    folder = p.parent if str(p.parent) else Path(".")
    if p.is_dir():
        raise IsADirectoryError(errno.EISDIR, os.strerror(errno.EISDIR), str(p))
    try:
        fd, tmp = tempfile.mkstemp(prefix=f".{p.name}.", suffix=".tmp", dir=folder)
    except OSError as e:
        raise type(e)(e.errno, e.strerror, str(p)) from None
    os.close(fd)
    try:
        write(tmp)
        with open(tmp, "rb") as fh:
            os.fsync(fh.fileno())
        os.chmod(tmp, p.stat().st_mode & 0o7777 if p.exists() else 0o644)
        os.replace(tmp, p)
    except BaseException as e:
        try:
            os.unlink(tmp)
        except FileNotFoundError:
            pass
        if isinstance(e, OSError) and e.filename == tmp and e.errno is not None:
            raise type(e)(e.errno, e.strerror, str(p)) from None
        raise


def atomic_write_text(path: str | os.PathLike, text: str) -> None:
    """Write ``text`` (UTF-8, ``\\n`` line ends) to ``path`` atomically (:func:`atomic_write`)."""
    def write(tmp: str) -> None:
        with open(tmp, "w", encoding="utf-8", newline="\n") as fh:
            fh.write(text)

    atomic_write(path, write)


def finite(x: Any) -> Any:
    """``x`` with every NaN or infinite float as None: JSON has no NaN or infinity."""
    if isinstance(x, float):
        return x if math.isfinite(x) else None
    if isinstance(x, dict):
        return {k: finite(v) for k, v in x.items()}
    if isinstance(x, (list, tuple)):
        return [finite(v) for v in x]
    return x


def dumps(x: Any, indent: int | None = 2) -> str:
    """JSON text of ``x`` with non-finite numbers as null (:func:`finite`), ending in a newline."""
    return json.dumps(finite(x), indent=indent, allow_nan=False) + "\n"
