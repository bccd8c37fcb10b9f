"""Writing files so that a crash never leaves a half-written one, and JSON without NaN.

No numpy and no project model here: every writer of crossplan (project
files, exports, measurements, presets) comes through :func:`atomic_write`,
and every JSON it prints through :func:`finite`.

A write goes to a temporary file of the target's own folder, named
``.<target name>.<8 hex digits>.tmp``, which is flushed to disk (``fsync``)
and renamed over the target (an atomic step on POSIX and Windows); the
folder is flushed too, so the rename itself survives a power cut. A writer
killed between the two steps leaves its temporary file behind: the next
write of the same target removes the ones older than
:data:`STALE_TEMP_S` (and only files of exactly that pattern).
:func:`atomic_write_text` with ``backup=True`` (project files) first keeps
the previous version, when there was one and it differs, as
``<target name>.bak`` beside it, written the same atomic way.
"""

from __future__ import annotations

import errno
import json
import math
import os
import re
import secrets
import time
from pathlib import Path
from typing import Any, Callable

__all__ = ["atomic_write", "atomic_write_text", "atomic_write_bytes", "backup_path",
           "stale_temps", "remove_stale_temps", "temp_pattern", "STALE_TEMP_S", "finite",
           "dumps", "os_error_text", "make_folder"]

#: Age in seconds after which a left-over temporary file of a target is removed by the next
#: write of that target. A save takes milliseconds, so a temporary file this old belongs to
#: a writer that died (common practice, no published source, for the exact age).
STALE_TEMP_S = 60.0


def temp_pattern(path: str | os.PathLike) -> re.Pattern:
    """The names of the temporary files :func:`atomic_write` makes for ``path``."""
    return re.compile(r"\." + re.escape(Path(path).name) + r"\.[0-9a-f]{8}\.tmp\Z")


def backup_path(path: str | os.PathLike) -> Path:
    """Where the previous version of ``path`` is kept: ``<name>.bak`` beside it."""
    p = Path(path)
    return p.with_name(p.name + ".bak")


def _folder(p: Path) -> Path:
    return p.parent if str(p.parent) else Path(".")


def stale_temps(path: str | os.PathLike, older_than_s: float = STALE_TEMP_S,
                now: float | None = None) -> list[Path]:
    """Left-over temporary files of ``path`` (:func:`temp_pattern`) older than ``older_than_s``.

    Only regular files whose name matches the pattern exactly are listed;
    a folder that cannot be read gives an empty list.
    """
    p = Path(path)
    pat = temp_pattern(p)
    now = time.time() if now is None else now
    out = []
    try:
        entries = list(os.scandir(_folder(p)))
    except OSError:
        return []
    for e in entries:
        if not pat.match(e.name):
            continue
        try:
            st = e.stat(follow_symlinks=False)
        except OSError:
            continue
        if e.is_file(follow_symlinks=False) and now - st.st_mtime >= older_than_s:
            out.append(Path(e.path))
    return out


def remove_stale_temps(path: str | os.PathLike, older_than_s: float = STALE_TEMP_S) -> int:
    """Remove :func:`stale_temps` of ``path``; return how many were removed (never raises)."""
    n = 0
    for t in stale_temps(path, older_than_s):
        try:
            t.unlink()
            n += 1
        except OSError:
            pass
    return n


def _fsync_folder(folder: Path) -> None:
    """Flush a folder's entries (the rename) to disk where the system allows it (POSIX)."""
    try:
        fd = os.open(folder, os.O_RDONLY | getattr(os, "O_DIRECTORY", 0))
    except OSError:
        return
    try:
        os.fsync(fd)
    except OSError:
        pass
    finally:
        os.close(fd)


def _new_temp(p: Path) -> str:
    folder = _folder(p)
    for _ in range(100):
        tmp = folder / f".{p.name}.{secrets.token_hex(4)}.tmp"
        try:
            fd = os.open(tmp, os.O_WRONLY | os.O_CREAT | os.O_EXCL, 0o600)
        except FileExistsError:
            continue
        os.close(fd)
        return str(tmp)
    raise FileExistsError(f"no free temporary name beside {str(p)!r}")


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
    either the old file or the new one; then the folder is flushed. It keeps
    the old file's permissions (0644 for a new one); on any failure the
    temporary file is removed and the error raised. Stale temporary files of
    ``path`` left by a writer that was killed are removed first
    (:func:`remove_stale_temps`). A file-system error (:class:`OSError`) is
    raised again naming ``path`` (not the temporary file), as a folder where
    the file should be (:class:`IsADirectoryError`) when ``path`` is one.
    """
    p = Path(path)
    if p.is_dir():
        raise IsADirectoryError(errno.EISDIR, os.strerror(errno.EISDIR), str(p))
    remove_stale_temps(p)
    try:
        tmp = _new_temp(p)
    except OSError as e:
        raise type(e)(e.errno, e.strerror, str(p)) from None
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
    _fsync_folder(_folder(p))


def atomic_write_bytes(path: str | os.PathLike, data: bytes, backup: bool = False) -> None:
    """Write ``data`` to ``path`` atomically (:func:`atomic_write`).

    With ``backup``, the file ``path`` held before (when it existed and
    differs from ``data``) is first kept as :func:`backup_path`, written
    atomically too, so a crash at any moment leaves ``path`` whole (old or
    new) and the backup whole (the version before, or the one before that).
    """
    p = Path(path)
    if backup:
        try:
            old = p.read_bytes()
        except (FileNotFoundError, IsADirectoryError, NotADirectoryError):
            old = None
        if old is not None and old != data:
            atomic_write_bytes(backup_path(p), old)

    def write(tmp: str) -> None:
        with open(tmp, "wb") as fh:
            fh.write(data)

    atomic_write(p, write)


def atomic_write_text(path: str | os.PathLike, text: str, backup: bool = False) -> None:
    """Write ``text`` (UTF-8, ``\\n`` line ends) to ``path`` atomically (:func:`atomic_write`);
    ``backup`` keeps the previous version (:func:`atomic_write_bytes`)."""
    atomic_write_bytes(path, text.encode("utf-8"), backup=backup)


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
