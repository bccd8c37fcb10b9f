"""The process keeps freed memory for its next arrays (planner.memory, glibc only).

Each case runs in a fresh interpreter: the allocator's state depends on what the process
allocated before. The pattern below (three arrays of 2 MB made and freed, twenty times)
is what an analysis does at every keypress; minor page faults (``getrusage``) count the
fresh pages the kernel had to hand out for it.
"""

import json
import os
import platform
import subprocess
import sys
from pathlib import Path

import pytest

ROOT = Path(__file__).parents[1]

glibc = pytest.mark.skipif(not sys.platform.startswith("linux")
                           or platform.libc_ver()[0] != "glibc",
                           reason="the thresholds are glibc's")

_PATTERN = """
import json, resource, sys
import numpy as np
from planner.memory import keep_freed_memory
kept = keep_freed_memory() if sys.argv[1] == "keep" else None
def rounds(n):
    for _ in range(n):
        arrays = [np.ones(1 << 18) for _ in range(3)]      # 3 x 2 MB
        del arrays
rounds(3)                                                  # the allocator settles
before = resource.getrusage(resource.RUSAGE_SELF).ru_minflt
rounds(20)
print(json.dumps({"kept": kept,
                  "faults": resource.getrusage(resource.RUSAGE_SELF).ru_minflt - before}))
"""


def _run(mode: str, **env_set) -> dict:
    env = {k: v for k, v in os.environ.items()
           if not k.startswith("MALLOC_") and k != "GLIBC_TUNABLES"}
    env.update(env_set)
    out = subprocess.run([sys.executable, "-c", _PATTERN, mode], capture_output=True,
                         text=True, cwd=str(ROOT), env=env, timeout=60)
    assert out.returncode == 0, out.stderr
    return json.loads(out.stdout.strip().splitlines()[-1])


@glibc
def test_freed_arrays_are_reused_without_fresh_pages():
    default, kept = _run("default"), _run("keep")
    assert kept["kept"] is True
    # 20 rounds x 6 MB is 30,720 pages of 4 kB; a settled allocator needs none of them.
    # The default one gives the heap's top back at every round and faults them again
    # (more than a tenth of them: how many depends on the kernel's page handling).
    assert kept["faults"] < 200, kept
    assert default["faults"] > 3000, default


@glibc
def test_a_user_setting_of_the_allocator_is_left_alone():
    assert _run("keep", MALLOC_TRIM_THRESHOLD_="1048576")["kept"] is False
    assert _run("keep", GLIBC_TUNABLES="glibc.malloc.mmap_threshold=131072")["kept"] is False


def test_the_console_entry_keeps_freed_memory(monkeypatch, capsys):
    import planner.memory
    from planner import cli

    calls = []
    monkeypatch.setattr(planner.memory, "keep_freed_memory", lambda: calls.append(1) or True)
    monkeypatch.setattr(sys, "argv", ["crossplan", "--version"])
    with pytest.raises(SystemExit) as e:
        cli.console_main()
    assert e.value.code == 0 and calls == [1]
