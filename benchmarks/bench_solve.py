"""Time the solvers: align a 3-way, fit a 31-band graphic EQ; print time and achieved error.

Baselines, in the same process, plain scipy on the same problems:

* align: scipy.optimize.differential_evolution over the three band delays and the
  two free polarities relaxed to a sign of a continuous variable, every trial summing
  the bands with scipy.signal.sosfreqz (the "throw a global optimiser at it" way);
* fit: scipy.optimize.least_squares on the dB level of a chain redesigned from the
  Audio EQ Cookbook formulas and evaluated by scipy.signal.sosfreqz at every trial,
  with its own finite-difference Jacobian.

Ratios are baseline time / crossplan time (above 1: crossplan faster); the achieved
errors of both are printed beside, since a fast wrong answer is no answer.

Run:  python benchmarks/bench_solve.py
"""

from __future__ import annotations

import os

# One BLAS thread unless set (as the crossplan command does; see DEVELOPERS.md), before numpy.
for _var in ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ.setdefault(_var, "1")

import sys
import time
from pathlib import Path

import numpy as np
from scipy import optimize, signal

# The checkout this script sits in, before any installed copy.
sys.path.insert(0, str(Path(__file__).resolve().parent.parent))

# The process keeps freed memory for its next arrays, as the crossplan command does
# (planner.memory; the baseline runs in the same process).
from planner.memory import keep_freed_memory  # noqa: E402

keep_freed_memory()

from planner import engine
from planner import project as pj
from planner.solve import Bounds, Target, align, fit


def three_way_misaligned():
    d = pj.to_dict(pj.load_preset("three-way"))
    d["bands"][0]["delay_ms"] = 0.21
    d["bands"][1]["invert"] = True
    d["bands"][2]["delay_ms"] = 0.05
    return pj.from_dict(d)


def baseline_align(p):
    r = engine.analyse(p)
    f, fs = r.freqs_hz, p.sample_rate
    hs = []
    for d in r.designs:
        h = signal.sosfreqz(np.asarray(d.sos), worN=f, fs=fs)[1]
        hs.append(h * np.exp(-2j * np.pi * f / fs * d.delay_samples) * (-1 if d.invert else 1))
    d0 = np.array([b.delay_ms for b in p.bands]) / 1e3

    def cost(x):
        d, s = x[:3] / 1e3, np.r_[1.0, np.sign(x[3:] + 1e-12)]
        tot = sum(s[k] * hs[k] * np.exp(-2j * np.pi * f * (d[k] - d0[k])) for k in range(3))
        return float(np.mean((20 * np.log10(np.abs(tot) + 1e-30)) ** 2))

    res = optimize.differential_evolution(cost, [(0, 2)] * 3 + [(-1, 1)] * 2, seed=1,
                                          maxiter=200, tol=1e-8, polish=True)
    return float(np.sqrt(res.fun))


def cookbook_peaking(f0, g, q, fs):
    a, w0 = 10 ** (g / 40), 2 * np.pi * f0 / fs
    al = np.sin(w0) / (2 * q)
    b = [1 + al * a, -2 * np.cos(w0), 1 - al * a]
    d = [1 + al / a, -2 * np.cos(w0), 1 - al / a]
    return np.r_[b, d] / d[0]


def graphic_target():
    centres = [20, 25, 31.5, 40, 50, 63, 80, 100, 125, 160, 200, 250, 315, 400, 500, 630, 800,
               1000, 1250, 1600, 2000, 2500, 3150, 4000, 5000, 6300, 8000, 10000, 12500, 16000,
               20000]
    q = 1 / (2 * np.sinh(np.log(2) / 6))
    gains = np.random.default_rng(5).uniform(-6, 6, 31)
    f = np.geomspace(10, 23000, 6000)
    sos = np.array([cookbook_peaking(c, g, q, 48000) for c, g in zip(centres, gains)])
    lv = 20 * np.log10(np.abs(signal.sosfreqz(sos, worN=f, fs=48000)[1]))
    return centres, q, gains, Target("bench", lambda x: np.interp(np.log(x), np.log(f), lv))


def baseline_fit(centres, q, target, freqs):
    t = target(freqs)

    def resid(g):
        sos = np.array([cookbook_peaking(c, x, q, 48000) for c, x in zip(centres, g)])
        return 20 * np.log10(np.abs(signal.sosfreqz(sos, worN=freqs, fs=48000)[1])) - t

    res = optimize.least_squares(resid, np.zeros(len(centres)), bounds=(-12, 12))
    return res.x


def main():
    p = three_way_misaligned()
    t0 = time.perf_counter()
    a = align(p, vary=("delay", "invert"), bounds=Bounds(max_delay_ms=2.0))
    t_ours = time.perf_counter() - t0
    t0 = time.perf_counter()
    rms_base = baseline_align(p)
    t_base = time.perf_counter() - t0
    cr = a.after.worst_crossing
    print(f"align 3-way (delays + polarity): crossplan {t_ours:6.2f} s, flatness "
          f"{a.after.max_dev_db:+.3f} dB, worst crossing {cr.phase_diff_deg:+.2f} deg; "
          f"baseline (differential evolution) {t_base:6.2f} s, rms {rms_base:.3f} dB; "
          f"ratio {t_base / t_ours:.2f}")

    centres, q, gains, target = graphic_target()
    one = pj.from_dict({"format": "crossplan-project", "version": 1, "name": "geq",
                        "sample_rate": 48000,
                        "analysis": {"f_min": 20, "f_max": 20000, "points": 1024},
                        "bands": [{"name": "main", "filters": []}]})
    t0 = time.perf_counter()
    r = fit(one, target, bank="third-octave")
    t_ours = time.perf_counter() - t0
    t0 = time.perf_counter()
    g_base = baseline_fit(centres, q, target, r.after.freqs_hz)
    t_base = time.perf_counter() - t0
    print(f"fit 31-band EQ: crossplan {t_ours:6.2f} s, max gain error "
          f"{np.max(np.abs(r.gains_db - gains)):.4f} dB, rms {r.rms_error_db:.4f} dB; baseline "
          f"(least_squares, numeric Jacobian) {t_base:6.2f} s, max gain error "
          f"{np.max(np.abs(g_base - gains)):.4f} dB; ratio {t_base / t_ours:.2f}")


if __name__ == "__main__":
    main()
