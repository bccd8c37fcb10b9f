"""Time and peak memory of large jobs: a 16-band x 32-section project checked and exported,
and a 1,000,000-point measurement text file read.

Each job runs in a fresh subprocess (so its peak resident memory is its own), which
reports wall time, the peak of Python allocations (``tracemalloc``) and the process's
peak resident set (``resource.getrusage(RUSAGE_SELF).ru_maxrss``). The baselines run in
the same subprocess, after the job: ``scipy.signal.sosfreqz`` band by band on the
check's own grid (the plain way to get the responses, before any check) and
``numpy.loadtxt`` of the measurement file (the export has no plain-scipy equivalent).
Ratios are baseline / this (above 1: crossplan is faster). tracemalloc slows the job; timings are taken without it
and the allocation peak in a second run.

Run:  python benchmarks/bench_large.py
"""

from __future__ import annotations

import json
import subprocess
import sys
import textwrap
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]


def big_project() -> dict:
    """16 bands x 32 sections: LR8 crossovers (4 sections each side) at 15 frequencies
    from 40 Hz to 16 kHz, and EQ peaks filling each band to 32 sections."""
    import numpy as np

    xo = list(np.geomspace(40.0, 16000.0, 15))
    bands = []
    for i in range(16):
        filters = []
        if i > 0:
            filters.append({"type": "highpass", "family": "linkwitz-riley", "order": 8,
                            "freq": float(xo[i - 1])})
        if i < 15:
            filters.append({"type": "lowpass", "family": "linkwitz-riley", "order": 8,
                            "freq": float(xo[i])})
        lo = xo[i - 1] if i > 0 else 20.0
        hi = xo[i] if i < 15 else 20000.0
        n_eq = 32 - 4 * len(filters)
        for k, f in enumerate(np.geomspace(lo, hi, n_eq)):
            filters.append({"type": "peaking", "freq": float(f), "gain_db": (-1) ** k * 0.5,
                            "q": 4.0})
        bands.append({"name": f"band{i:02d}", "filters": filters})
    return {"format": "crossplan-project", "version": 1, "name": "large", "sample_rate": 48000,
            "analysis": {"f_min": 20, "f_max": 20000, "points": 4096, "flatness_db": 3.0},
            "bands": bands}


CHILD = textwrap.dedent(r"""
    import json, resource, sys, time, tempfile, tracemalloc
    from pathlib import Path
    job, arg = sys.argv[1], sys.argv[2]

    def run():
        if job == "check":
            from planner import engine, project
            p = project.loads(Path(arg).read_text())
            engine.design_project(p)
            r = engine.analyse(p)
            return r
        if job == "export":
            from planner import export, project
            p = project.loads(Path(arg).read_text())
            with tempfile.TemporaryDirectory() as out:
                export.write_export(p, [48000.0, 96000.0], "json", out)
            return None
        if job == "measure":
            from planner.drivers import read_measurement
            return read_measurement(arg)

    # imports first, so that the figures are of the job
    import numpy, scipy.signal
    from planner import engine, export, project, drivers
    t = time.perf_counter(); out = run(); wall = time.perf_counter() - t
    base = None
    if job == "check":
        import numpy as np
        t = time.perf_counter()
        for d in out.designs:
            if len(d.sos):
                scipy.signal.sosfreqz(d.sos, worN=out.freqs_hz, fs=48000)
        base = time.perf_counter() - t
        extra = {"points": int(len(out.freqs_hz)), "sections": sum(d.n_sections for d in out.designs),
                 "ok": bool(out.ok)}
    elif job == "measure":
        import numpy as np
        t = time.perf_counter(); np.loadtxt(arg, comments="#"); base = time.perf_counter() - t
        extra = {"points": int(len(out.freqs_hz))}
    else:
        extra = {}
    rss_mb = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024.0
    if job == "measure":          # a copy: the first read is cached by path, size and time
        import shutil
        arg = shutil.copy(arg, arg + ".copy.txt")
    tracemalloc.start(); run(); peak = tracemalloc.get_traced_memory()[1] / 2**20
    print(json.dumps({"wall_s": wall, "base_s": base, "rss_mb": rss_mb, "py_peak_mb": peak,
                      **extra}))
""")


def child(job: str, arg: str) -> dict:
    out = subprocess.run([sys.executable, "-c", CHILD, job, arg], capture_output=True,
                         text=True, cwd=ROOT, env={"PYTHONPATH": str(ROOT), "PATH": "/usr/bin:/bin",
                                                   "OPENBLAS_NUM_THREADS": "1"}, check=True)
    return json.loads(out.stdout.strip().splitlines()[-1])


def main() -> int:
    import tempfile

    import numpy as np

    from planner.dsp.response_text import format_response_text

    with tempfile.TemporaryDirectory() as tmp:
        pfile = Path(tmp, "large.json")
        pfile.write_text(json.dumps(big_project()))
        f = np.geomspace(5.0, 24000.0, 1_000_000)
        mag = 85.0 - 3.0 * np.log2(f / 1000.0) ** 2 / 20.0
        ph = -90.0 * np.log10(f / 5.0)
        mfile = Path(tmp, "sweep.txt")
        mfile.write_text(format_response_text(f, mag, ph, ["a 1,000,000-point measurement"]))
        size_mb = mfile.stat().st_size / 2**20
        c = child("check", str(pfile))
        print(f"check, 16 bands x 32 sections ({c['sections']} sections, {c['points']} points): "
              f"{c['wall_s'] * 1000:.0f} ms, peak RSS {c['rss_mb']:.0f} MB, Python allocations "
              f"peak {c['py_peak_mb']:.1f} MB; baseline sosfreqz band by band on the grid "
              f"{c['base_s'] * 1000:.0f} ms (ratio {c['base_s'] / c['wall_s']:.2f})")
        e = child("export", str(pfile))
        print(f"export json at 48 and 96 kHz (redesign, re-check, files, manifest): "
              f"{e['wall_s'] * 1000:.0f} ms, peak RSS {e['rss_mb']:.0f} MB, Python allocations "
              f"peak {e['py_peak_mb']:.1f} MB")
        m = child("measure", str(mfile))
        print(f"read a {m['points']:,}-point measurement file ({size_mb:.0f} MB): "
              f"{m['wall_s'] * 1000:.0f} ms, peak RSS {m['rss_mb']:.0f} MB, Python allocations "
              f"peak {m['py_peak_mb']:.1f} MB; baseline numpy.loadtxt {m['base_s'] * 1000:.0f} ms "
              f"(ratio {m['base_s'] / m['wall_s']:.2f})")
    return 0


if __name__ == "__main__":
    sys.exit(main())
