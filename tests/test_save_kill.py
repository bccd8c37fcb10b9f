"""Saving survives being killed at any moment: the file is always the old or the new project.

A child process saves two versions of a project in turn, as fast as it can, through the
same writer :func:`planner.project.save` uses (:func:`planner.jsonio.atomic_write_bytes`
with a backup); it imports only :mod:`planner.jsonio`. It is killed with SIGKILL at random
moments a few hundred times. After every
kill the project file, and its backup, must be exactly one of the two versions (never a
mix, never empty) and load as that project. Temporary files left by the kills are removed
by the next save once they are stale, and no other file is touched.
"""

import os
import random
import signal
import subprocess
import sys
import time
from pathlib import Path

import pytest

from planner import jsonio, project

ROOT = Path(__file__).resolve().parents[1]
KILLS = 300

# A small fork server: it imports the writer once, then for each "go" on its input forks a
# writer that saves the two versions in turn until it is killed, and prints the writer's pid;
# for each "wait" it reaps the killed writer. Forking costs about a millisecond where a new
# interpreter costs 50 ms or more, so a few hundred kills take a few seconds.
CHILD = r"""
import os, sys
from planner.jsonio import atomic_write_bytes
target, a, b = sys.argv[1:4]
texts = [open(a, "rb").read(), open(b, "rb").read()]
for line in sys.stdin:
    if line.strip() == "wait":
        os.waitpid(pid, 0)
        print("reaped", flush=True)
        continue
    pid = os.fork()
    if pid == 0:
        i = 0
        while True:
            atomic_write_bytes(target, texts[i % 2], backup=True)
            i += 1
    print(pid, flush=True)
"""


def _versions():
    """Two versions of a large project (40 bands), so that a write takes a while."""
    base = project.load_preset("three-way")
    bands = [b.__class__(name=f"band{i}", gain_db=-0.5 * (i % 7), filters=b.filters)
             for i in range(40) for b in base.bands[:1]]
    a = project.dumps(base.__class__(name="A", sample_rate=base.sample_rate,
                                     bands=tuple(bands), analysis=base.analysis))
    b = a.replace('"name": "A"', '"name": "B"').replace('"gain_db": -0.5', '"gain_db": -1.5')
    assert a != b
    return a.encode(), b.encode()


def _check(target, a, b, pa, pb, seen):
    data = target.read_bytes()
    assert data in (a, b), "the project file is neither version"
    seen[data] += 1
    assert project.loads(data.decode()) == (pa if data == a else pb)
    bak = jsonio.backup_path(target)
    if bak.exists():
        assert bak.read_bytes() in (a, b), "the backup is neither version"


@pytest.mark.skipif(not hasattr(os, "fork") or not hasattr(signal, "SIGKILL"),
                    reason="needs fork and SIGKILL (POSIX)")
def test_save_killed_at_random_moments_leaves_old_or_new(tmp_path):
    a, b = _versions()
    pa, pb = project.loads(a.decode()), project.loads(b.decode())
    (tmp_path / "a.txt").write_bytes(a)
    (tmp_path / "b.txt").write_bytes(b)
    target = tmp_path / "speaker.json"
    target.write_bytes(a)
    env = {**os.environ, "PYTHONPATH": str(ROOT)}
    rng = random.Random(1234)
    seen = {a: 0, b: 0}
    server = subprocess.Popen([sys.executable, "-S", "-c", CHILD, str(target),
                               str(tmp_path / "a.txt"), str(tmp_path / "b.txt")],
                              stdin=subprocess.PIPE, stdout=subprocess.PIPE, text=True,
                              env=env, cwd=tmp_path)
    try:
        for _ in range(KILLS):
            server.stdin.write("go\n")
            server.stdin.flush()
            pid = int(server.stdout.readline())
            time.sleep(rng.uniform(0, 0.008))
            os.kill(pid, signal.SIGKILL)       # the writer this test started, by its pid
            server.stdin.write("wait\n")
            server.stdin.flush()
            assert server.stdout.readline() == "reaped\n"
            _check(target, a, b, pa, pb, seen)
    finally:
        server.stdin.close()
        server.wait(timeout=10)
    # The kills landed at different moments: both versions were left on disk.
    assert seen[a] > 0 and seen[b] > 0, seen

    # Stray temporary files (a kill between creating and renaming) are cleaned by the next
    # save once stale; a young one (a writer still at work) and other files stay.
    strays = [f for f in tmp_path.iterdir() if jsonio.temp_pattern(target).match(f.name)]
    assert strays, "no kill landed inside a write: the test did not exercise the window"
    old = time.time() - 3600
    for f in strays:
        os.utime(f, (old, old))
    young = tmp_path / ".speaker.json.0123abcd.tmp"
    young.write_text("a save at work")
    others = [tmp_path / ".speaker.json.notours.tmp", tmp_path / ".other.json.89abcdef.tmp",
              tmp_path / "speaker.json.tmp"]
    for f in others:
        f.write_text("not ours")
        os.utime(f, (old, old))
    project.save(pb, target)
    left = [f for f in tmp_path.iterdir() if jsonio.temp_pattern(target).match(f.name)]
    assert left == [young]
    assert all(f.exists() for f in others)
    assert project.load(target) == pb
    print(f"{KILLS} kills: old/new left {seen[a]}/{seen[b]} times, {len(strays)} stray "
          "temporary files, all removed by the next save")
