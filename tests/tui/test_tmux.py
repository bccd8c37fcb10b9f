"""The real ``crossplan`` command in a tmux pane of 80x24: keys in, screen text out.

Skipped, saying why, where tmux or the crossplan executable is missing. The
executable is looked for next to the running Python first (the venv's bin),
then on PATH. Every wait is bounded.
"""

import json
import shutil
import subprocess
import sys
import time
import uuid
from pathlib import Path

import pytest

from planner import presets_lib, project


def _crossplan() -> str | None:
    here = Path(sys.executable).parent / "crossplan"
    if here.is_file():
        return str(here)
    return shutil.which("crossplan")


TMUX = shutil.which("tmux")
EXE = _crossplan()

pytestmark = [
    pytest.mark.skipif(TMUX is None, reason="tmux is not installed (.ci/run installs it)"),
    pytest.mark.skipif(EXE is None, reason="no crossplan executable next to sys.executable "
                       f"({Path(sys.executable).parent}) nor on PATH; install the package"),
]


def _tmux(*args, check=True):
    return subprocess.run([TMUX, *args], capture_output=True, text=True, check=check, timeout=10)


def _screen(name: str) -> str:
    return _tmux("capture-pane", "-p", "-t", name).stdout


def _wait_for(name: str, text: str, timeout_s: float = 15.0) -> str:
    end = time.monotonic() + timeout_s
    screen = ""
    while time.monotonic() < end:
        screen = _screen(name)
        if text in screen:
            return screen
        time.sleep(0.2)
    raise AssertionError(f"{text!r} did not appear within {timeout_s} s; screen:\n{screen}")


def test_crossplan_in_tmux_edit_save_quit(tmp_path):
    path = tmp_path / "two-way.json"
    project.save(presets_lib.load("two-way"), path)
    name = f"crossplan-test-{uuid.uuid4().hex[:8]}"
    cmd = f"cd {tmp_path} && {EXE} two-way.json; echo EXITED-$?; sleep 30"
    _tmux("new-session", "-d", "-s", name, "-x", "80", "-y", "24", cmd)
    try:
        _wait_for(name, "sum ")                       # the editor is up and has analysed
        for key in ("Down", "Enter"):                  # filter 2 of the woofer, its freq field
            _tmux("send-keys", "-t", name, key)
            time.sleep(0.3)
        _tmux("send-keys", "-t", name, "-l", "2.5k")
        _tmux("send-keys", "-t", name, "Enter")
        screen = _wait_for(name, "LR4 lowpass 2.5 kHz")
        assert "[modified]" in screen
        _tmux("send-keys", "-t", name, "C-s")
        _wait_for(name, "saved two-way.json")
        _tmux("send-keys", "-t", name, "Escape")
        time.sleep(0.3)
        _tmux("send-keys", "-t", name, "q")
        _wait_for(name, "EXITED-0")
        saved = json.loads(path.read_text())
        assert saved["bands"][0]["filters"][1]["freq"] == 2500.0
        assert project.load(path).bands[0].filters[1].params["freq"] == 2500.0
    finally:
        _tmux("kill-session", "-t", name, check=False)
