"""Autosaves: where they go, when one is offered back, and their removal."""

import os
import time

import pytest

from planner import autosave


@pytest.fixture(autouse=True)
def state_home(tmp_path, monkeypatch):
    monkeypatch.setenv("XDG_STATE_HOME", str(tmp_path / "state"))


def _touch(path, t):
    os.utime(path, (t, t))


def test_autosave_goes_beside_the_file(tmp_path):
    f = tmp_path / "p.json"
    f.write_text("saved")
    where = autosave.write(f, "edited")
    assert where == tmp_path / ".p.json.autosave" and where.read_text() == "edited"


def test_a_newer_different_autosave_is_pending(tmp_path):
    f = tmp_path / "p.json"
    f.write_text("saved")
    _touch(f, time.time() - 60)
    autosave.write(f, "edited")
    p = autosave.pending(f)
    assert p is not None and p.text == "edited"


def test_an_autosave_older_than_the_file_is_not_offered_nor_removed(tmp_path):
    f = tmp_path / "p.json"
    f.write_text("saved")
    a = autosave.write(f, "edited")
    _touch(a, time.time() - 60)
    assert autosave.pending(f) is None and a.exists()


def test_an_autosave_equal_to_the_file_is_not_offered(tmp_path):
    f = tmp_path / "p.json"
    f.write_text("same")
    _touch(f, time.time() - 60)
    autosave.write(f, "same")
    assert autosave.pending(f) is None


def test_an_autosave_of_a_file_that_is_gone_is_offered(tmp_path):
    f = tmp_path / "p.json"
    autosave.write(f, "edited")
    assert autosave.pending(f).text == "edited"


def test_discard_removes_it(tmp_path):
    f = tmp_path / "p.json"
    autosave.write(f, "edited")
    autosave.discard(f)
    assert autosave.find(f) is None and not autosave.beside_path(f).exists()


def test_an_unwritable_folder_sends_it_to_the_state_folder(tmp_path, monkeypatch):
    # Root can write into read-only folders, so the refusal is made here.
    f = tmp_path / "p.json"
    real = autosave.atomic_write_text

    def refuse_beside(path, text):
        if path == autosave.beside_path(f):
            raise PermissionError(13, "Permission denied", str(path))
        real(path, text)

    monkeypatch.setattr(autosave, "atomic_write_text", refuse_beside)
    where = autosave.write(f, "edited")
    assert where == autosave.state_path(f) and where.read_text() == "edited"
    assert autosave.pending(f).text == "edited"


@pytest.mark.skipif(hasattr(os, "geteuid") and os.geteuid() == 0,
                    reason="root writes into read-only folders")
def test_a_read_only_folder_sends_it_to_the_state_folder(tmp_path):
    d = tmp_path / "ro"
    d.mkdir()
    f = d / "p.json"
    f.write_text("saved")
    os.chmod(d, 0o555)
    try:
        where = autosave.write(f, "edited")
        assert where == autosave.state_path(f)
        assert str(where).startswith(str(tmp_path / "state"))
        assert autosave.find(f) == where
    finally:
        os.chmod(d, 0o755)


def test_state_path_differs_for_files_of_the_same_name(tmp_path):
    assert autosave.state_path(tmp_path / "a" / "p.json") != \
        autosave.state_path(tmp_path / "b" / "p.json")


def test_writing_beside_removes_a_copy_in_the_state_folder(tmp_path):
    f = tmp_path / "p.json"
    s = autosave.state_path(f)
    s.parent.mkdir(parents=True)
    s.write_text("older copy")
    autosave.write(f, "edited")
    assert not s.exists() and autosave.find(f) == autosave.beside_path(f)
