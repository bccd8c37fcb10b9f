"""planner.history: undo and redo of project snapshots."""

import pytest

from planner import edits, project
from planner.history import History


@pytest.fixture
def p0():
    return project.load_preset("two-way")


def test_undo_returns_to_the_previous_snapshot(p0):
    h = History(p0)
    p1 = edits.set_filter_params(p0, 0, 1, freq=2500.0)
    h.push(p1, "freq")
    assert h.undo() == "freq"
    assert h.current is p0


def test_redo_after_undo(p0):
    h = History(p0)
    p1 = edits.toggle_band(p0, 1, "invert")
    h.push(p1, "invert")
    h.undo()
    assert h.redo() == "invert"
    assert h.current is p1


def test_nothing_to_undo_or_redo(p0):
    h = History(p0)
    assert h.undo() is None and h.redo() is None
    assert not h.can_undo and not h.can_redo


def test_push_drops_the_redo_branch(p0):
    h = History(p0)
    h.push(edits.toggle_band(p0, 0, "mute"), "mute")
    h.undo()
    h.push(edits.toggle_band(p0, 0, "solo"), "solo")
    assert not h.can_redo
    assert h.current.bands[0].solo and not h.current.bands[0].mute


def test_dirty_follows_saved_snapshot(p0):
    h = History(p0)
    assert not h.dirty
    h.push(edits.toggle_band(p0, 0, "invert"), "invert")
    assert h.dirty
    h.mark_saved()
    assert not h.dirty
    h.undo()
    assert h.dirty      # the file on disk holds the inverted band
    h.redo()
    assert not h.dirty


def test_limit_drops_the_oldest(p0):
    h = History(p0, limit=2)
    p = p0
    for k in range(4):
        p = edits.toggle_band(p, 0, "invert")
        h.push(p, f"e{k}")
    assert h.undo() == "e3" and h.undo() == "e2"
    assert h.undo() is None


def test_limit_must_be_positive(p0):
    with pytest.raises(ValueError, match=r"limit must be at least 1"):
        History(p0, limit=0)


def test_reset_starts_clean(p0):
    h = History(p0)
    h.push(edits.toggle_band(p0, 0, "invert"), "invert")
    other = project.load_preset("three-way")
    h.reset(other)
    assert h.current is other and not h.dirty and not h.can_undo
