"""The ``crossplan`` entry points ask for one BLAS/OpenMP thread, unless the user set a count.

The thread count of OpenBLAS, OpenMP and MKL is read from the environment
when the library loads, so the entry modules set it before numpy is imported
(``os.environ.setdefault``: a value the user set wins). Each case runs in a
fresh interpreter, because this test process has numpy loaded already.
"""

import json
import os
import subprocess
import sys
from pathlib import Path

import pytest

ROOT = Path(__file__).parents[2]
VARS = ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS", "MKL_NUM_THREADS")

# Imports the console entry's module, then reports the variables and whether
# numpy was loaded before they were set (it must not be).
_IMPORT_CLI = """
import json, os, sys
import planner.cli
print(json.dumps({v: os.environ.get(v) for v in %r} | {'numpy': 'numpy' in sys.modules}))
""" % (VARS,)

# Runs ``python -m planner --version`` in-process (planner/__main__.py), then reports.
_RUN_MAIN = """
import contextlib, io, json, os, runpy, sys
sys.argv = ['crossplan', '--version']
with contextlib.redirect_stdout(io.StringIO()):
    try:
        runpy.run_module('planner', run_name='__main__')
    except SystemExit:
        pass
print(json.dumps({v: os.environ.get(v) for v in %r}))
""" % (VARS,)


def _run(code: str, **env_set: str) -> dict:
    env = {k: v for k, v in os.environ.items() if k not in VARS}
    env.update(env_set)
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True,
                         cwd=str(ROOT), env=env, timeout=60)
    assert out.returncode == 0, out.stderr
    return json.loads(out.stdout.strip().splitlines()[-1])


@pytest.mark.parametrize("code", [_IMPORT_CLI, _RUN_MAIN], ids=["planner.cli", "python -m"])
def test_one_thread_when_unset(code):
    d = _run(code)
    assert all(d[v] == "1" for v in VARS), d


def test_thread_counts_are_set_before_numpy_loads():
    # Set after numpy loaded, they would have no effect on its BLAS.
    assert _run(_IMPORT_CLI)["numpy"] is False


@pytest.mark.parametrize("code", [_IMPORT_CLI, _RUN_MAIN], ids=["planner.cli", "python -m"])
def test_a_count_the_user_set_is_kept(code):
    d = _run(code, OPENBLAS_NUM_THREADS="2", OMP_NUM_THREADS="3", MKL_NUM_THREADS="4")
    assert (d["OPENBLAS_NUM_THREADS"], d["OMP_NUM_THREADS"], d["MKL_NUM_THREADS"]) == (
        "2", "3", "4")
