"""Render throughput, as a multiple of real time, for a 3-band IIR and a 3-band FIR project.

Baseline, in the same process: plain scipy on the same coefficients and the
same 30 s of 48 kHz mono noise: scipy.signal.sosfilt per band (IIR), and
scipy.signal.oaconvolve per band (FIR), each in one call, summed. The FIR
bands use taps from scipy.signal.firwin (2047 taps per band) put into the
exported bands, so the benchmark does not depend on an FIR filter type.
Prints the real-time multiple of each and the ratio crossplan / baseline
(1.0: as fast as plain scipy; below 1: slower by the block and bookkeeping).

Run:  python benchmarks/bench_render.py
"""

from __future__ import annotations

import os

# One BLAS thread unless set (as the crossplan command does; see DEVELOPERS.md), before numpy.
for _var in ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ.setdefault(_var, "1")

import sys
from dataclasses import replace
from pathlib import Path

import numpy as np
from scipy import signal

sys.path.insert(0, str(Path(__file__).resolve().parent))
sys.path.insert(0, str(Path(__file__).resolve().parent.parent))

from bench_check import best  # noqa: E402

from planner import export, project  # noqa: E402
from planner.audio import render  # noqa: E402
from planner.dsp.signals import white_noise  # noqa: E402

FS = 48000
SECONDS = 30.0
TAPS = 2047


def three_way() -> dict:
    """LR4 at 300 Hz and 3 kHz, two peaking EQs per band (4-6 sections per band)."""
    def lr(kind, f):
        return {"type": kind, "family": "linkwitz-riley", "order": 4, "freq": f}

    def eq(f):
        return [{"type": "peaking", "freq": f, "gain_db": -2.0, "q": 2.0},
                {"type": "peaking", "freq": 1.5 * f, "gain_db": 1.0, "q": 1.0}]

    return {"format": "crossplan-project", "version": 1, "name": "bench", "sample_rate": FS,
            "bands": [{"name": "low", "filters": [lr("lowpass", 300)] + eq(60)},
                      {"name": "mid", "filters": [lr("highpass", 300), lr("lowpass", 3000)]
                       + eq(800)},
                      {"name": "high", "filters": [lr("highpass", 3000)] + eq(8000)}]}


def fir_export(rx):
    """The same bands with firwin taps instead of sections (lowpass, bandpass, highpass)."""
    taps = [signal.firwin(TAPS, 300, fs=FS),
            signal.firwin(TAPS, [300, 3000], pass_zero=False, fs=FS),
            signal.firwin(TAPS, 3000, pass_zero=False, fs=FS)]
    bands = [replace(b, stored_sos=np.zeros((0, 6)), shifts=[], sos=np.zeros((0, 6)), stored_fir=t, fir=t,
                     scale=1.0) for b, t in zip(rx.bands, taps)]
    return replace(rx, bands=bands)


def main() -> None:
    rx = export.export_rate(project.from_dict(three_way()), FS)
    x = white_noise(int(SECONDS * FS), FS, seed=1)
    rows = []
    for name, r in (("3-band IIR", rx), ("3-band FIR", fir_export(rx))):
        if r.bands[0].stored_fir is None:
            def base(r=r):
                return sum(b.linear_gain * signal.sosfilt(b.run_sos, x) for b in r.bands)
        else:
            def base(r=r):
                return sum(b.linear_gain * signal.oaconvolve(x, b.run_fir)[:len(x)]
                           for b in r.bands)
        t_base = best(base, repeat=3)
        t_mine = best(lambda r=r: render.render(x, r), repeat=3)
        np.testing.assert_allclose(render.render(x, r).sum, base(), rtol=0, atol=1e-9)
        rows.append((name, SECONDS / t_mine, SECONDS / t_base, t_base / t_mine))
    print(f"render of {SECONDS:g} s mono at {FS} Hz (best of 3)")
    print(f"{'project':<12} {'crossplan':>12} {'plain scipy':>12} {'ratio':>7}")
    for name, mine, base_rt, ratio in rows:
        print(f"{name:<12} {mine:>10.0f}x {base_rt:>10.0f}x {ratio:>7.2f}")


if __name__ == "__main__":
    main()
