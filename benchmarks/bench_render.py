"""Render throughput, as a multiple of real time, for a 3-band IIR and a 3-band FIR project.

Baseline, in the same process: plain scipy on the same coefficients and the
same 30 s of 48 kHz mono noise: scipy.signal.sosfilt per band (IIR), and
scipy.signal.oaconvolve per band (FIR), each in one call, summed. The FIR
bands use taps from scipy.signal.firwin (2047 taps per band) put into the
exported bands, so the benchmark does not depend on an FIR filter type.
Prints the real-time multiple of each and the ratio crossplan / baseline
(1.0: as fast as plain scipy; below 1: slower by the block and bookkeeping).

Then the streamed file render: a 10-minute 96 kHz stereo 32-bit float WAV
(generated block by block in a temporary folder) through the 3-band IIR
project by ``crossplan render`` in a fresh process, against a fresh process
doing the plain one-shot scipy work on the same file: scipy.io.wavfile.read of
the whole file, one scipy.signal.sosfilt call per band over the whole signal,
their sum, and scipy.io.wavfile.write of every band and the sum. Both print
wall time and peak resident memory (``os.wait4``); the ratio is baseline /
crossplan time (above 1: crossplan faster).

Run:  python benchmarks/bench_render.py [--no-file]
"""

from __future__ import annotations

import json
import os
import subprocess
import sys
import tempfile
import time

# One BLAS thread unless set (as the crossplan command does; see DEVELOPERS.md), before numpy.
for _var in ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ.setdefault(_var, "1")
from dataclasses import replace
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


FILE_FS = 96000
FILE_SECONDS = 600.0

BASELINE = """
import sys, numpy as np
from scipy import signal
from scipy.io import wavfile
from planner import export, project
rx = export.export_rate(project.load(sys.argv[1]), {fs})
fs, x = wavfile.read(sys.argv[2])
x = x.astype(np.float64)
total = np.zeros_like(x)
for k, b in enumerate(rx.bands):
    y = b.linear_gain * signal.sosfilt(b.run_sos, x, axis=0)
    total += y
    wavfile.write(f"{{sys.argv[3]}}/band{{k}}.wav", fs, y.astype(np.float32))
wavfile.write(f"{{sys.argv[3]}}/sum.wav", fs, total.astype(np.float32))
"""


def _process(args):
    """(wall s, peak RSS MB) of a fresh Python process running ``args``."""
    root = Path(__file__).resolve().parent.parent
    env = dict(os.environ, PYTHONPATH=str(root))
    t0 = time.perf_counter()
    p = subprocess.Popen([sys.executable, *args], cwd=root, env=env,
                         stdout=subprocess.DEVNULL)
    _, status, usage = os.wait4(p.pid, 0)
    if os.waitstatus_to_exitcode(status) != 0:
        raise SystemExit(f"{args[:3]} failed")
    return time.perf_counter() - t0, usage.ru_maxrss / 1024.0


def file_render() -> None:
    """The streamed render of a long stereo file against one-shot scipy, in fresh processes."""
    from planner.audio.wav import WavWriter, open_wav

    tmp = Path(tempfile.mkdtemp(prefix="bench-render-"))
    d = three_way()
    d["sample_rate"] = FILE_FS
    (tmp / "p.json").write_text(json.dumps(d))
    n = int(FILE_SECONDS * FILE_FS)
    w = WavWriter(tmp / "in.wav", FILE_FS, 2)
    rng = np.random.default_rng(7)
    for i in range(0, n, 1 << 20):
        w.write(rng.uniform(-0.5, 0.5, (min(1 << 20, n - i), 2)))
    w.close()
    (tmp / "a").mkdir()
    (tmp / "b").mkdir()
    t_mine, mb_mine = _process(["-m", "planner", "render", str(tmp / "p.json"),
                                str(tmp / "in.wav"), "--out", str(tmp / "a"), "--quiet"])
    t_base, mb_base = _process(["-c", BASELINE.format(fs=FILE_FS), str(tmp / "p.json"),
                                str(tmp / "in.wav"), str(tmp / "b")])
    ia, ib = open_wav(tmp / "a" / "in-sum.wav"), open_wav(tmp / "b" / "sum.wav")
    a = np.memmap(ia.path, dtype="<f4", mode="r", offset=ia.data_offset, shape=(ia.frames * 2,))
    b = np.memmap(ib.path, dtype="<f4", mode="r", offset=ib.data_offset, shape=(ib.frames * 2,))
    err = max(float(np.max(np.abs(a[i:i + (1 << 22)] - b[i:i + (1 << 22)])))
              for i in range(0, len(a), 1 << 22))
    size_mb = (tmp / "in.wav").stat().st_size / 2 ** 20
    print(f"\nfile render: {FILE_SECONDS / 60:g} min stereo at {FILE_FS} Hz, 32-bit float "
          f"({size_mb:.0f} MB), 3-band IIR, fresh processes")
    print(f"{'':<22} {'wall':>8} {'peak memory':>12}")
    print(f"{'crossplan render':<22} {t_mine:>6.1f} s {mb_mine:>9.0f} MB")
    print(f"{'one-shot scipy':<22} {t_base:>6.1f} s {mb_base:>9.0f} MB")
    print(f"ratio baseline / crossplan (time): {t_base / t_mine:.2f}; "
          f"largest difference of the sums {err:.2g}")
    for f in list((tmp / "a").iterdir()) + list((tmp / "b").iterdir()):
        f.unlink()
    (tmp / "in.wav").unlink()


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
    if "--no-file" not in sys.argv:
        file_render()


if __name__ == "__main__":
    main()
