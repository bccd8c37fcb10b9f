"""The editor's file safety: saving against a file changed by someone else, and autosaves.

:class:`FileGuard` holds the fingerprint of the project file taken when it
was read (:func:`planner.project.read`). A save to that file passes it as
``expect``; when another program or editor session changed the file in the
meantime the save is refused (:class:`~planner.errors.ProjectChangedError`)
and a small question asks what to do: overwrite their version, keep theirs
and save this one as ``<name>.mine.json`` beside it, or cancel.

A few seconds after an edit (:data:`planner.autosave.DELAY_S`) the unsaved
project is written as an autosave (:mod:`planner.autosave`); a save, undoing
back to the saved state, or quitting on purpose removes it. When the editor
starts on a file whose autosave is newer than the file, it offers to
restore it (an edit that can be undone). The demo project (no file) has no
autosave.
"""

from __future__ import annotations

import time
from pathlib import Path

from planner import autosave, project as pj
from planner.errors import CrossplanError, ProjectChangedError
from planner.tui.screens import ChoiceScreen

__all__ = ["FileGuard", "mine_path"]


def mine_path(path: str) -> str:
    """Where "keep theirs, save mine" writes: ``speaker.json`` -> ``speaker.mine.json``."""
    p = Path(path)
    return str(p.with_name(f"{p.stem}.mine{p.suffix or '.json'}"))


class FileGuard:
    """Fingerprint, conflict question and autosave of one editor (``app``).

    Parameters
    ----------
    app : CrossplanApp
        The editor: ``app.path``, ``app.project``, ``app.history``, ``app.commit``.
    fingerprint : planner.project.Fingerprint, optional
        Of the file as it was read (:func:`planner.project.read`); when not
        given for a file, it is taken now.
    delay_s : float
        Seconds from the last edit to the autosave.
    """

    def __init__(self, app, fingerprint=None, delay_s: float = autosave.DELAY_S) -> None:
        self.app = app
        if fingerprint is None and app.path is not None:
            fingerprint = pj.fingerprint(app.path)   # not handed over: take it now
        self.fingerprint = fingerprint
        self.loaded_path = app.path if fingerprint is not None else None
        self.delay_s = delay_s
        self._timer = None
        self._warned = False
        self._wrote = False      # this session wrote the autosave now on disk

    # -- saving -----------------------------------------------------------------------------

    def try_write(self, path: str, force: bool = False) -> bool | None:
        """Save to ``path`` now: True when saved, False when it failed (said so), None when
        the file changed on disk since it was read (nothing written; ask, :meth:`write`)."""
        app = self.app
        expect = self.fingerprint if path == self.loaded_path else None
        try:
            fp = pj.save(app.project, path, expect=expect, force=force)
        except ProjectChangedError:
            return None
        except (OSError, CrossplanError) as e:
            app.notify(f"not saved: {e}", severity="error", timeout=6)
            return False
        if app.path:
            autosave.discard(app.path)
        autosave.discard(path)
        self.fingerprint, self.loaded_path = fp, path
        app.path = path
        app.history.mark_saved()
        app._show_title()
        app.notify(f"saved {path}", timeout=3)
        return True

    async def write(self, path: str) -> bool:
        """Save to ``path``; when the file changed on disk, ask (call from a worker)."""
        done = self.try_write(path)
        if done is not None:
            return done
        mine = mine_path(path)
        answer = await self.app.push_screen_wait(ChoiceScreen(
            f"{Path(path).name} changed on disk since it was opened (another program or "
            f"session saved it). Overwrite it with this version, or keep theirs and save "
            f"this one as {Path(mine).name}?",
            [("o", "overwrite", "Overwrite theirs"), ("m", "mine", f"Save as {Path(mine).name}")]))
        if answer == "overwrite":
            return bool(self.try_write(path, force=True))
        if answer == "mine":
            return bool(self.try_write(mine, force=True))
        self.app.notify("not saved", timeout=3)
        return False

    def save(self, path: str) -> None:
        """Save to ``path`` from a plain action: at once, or in a worker when it must ask."""
        if self.try_write(path) is None:
            self.app.run_worker(self.write(path), exclusive=False)

    def opened(self, path: str, opened: "pj.Opened") -> None:
        """A file was opened in place of the current one: its fingerprint and notices."""
        self.fingerprint, self.loaded_path = opened.fingerprint, path
        self.notices(opened.notices)

    def notices(self, lines) -> None:
        for line in lines:
            self.app.notify(line, timeout=10)

    # -- autosave ---------------------------------------------------------------------------

    def edited(self) -> None:
        """The project shown changed (an edit, undo, redo, open): autosave it after the
        delay when it differs from the saved one, else drop the autosave this session
        wrote (one left by an earlier session stays until it is restored or discarded)."""
        app = self.app
        if self._timer is not None:
            self._timer.stop()
            self._timer = None
        if app.path is None:
            return
        if app.history.dirty:
            self._timer = app.set_timer(self.delay_s, self.autosave_now)
        elif self._wrote:
            autosave.discard(app.path)
            self._wrote = False

    def autosave_now(self) -> None:
        """Write the autosave of the unsaved project (a failure is said once)."""
        self._timer = None
        app = self.app
        if app.path is None or not app.history.dirty:
            return
        try:
            autosave.write(app.path, pj.dumps(app.project))
            self._wrote = True
        except OSError as e:
            if not self._warned:
                self._warned = True
                app.notify(f"cannot write an autosave: {e}", severity="warning", timeout=6)

    def closing(self) -> None:
        """Quitting on purpose (saved, or the edits discarded): drop the autosave."""
        if self._timer is not None:
            self._timer.stop()
            self._timer = None
        if self.app.path is not None:
            autosave.discard(self.app.path)

    async def offer_restore(self) -> bool:
        """When the file's autosave is newer than the file, offer to restore it (call from a
        worker); True when it was restored (as an edit: undo takes it back)."""
        app = self.app
        if app.path is None:
            return False
        found = autosave.pending(app.path)
        if found is None:
            return False
        when = time.strftime("%Y-%m-%d %H:%M:%S", time.localtime(found.mtime))
        answer = await app.push_screen_wait(ChoiceScreen(
            f"{Path(app.path).name} has unsaved edits from {when} (an autosave, newer "
            f"than the file). Restore them?",
            [("r", "restore", "Restore"), ("d", "discard", "Discard them")]))
        if answer == "discard":
            autosave.discard(app.path)
            return False
        if answer != "restore":
            return False
        try:
            restored = pj.loads(found.text, Path(app.path).resolve().parent)
        except CrossplanError as e:
            app.notify(f"the autosave cannot be read, kept as {found.path}: {e}",
                       severity="error", timeout=8)
            return False
        await app.commit(restored, "restore the autosave")
        app.notify("restored the autosave (ctrl+z undoes it)", timeout=4)
        return True
