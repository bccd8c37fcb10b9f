"""Writing files so that a crash never leaves a half-written one (no numpy, no project model)."""

from __future__ import annotations

import os
import tempfile
from pathlib import Path

__all__ = ["atomic_write_text"]


def atomic_write_text(path: str | os.PathLike, text: str) -> None:
    """Write ``text`` to ``path`` so that a crash never leaves a half-written file.

    The text goes to a temporary file in the same folder, is flushed to disk,
    and is then renamed over ``path`` (an atomic step on POSIX and Windows).
    """
    p = Path(path)
    folder = p.parent if str(p.parent) else Path(".")
    fd, tmp = tempfile.mkstemp(prefix=f".{p.name}.", suffix=".tmp", dir=folder)
    try:
        with os.fdopen(fd, "w", encoding="utf-8", newline="\n") as fh:
            fh.write(text)
            fh.flush()
            os.fsync(fh.fileno())
        if p.exists():
            os.chmod(tmp, p.stat().st_mode & 0o7777)
        else:
            os.chmod(tmp, 0o644)
        os.replace(tmp, p)
    except BaseException:
        try:
            os.unlink(tmp)
        except FileNotFoundError:
            pass
        raise
