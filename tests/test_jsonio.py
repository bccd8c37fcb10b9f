"""Atomic writes: the backup of the previous version and the cleaning of stale temporary files."""

import os
import time

import pytest

from planner import jsonio


def test_backup_keeps_the_previous_version(tmp_path):
    p = tmp_path / "p.json"
    jsonio.atomic_write_text(p, "one\n", backup=True)
    assert not jsonio.backup_path(p).exists()          # no previous version: no backup
    jsonio.atomic_write_text(p, "two\n", backup=True)
    assert jsonio.backup_path(p).read_text() == "one\n"
    assert p.read_text() == "two\n"


def test_backup_is_one_file_the_version_before(tmp_path):
    p = tmp_path / "p.json"
    for text in ("one\n", "two\n", "three\n"):
        jsonio.atomic_write_text(p, text, backup=True)
    assert jsonio.backup_path(p).read_text() == "two\n"
    assert sorted(f.name for f in tmp_path.iterdir()) == ["p.json", "p.json.bak"]


def test_saving_the_same_bytes_keeps_the_older_backup(tmp_path):
    p = tmp_path / "p.json"
    jsonio.atomic_write_text(p, "one\n", backup=True)
    jsonio.atomic_write_text(p, "two\n", backup=True)
    jsonio.atomic_write_text(p, "two\n", backup=True)   # unchanged: the backup stays "one"
    assert jsonio.backup_path(p).read_text() == "one\n"


def test_no_backup_unless_asked(tmp_path):
    p = tmp_path / "p.json"
    jsonio.atomic_write_text(p, "one\n")
    jsonio.atomic_write_text(p, "two\n")
    assert not jsonio.backup_path(p).exists()


def test_write_keeps_permissions(tmp_path):
    p = tmp_path / "p.json"
    p.write_text("x")
    os.chmod(p, 0o600)
    jsonio.atomic_write_text(p, "y", backup=True)
    assert p.stat().st_mode & 0o777 == 0o600


def test_temp_files_are_in_the_same_folder_and_named_after_the_target(tmp_path, monkeypatch):
    made = []
    real = os.replace

    def spy(src, dst):
        made.append((src, dst))
        real(src, dst)

    monkeypatch.setattr(os, "replace", spy)
    jsonio.atomic_write_text(tmp_path / "p.json", "x")
    (src, dst), = made
    assert os.path.dirname(src) == str(tmp_path)
    assert jsonio.temp_pattern(dst).match(os.path.basename(src))


def test_each_write_is_flushed_to_disk(tmp_path, monkeypatch):
    synced = []
    real = os.fsync
    monkeypatch.setattr(os, "fsync", lambda fd: (synced.append(fd), real(fd)))
    jsonio.atomic_write_text(tmp_path / "p.json", "x")
    assert len(synced) >= 2          # the file, then the folder


def _age(path, seconds):
    t = time.time() - seconds
    os.utime(path, (t, t))


def test_stale_temps_of_the_target_only_are_removed(tmp_path):
    p = tmp_path / "p.json"
    stale = tmp_path / ".p.json.0a1b2c3d.tmp"
    young = tmp_path / ".p.json.4e5f6a7b.tmp"
    foreign = [tmp_path / ".p.json.zzzzzzzz.tmp", tmp_path / ".q.json.0a1b2c3d.tmp",
               tmp_path / ".p.json.bak.0a1b2c3d.tmp", tmp_path / "p.json.0a1b2c3d.tmp"]
    for f in [stale, young, *foreign]:
        f.write_text("left over")
    for f in [stale, *foreign]:
        _age(f, 3600)
    jsonio.atomic_write_text(p, "x")
    assert not stale.exists()
    assert young.exists() and all(f.exists() for f in foreign)


def test_a_folder_named_like_a_temp_is_left_alone(tmp_path):
    d = tmp_path / ".p.json.0a1b2c3d.tmp"
    d.mkdir()
    _age(d, 3600)
    jsonio.atomic_write_text(tmp_path / "p.json", "x")
    assert d.is_dir()


def test_failed_write_leaves_no_temp_and_the_old_file(tmp_path):
    p = tmp_path / "p.json"
    p.write_text("old")

    def write(tmp):
        raise OSError("disk full")

    with pytest.raises(OSError, match="disk full"):
        jsonio.atomic_write(p, write)
    assert [f.name for f in tmp_path.iterdir()] == ["p.json"] and p.read_text() == "old"
