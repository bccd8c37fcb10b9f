"""Start-up time of the command line, against a bare interpreter and the numerical imports.

Wall time of fresh processes (best of several runs, so that a busy machine
shows less), each against two baselines measured alongside:

* ``python -c pass``: the interpreter alone;
* ``python -c "import numpy, scipy.signal"``: the numerical core's imports.

Commands: ``python -m planner --help``, ``presets``, ``check --help`` (these
import neither numpy nor scipy), ``check FILE`` on the ``two-way`` preset (which
designs: numpy, and no scipy.signal for its Butterworth, Linkwitz-Riley and EQ
filters; ``python -c "import numpy"`` is timed beside it), and the same with a
Bessel pair (whose prototype imports scipy.signal). Also ``check FILE`` with numpy
and scipy.signal imported before planner's own modules (``-c "import numpy,
scipy.signal; ..."``), what the check cost before it left scipy.signal out.

planner's own modules are compiled to bytecode first (``compileall``, into the
``__pycache__`` folders git ignores), as pip does when it installs the package: without
it (``PYTHONDONTWRITEBYTECODE`` set, as on some machines), every run compiles about 100
modules from source, some 0.3 s that an installed ``crossplan`` never spends.

Run:  python benchmarks/bench_startup.py [RUNS]
"""

from __future__ import annotations

import os

# One BLAS thread unless set (as the crossplan command does; see DEVELOPERS.md), before numpy.
for _var in ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ.setdefault(_var, "1")

import subprocess
import sys
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
PRESET = ROOT / "presets" / "two-way.json"
PY = sys.executable
BESSEL = Path(__import__("tempfile").gettempdir()) / "crossplan-bench-bessel.json"


def wall(argv: list[str], runs: int) -> float:
    """Best wall time (s) of ``runs`` fresh processes running ``argv``."""
    best = float("inf")
    for _ in range(runs):
        t = time.perf_counter()
        subprocess.run(argv, cwd=ROOT, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL,
                       check=False)
        best = min(best, time.perf_counter() - t)
    return best


def main() -> None:
    runs = int(sys.argv[1]) if len(sys.argv) > 1 else 7
    import compileall

    compileall.compile_dir(ROOT / "planner", quiet=1)
    # The two-way preset with its Linkwitz-Riley pair made Bessel: its prototype needs
    # scipy.signal, imported when first designed (planner.lazyimport).
    import json

    d = json.loads(PRESET.read_text())
    for band in d["bands"]:
        for f in band["filters"]:
            if f.get("family") == "linkwitz-riley":
                f["family"] = "bessel"
    BESSEL.write_text(json.dumps(d))
    main_c = "from planner.cli import main; import sys; sys.exit(main(sys.argv[1:]))"
    cases = [
        ("python -c pass", [PY, "-c", "pass"]),
        ("python -c 'import numpy, scipy.signal'", [PY, "-c", "import numpy, scipy.signal"]),
        ("crossplan --help", [PY, "-m", "planner", "--help"]),
        ("crossplan presets", [PY, "-m", "planner", "presets"]),
        ("crossplan check --help", [PY, "-m", "planner", "check", "--help"]),
        ("python -c 'import numpy'", [PY, "-c", "import numpy"]),
        ("crossplan check two-way.json", [PY, "-m", "planner", "check", str(PRESET)]),
        ("  the same, numpy + scipy.signal first",
         [PY, "-c", "import numpy, scipy.signal; " + main_c, "check", str(PRESET)]),
        ("crossplan check, Bessel crossover", [PY, "-m", "planner", "check", str(BESSEL)]),
    ]
    times = {}
    # Interleave the cases run by run, so that a change in load hits all alike.
    for _ in range(runs):
        for name, argv in cases:
            times[name] = min(times.get(name, float("inf")), wall(argv, 1))
    bare, core = times[cases[0][0]], times[cases[1][0]]
    print(f"best of {runs} runs each; ratios to the interpreter alone and to its numpy + "
          "scipy.signal import")
    for name, _ in cases:
        t = times[name]
        print(f"{name:<42} {t * 1e3:7.1f} ms   {t / bare:5.2f}x bare   {t / core:5.2f}x numpy+scipy")


if __name__ == "__main__":
    main()
