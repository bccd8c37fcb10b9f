"""Writing files so that a crash never leaves a half-written one, and JSON without NaN.

No numpy and no project model here: every writer of crossplan (project
files, exports, measurements, presets) comes through :func:`atomic_write`,
and every JSON it prints through :func:`finite`.
"""

from __future__ import annotations

import json
import math
import os
import tempfile
from pathlib import Path
from typing import Any, Callable

__all__ = ["atomic_write", "atomic_write_text", "finite", "dumps"]


def atomic_write(path: str | os.PathLike, write: Callable[[str], None]) -> None:
    """Make ``path`` by ``write(tmp)`` into a temporary file of the same folder, then rename.

    The temporary file is flushed to disk (``fsync``) and renamed over
    ``path``, an atomic step on POSIX and Windows, so ``path`` is always
    either the old file or the new one. It keeps the old file's permissions
    (0644 for a new one); on any failure the temporary file is removed and
    the error raised.
    """
    p = Path(path)
    folder = p.parent if str(p.parent) else Path(".")
    fd, tmp = tempfile.mkstemp(prefix=f".{p.name}.", suffix=".tmp", dir=folder)
    os.close(fd)
    try:
        write(tmp)
        with open(tmp, "rb") as fh:
            os.fsync(fh.fileno())
        os.chmod(tmp, p.stat().st_mode & 0o7777 if p.exists() else 0o644)
        os.replace(tmp, p)
    except BaseException:
        try:
            os.unlink(tmp)
        except FileNotFoundError:
            pass
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
