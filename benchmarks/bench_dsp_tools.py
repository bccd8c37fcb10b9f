"""Time the pure DSP tools of export, render and measure against plain numpy/scipy.

Each row times a crossplan function and, in the same process, the plain
numpy/scipy way to get the same (or the nearest) result; the ratio is
baseline / crossplan (above 1: crossplan faster; below 1: the price of the
checks and extra results it returns):

* quantize.quantize_sos (q2.30, 16 sections) vs numpy rounding of the array;
* quantize.pole_radius (closed form) vs numpy.roots per section;
* quantize.peak_internal_gain_db vs scipy.signal.sosfreqz of each cumulative chain;
* signals.exp_sweep vs scipy.signal.chirp(method='logarithmic') (10 s at 48 kHz);
* signals.truncate_iir_impulse (-150 dB) vs scipy.signal.sosfilt of a 1 s impulse;
* signals.fft_convolve vs scipy.signal.fftconvolve (10 s with a 4096-tap FIR);
* measure.deconvolve_sweep vs scipy.signal.fftconvolve with the inverse sweep;
* measure.ir_to_response (8192-sample IR, 400 points) vs scipy.signal.freqz.

Run:  python benchmarks/bench_dsp_tools.py
"""

from __future__ import annotations

import os

# One BLAS thread unless set (as the crossplan command does; see DEVELOPERS.md), before numpy.
for _var in ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ.setdefault(_var, "1")

import sys
from pathlib import Path

import numpy as np
from scipy import signal

sys.path.insert(0, str(Path(__file__).resolve().parent))
sys.path.insert(0, str(Path(__file__).resolve().parent.parent))

# The process keeps freed memory for its next arrays, as the crossplan command does
# (planner.memory; the baseline runs in the same process).
from planner.memory import keep_freed_memory  # noqa: E402

keep_freed_memory()

from bench_check import best  # noqa: E402

from planner.dsp import fixed as qz, measure, signals  # noqa: E402

FS = 48000.0


def main() -> None:
    sos = signal.butter(16, [40, 12000], "bandpass", fs=FS, output="sos")
    grid = np.geomspace(20, 20000, 1024)
    a = qz.parse_arith("q2.30")
    sweep = signals.exp_sweep(20, 20000, 10.0, FS)
    inv = signals.inverse_of_sweep(sweep, 20, 20000, FS)
    rec = np.concatenate([sweep, np.zeros(int(FS))])
    taps = signal.firwin(4096, 2000, fs=FS)
    x = signals.white_noise(int(10 * FS), FS, seed=1)
    ir = signal.sosfilt(sos, signals.impulse(8192, FS))
    f400 = np.geomspace(20, 20000, 400)
    t = np.arange(int(10 * FS)) / FS
    imp = signals.impulse(int(FS), FS)

    rows = [
        ("quantize_sos q2.30", lambda: qz.quantize_sos(sos, a),
         lambda: np.round(sos * 2.0 ** 30) / 2.0 ** 30),
        ("pole_radius", lambda: qz.pole_radius(sos),
         lambda: [np.max(np.abs(np.roots(s[3:]))) for s in sos]),
        ("peak_internal_gain_db", lambda: qz.peak_internal_gain_db(sos, grid, FS),
         lambda: [np.max(np.abs(signal.sosfreqz(sos[:k + 1], worN=grid, fs=FS)[1]))
                  for k in range(len(sos))]),
        ("exp_sweep 10 s", lambda: signals.exp_sweep(20, 20000, 10.0, FS),
         lambda: signal.chirp(t, 20, t[-1], 20000, method="logarithmic")),
        ("truncate_iir_impulse", lambda: signals.truncate_iir_impulse(sos, FS),
         lambda: signal.sosfilt(sos, imp)),
        ("fft_convolve 10 s", lambda: signals.fft_convolve(x, taps),
         lambda: signal.fftconvolve(x, taps)),
        ("deconvolve_sweep", lambda: measure.deconvolve_sweep(rec, sweep, FS, 20, 20000),
         lambda: signal.fftconvolve(rec, inv)),
        ("ir_to_response", lambda: measure.ir_to_response(ir, FS, f400),
         lambda: signal.freqz(ir, worN=f400, fs=FS)),
    ]
    print(f"{'function':<24} {'crossplan ms':>13} {'baseline ms':>12} {'ratio':>7}")
    for name, mine, base in rows:
        tm, tb = best(mine, repeat=5), best(base, repeat=5)
        print(f"{name:<24} {tm * 1e3:>13.3f} {tb * 1e3:>12.3f} {tb / tm:>7.2f}")


if __name__ == "__main__":
    main()
