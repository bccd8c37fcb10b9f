"""The real ``crossplan`` command in a tmux pane of 80x24: keys in, screen text out.

Skipped, saying why, where tmux or the crossplan executable is missing. The
executable is looked for next to the running Python first (the venv's bin),
then on PATH. Every key waits until the screen shows what it needs (the pane
is polled every 0.1 s), and every wait is bounded (20 s, then the test fails
showing the screen).
"""

import json
import shutil
import subprocess
import sys
import time
import uuid
from pathlib import Path

import pytest

from planner import project


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


def _wait_until(name: str, ready, what: str, timeout_s: float = 20.0) -> str:
    """Poll the pane until ``ready(screen)`` holds; fail after ``timeout_s`` with the screen."""
    end = time.monotonic() + timeout_s
    screen = ""
    while time.monotonic() < end:
        screen = _screen(name)
        if ready(screen):
            return screen
        time.sleep(0.1)
    raise AssertionError(f"{what} did not appear within {timeout_s} s; screen:\n{screen}")


def _wait_for(name: str, text: str, timeout_s: float = 20.0) -> str:
    return _wait_until(name, lambda screen: text in screen, repr(text), timeout_s)


def _line(screen: str, start: str) -> str:
    """The first line of ``screen`` that starts with ``start`` ("" if none)."""
    return next((ln for ln in screen.splitlines() if ln.startswith(start)), "")


def _send(name: str, *keys: str, literal: bool = False) -> None:
    _tmux("send-keys", "-t", name, *(["-l"] if literal else []), *keys)


def test_crossplan_in_tmux_edit_save_quit(tmp_path):
    # Each key is sent only once the screen shows that the one before took
    # effect (no fixed sleeps: a loaded machine only makes the waits longer).
    path = tmp_path / "two-way.json"
    project.save(project.load_preset("two-way"), path)
    name = f"crossplan-test-{uuid.uuid4().hex[:8]}"
    cmd = f"cd {tmp_path} && {EXE} two-way.json; echo EXITED-$?; sleep 30"
    _tmux("new-session", "-d", "-s", name, "-x", "80", "-y", "24", cmd)
    try:
        screen = _wait_until(name, lambda s: "Safety first" in s or "━Chain: woofer" in s,
                             "the safety notice or the editor")
        if "Safety first" in screen:                  # the notice at start: any key goes on
            _send(name, "Space")
            # The editor shows around the notice, so wait for the notice itself to go:
            # a key sent before that would reach the notice, not the editor.
            _wait_until(name, lambda s: "Safety first" not in s, "the notice to close")
        _wait_for(name, "sum ")                       # the editor is up and has analysed
        _wait_for(name, "━Chain: woofer")             # ... with the chain focused
        _send(name, "Down")                           # filter 2 of the woofer
        _wait_until(name, lambda s: "Filter 2" in s and "2.4 kHz" in _line(s, "freq"),
                    "the form of filter 2 (LR4 lowpass 2.4 kHz)")
        _send(name, "Enter")                          # into its form, on the freq field
        _wait_for(name, "━Filter 2")
        _send(name, "2.5k", literal=True)
        _wait_until(name, lambda s: "2.5k" in _line(s, "freq"), "2.5k typed in the freq field")
        _send(name, "Enter")
        screen = _wait_until(name, lambda s: "LR4 lowpass 2.5 kHz" in s or "Move them all" in s,
                             "the new label, or the question about the crossover's other side")
        if "Move them all" in screen:                 # the mate question: only this side, n
            _send(name, "n")
        screen = _wait_for(name, "LR4 lowpass 2.5 kHz")
        assert "[modified]" in screen
        _send(name, "C-s")
        _wait_until(name, lambda s: "saved two-way.json" in s and "[modified]" not in s,
                    "'saved two-way.json' with the title no longer [modified]")
        _send(name, "Escape")                         # back to the chain
        _wait_for(name, "━Chain: woofer")
        _send(name, "q")
        _wait_for(name, "EXITED-0")
        saved = json.loads(path.read_text())
        assert saved["bands"][0]["filters"][1]["freq"] == 2500.0
        assert project.load(path).bands[0].filters[1].params["freq"] == 2500.0
    finally:
        _tmux("kill-session", "-t", name, check=False)
