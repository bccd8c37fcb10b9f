"""Autosaves of unsaved edits: where they live, writing them, finding one to restore.

Text in, text out (no project model, no UI), on the layer of :mod:`planner.jsonio`:
the editor hands over the project's JSON text a few seconds after an edit
(:data:`DELAY_S`) and removes the autosave when the work is saved or
deliberately discarded. An autosave that outlives the editor (a crash, a
killed terminal, a lost SSH connection) is offered back the next time the
file is opened, when it is newer than the file and differs from it.

The autosave of ``speaker.json`` is ``.speaker.json.autosave`` beside it,
written atomically (:func:`planner.jsonio.atomic_write_text`). Where that
folder cannot be written, it goes to the user's state folder instead
(``$XDG_STATE_HOME/crossplan/autosave``, default ``~/.local/state``), under
a name made from the file's full path.
"""

from __future__ import annotations

import hashlib
import os
from dataclasses import dataclass
from pathlib import Path

from planner.jsonio import atomic_write_text

__all__ = ["DELAY_S", "beside_path", "state_path", "write", "find", "Pending", "pending",
           "discard"]

#: Seconds between the last edit and the autosave (common practice, no published source:
#: short enough to lose little, long enough not to write on every key press).
DELAY_S = 3.0


def beside_path(path: str | os.PathLike) -> Path:
    """The autosave beside the file: ``.<name>.autosave``."""
    p = Path(path)
    return p.with_name(f".{p.name}.autosave")


def state_path(path: str | os.PathLike) -> Path:
    """The autosave in the user's state folder, for a file whose folder cannot be written."""
    base = os.environ.get("XDG_STATE_HOME") or os.path.join(os.path.expanduser("~"), ".local",
                                                            "state")
    full = os.path.abspath(os.fspath(path))
    tag = hashlib.sha256(full.encode("utf-8", "surrogateescape")).hexdigest()[:16]
    return Path(base) / "crossplan" / "autosave" / f"{Path(full).name}.{tag}.autosave"


def write(path: str | os.PathLike, text: str) -> Path:
    """Write the autosave of ``path`` (atomically) and return where it went.

    Beside the file when its folder can be written, else in the state
    folder (:func:`state_path`); a copy in the other place is removed, so
    there is one autosave per file.

    Raises
    ------
    OSError
        When neither place can be written.
    """
    here, there = beside_path(path), state_path(path)
    try:
        atomic_write_text(here, text)
    except OSError:
        there.parent.mkdir(parents=True, exist_ok=True)
        atomic_write_text(there, text)
        here, there = there, here
    try:
        there.unlink()
    except OSError:
        pass
    return here


def find(path: str | os.PathLike) -> Path | None:
    """The autosave of ``path`` if there is one (beside it first, then the state folder)."""
    for p in (beside_path(path), state_path(path)):
        if p.is_file():
            return p
    return None


@dataclass(frozen=True)
class Pending:
    """An autosave worth offering: where it is, when it was written (s) and its text."""

    path: Path
    mtime: float
    text: str


def pending(path: str | os.PathLike) -> Pending | None:
    """The autosave of ``path`` when it is newer than the file and differs from it, else None.

    An autosave older than the file (the file was saved since, perhaps by
    another session) is not offered, and not removed either.
    """
    a = find(path)
    if a is None:
        return None
    try:
        st = a.stat()
        text = a.read_text(encoding="utf-8")
    except (OSError, UnicodeDecodeError):
        return None
    try:
        fst = os.stat(path)
        with open(path, encoding="utf-8") as fh:
            current = fh.read()
    except (OSError, UnicodeDecodeError):
        return Pending(a, st.st_mtime, text)      # the file is gone or unreadable: offer it
    if st.st_mtime_ns <= fst.st_mtime_ns or text == current:
        return None
    return Pending(a, st.st_mtime, text)


def discard(path: str | os.PathLike) -> None:
    """Remove the autosave of ``path`` wherever it is (nothing happens if there is none)."""
    for p in (beside_path(path), state_path(path)):
        try:
            p.unlink()
        except OSError:
            pass
