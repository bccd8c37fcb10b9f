"""Undo and redo: a stack of project snapshots (projects are frozen, so a snapshot is free).

Use::

    h = History(p0)
    h.push(p1, "set woofer lowpass freq")
    h.undo()          # -> "set woofer lowpass freq"; h.current is p0 again
    h.redo()
"""

from __future__ import annotations

from planner.model import Project

__all__ = ["History"]


class History:
    """Snapshots of a project with a position, and which snapshot was last saved.

    Parameters
    ----------
    project : Project
        The starting project (taken as saved).
    limit : int
        Most edits kept for undo; the oldest are dropped beyond it.
    """

    def __init__(self, project: Project, limit: int = 1000):
        if limit < 1:
            raise ValueError(f"limit must be at least 1, not {limit!r}")
        self._items: list[tuple[Project, str]] = [(project, "open")]
        self._pos = 0
        self._limit = limit
        self._saved: Project | None = project

    @property
    def current(self) -> Project:
        """The project as it is now."""
        return self._items[self._pos][0]

    @property
    def can_undo(self) -> bool:
        return self._pos > 0

    @property
    def can_redo(self) -> bool:
        return self._pos < len(self._items) - 1

    def push(self, project: Project, label: str) -> None:
        """Record an edit that made ``project``; anything that could be redone is dropped."""
        del self._items[self._pos + 1:]
        self._items.append((project, label))
        if len(self._items) > self._limit + 1:
            del self._items[0]
        self._pos = len(self._items) - 1

    def undo(self) -> str | None:
        """Step back one edit; return its label (None when there is nothing to undo)."""
        if not self.can_undo:
            return None
        label = self._items[self._pos][1]
        self._pos -= 1
        return label

    def redo(self) -> str | None:
        """Step forward one edit; return its label (None when there is nothing to redo)."""
        if not self.can_redo:
            return None
        self._pos += 1
        return self._items[self._pos][1]

    def reset(self, project: Project) -> None:
        """Start again from ``project`` (a file was opened), taken as saved."""
        self._items = [(project, "open")]
        self._pos = 0
        self._saved = project

    def mark_saved(self) -> None:
        """The current project has just been written to its file."""
        self._saved = self.current

    @property
    def dirty(self) -> bool:
        """Whether the current project differs from the one last saved (or opened)."""
        cur = self.current
        return not (cur is self._saved or (self._saved is not None and cur == self._saved))
