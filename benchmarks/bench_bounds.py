"""Time and peak memory of the worst cases a project may ask for (the bounds of planner.config).

Each case runs ``crossplan check`` (or one FIR design) in a fresh process and reads
that process's peak resident memory from ``os.wait4``; each has a plain-scipy
baseline run the same way (a fresh process doing the bare scipy calls of the
same size), and the ratio crossplan / baseline is printed for time. The cases:

- 64 bands (config.MAX_BANDS): a chain of LR4 bandpasses, 64 overlapping
  8th-order Butterworth lowpasses (every pair crosses), and 64 bands of 32
  peaking filters each; baseline ``scipy.signal.sosfreqz`` of every band on the
  project's grid size;
- the same 64-band projects at the most points 64 bands may have
  (config.max_points(64) = 4161), and 2 bands at config.MAX_POINTS;
- FIR searches at each method's longest design (config.FIR_MAX_TAPS): least
  squares and remez asked for a 5 Hz transition they cannot meet within the
  limit, and specs that need close to the limit; a 32767-tap window design;
  baselines one ``scipy.signal.firls`` / ``remez`` / ``firwin`` call at the limit.

Run:  python benchmarks/bench_bounds.py     (several minutes: the FIR cases are long)
"""

from __future__ import annotations

import json
import os
import subprocess
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
FS = 48000


def _run(args: list[str]) -> tuple[float, float, int]:
    """(wall seconds, peak RSS in MB, exit code) of a fresh process."""
    env = dict(os.environ, PYTHONPATH=str(ROOT), OPENBLAS_NUM_THREADS="1")
    t0 = time.perf_counter()
    p = subprocess.Popen([sys.executable, *args], cwd=ROOT, env=env, stdout=subprocess.DEVNULL,
                         stderr=subprocess.DEVNULL)
    _, status, usage = os.wait4(p.pid, 0)
    dt = time.perf_counter() - t0
    return dt, usage.ru_maxrss / 1024.0, os.waitstatus_to_exitcode(status)


def _project(name: str, bands: list, points: int = 1024) -> dict:
    return {"format": "crossplan-project", "version": 1, "name": name, "sample_rate": FS,
            "analysis": {"f_min": 20, "f_max": 20000, "points": points}, "bands": bands}


def _geom(n, lo=30.0, hi=18000.0):
    return [lo * (hi / lo) ** (k / (n - 1)) for k in range(n)]


def chain64():
    f = _geom(65)
    bands = []
    for k in range(64):
        fl = []
        if k:
            fl.append({"type": "highpass", "family": "linkwitz-riley", "order": 4, "freq": f[k]})
        if k < 63:
            fl.append({"type": "lowpass", "family": "linkwitz-riley", "order": 4,
                       "freq": f[k + 1]})
        bands.append({"name": f"b{k}", "filters": fl})
    return bands


def lowpass64():
    return [{"name": f"b{k}", "filters": [{"type": "lowpass", "family": "butterworth",
                                           "order": 8, "freq": f}]}
            for k, f in enumerate(_geom(64))]


def peaking64():
    f = _geom(64)
    return [{"name": f"b{k}", "filters": [{"type": "peaking", "freq": f[j], "q": 4,
                                           "gain_db": 3.0 * ((j + k) % 3 - 1) + 0.5}
                                          for j in range(0, 64, 2)]} for k in range(64)]


def fir_band(method, **kw):
    return [{"name": "low", "filters": [dict({"type": "lowpass", "family": "fir",
                                              "method": method, "freq": 2400}, **kw)]},
            {"name": "high", "filters": [{"type": "highpass", "family": "butterworth",
                                          "order": 2, "freq": 2400}]}]


def baseline_sosfreqz(n_bands: int, points: int, sections: int) -> list[str]:
    code = ("import numpy as np\nfrom scipy import signal\n"
            f"sos = signal.butter({2 * sections}, 1000, fs={FS}, output='sos')\n"
            f"w = np.geomspace(20, 20000, {points})\n"
            f"for _ in range({n_bands}): signal.sosfreqz(sos, worN=w, fs={FS})\n")
    return ["-c", code]


def main() -> None:
    tmp = Path(tempfile.mkdtemp(prefix="bench-bounds-"))
    cases = [
        ("64 bands, LR4 chain", _project("chain", chain64()), baseline_sosfreqz(64, 1024, 4)),
        ("64 bands, overlapping BW8 lowpasses", _project("lp", lowpass64()),
         baseline_sosfreqz(64, 1024, 4)),
        ("64 bands x 32 peaking", _project("pk", peaking64()), baseline_sosfreqz(64, 1024, 32)),
        ("64 lowpasses at 4161 points (max for 64 bands)", _project("lpmax", lowpass64(), 4161),
         baseline_sosfreqz(64, 4161, 4)),
        ("64 bands x 32 peaking at 4161 points", _project("pkmax", peaking64(), 4161),
         baseline_sosfreqz(64, 4161, 32)),
        ("2 bands at 65536 points (max)", _project("twomax", fir_band("window", taps=255),
                                                   65536), baseline_sosfreqz(2, 65536, 4)),
        ("lsq, 5 Hz transition, max_taps 8191 (not met)",
         _project("lsq", fir_band("lsq", transition_hz=5, max_taps=8191)),
         ["-c", f"from scipy import signal\nsignal.firls(8191, [0, 2397.5, 2402.5, {FS // 2}],"
                f" [1, 1, 0, 0], fs={FS})"]),
        ("lsq, spec needing about 8000 taps",
         _project("lsq2", fir_band("lsq", transition_hz=18, atten_db=60, max_taps=8191)),
         ["-c", f"from scipy import signal\nsignal.firls(8191, [0, 2391, 2409, {FS // 2}],"
                f" [1, 1, 0, 0], fs={FS})"]),
        ("remez, 5 Hz transition, max_taps 16383 (not met)",
         _project("rz", fir_band("remez", transition_hz=5, max_taps=16383)),
         ["-c", "from scipy import signal\ntry:\n signal.remez(16383, [0, 2397.5, 2402.5, "
                f"{FS // 2}], [1, 0], fs={FS})\nexcept ValueError: pass"]),
        ("remez, spec needing about 16000 taps",
         _project("rz2", fir_band("remez", transition_hz=8.5, atten_db=60, max_taps=16383)),
         ["-c", "from scipy import signal\ntry:\n signal.remez(16383, [0, 2395.75, 2404.25, "
                f"{FS // 2}], [1, 0], fs={FS})\nexcept ValueError: pass"]),
        ("window, 32767 taps", _project("win", fir_band("window", taps=32767)),
         ["-c", f"from scipy import signal\nsignal.firwin(32767, 2400, fs={FS})"]),
    ]
    print(f"{'case':<48} {'crossplan':>22} {'plain scipy':>22} {'ratio':>6}")
    for name, proj, base in cases:
        path = tmp / f"{proj['name']}.json"
        path.write_text(json.dumps(proj))
        t, mb, rc = _run(["-m", "planner", "check", str(path)])
        tb, mbb, _ = _run(base)
        print(f"{name:<48} {t:8.2f} s {mb:7.0f} MB rc={rc} {tb:8.2f} s {mbb:7.0f} MB "
              f"{t / tb:6.2f}", flush=True)


if __name__ == "__main__":
    main()
