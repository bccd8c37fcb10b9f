"""Time the minimum-tap equiripple search and the FIR block response.

1. Minimum-tap search for a steep lowpass (pass edge 2150 Hz, stop edge
   2250 Hz, 0.1 dB ripple, 80 dB stop band, 48 kHz): planner.dsp.fir
   .min_taps_equiripple (design cache cleared before each run), against one
   plain scipy.signal.remez call at the tap count the search found (the cost
   of a single design when the length is already known). Prints both times,
   search / single and the remez calls the search made. Then ``crossplan
   compare`` on the ``two-way`` preset (planner.compare.compare_project):
   its time and its remez calls (counted by wrapping scipy.signal.remez);
   then compare on one band with only a 25 Hz subsonic highpass, against one
   plain remez call at the length Kaiser's estimate gives.
2. Responses of a 3-band complementary split of that length at 2048
   log-spaced points: planner.dsp.fir.fir_response (all bands in one call),
   against scipy.signal.freqz(taps, worN=freqs, fs=fs) band by band. Prints
   both times and baseline / crossplan (above 1: faster), with and without
   the derivative used for exact group delay.
3. A 3-band FIR project (the ``fir-three-way`` preset: a complementary
   split, 1023 taps per band) on its analysis grid: planner.engine.evaluate
   (every band's response) and planner.engine.analyse (designs cached,
   responses, sum, flatness, crossings, warnings), against
   scipy.signal.freqz band by band on the same grid. Prints both times and
   baseline / crossplan.

Run:  python benchmarks/bench_fir.py
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
from scipy import signal

sys.path.insert(0, str(Path(__file__).resolve().parent))
sys.path.insert(0, str(Path(__file__).resolve().parent.parent))

# The process keeps freed memory for its next arrays, as the crossplan command does
# (planner.memory; the baseline runs in the same process).
from planner.memory import keep_freed_memory  # noqa: E402

keep_freed_memory()

from bench_check import best as _best  # noqa: E402

from planner import compare, engine, project  # noqa: E402
from planner.defaults import COMPARE_MAX_TAPS  # noqa: E402
from planner.dsp import fir  # noqa: E402

FS = 48000.0


def best(fn, repeat=20):
    """Best of ``repeat`` timed calls after one warm-up call (seconds)."""
    return _best(fn, repeat)


class RemezCalls:
    """Counts the calls of scipy.signal.remez (numtaps, grid_density) while active."""

    def __enter__(self):
        self.calls, self._real = [], signal.remez

        def counting(numtaps, *a, **k):
            self.calls.append((numtaps, k.get("grid_density", 16)))
            return self._real(numtaps, *a, **k)

        signal.remez = counting
        return self

    def __exit__(self, *exc):
        signal.remez = self._real


def search_uncached(spec):
    fir.clear_design_cache()
    return fir.min_taps_equiripple(spec, FS)


def main() -> None:
    spec = fir.FirSpec("lowpass", 2150.0, 2250.0, 0.1, 80.0)
    with RemezCalls() as rc:
        design = search_uncached(spec)
    n = design.n_taps
    dp, ds = 10 ** (0.1 / 20), 10 ** (-80 / 20)
    dp = (dp - 1) / (dp + 1)

    def single():
        return signal.remez(n, [0, 2150, 2250, FS / 2], [1, 0], weight=[1, dp / ds], fs=FS,
                            maxiter=100)

    ts = best(lambda: search_uncached(spec), repeat=3)
    t1 = best(single, repeat=5)
    print(f"spec: {spec.describe()} at {FS:g} Hz")
    print(f"minimum taps found: {n} (Kaiser 1974 estimate {design.estimate_taps}, "
          f"{design.trials} trial designs); measured ripple {design.ripple_db:.4f} dB, "
          f"attenuation {design.atten_db:.2f} dB")
    print(f"remez calls of the search (taps, grid density): {rc.calls}")
    print(f"single scipy.signal.remez at {n} taps          {t1 * 1e3:8.1f} ms")
    print(f"minimum-tap search (predict, then confirm)   {ts * 1e3:8.1f} ms"
          f"  search/single = {ts / t1:5.2f}")

    proj = project.load_preset("two-way")
    fir.clear_design_cache()
    with RemezCalls() as rc:
        t = time.perf_counter()
        c = compare.compare_project(proj)
        tc = time.perf_counter() - t
    taps = ", ".join(f"{b.name} {b.fir.taps}" for b in c.bands if b.fir is not None)
    print(f"compare two-way preset: {tc * 1e3:8.1f} ms, {len(rc.calls)} remez calls "
          f"(longest {max(k for k, _ in rc.calls)} taps); FIR equivalents: {taps}")

    # One band with only a 25 Hz second-order subsonic highpass: no other band to tell it
    # from a crossover, so its 0.77 Hz stop edge makes the spec. Baseline: one plain remez
    # call at the Kaiser estimate's length (the cost of a single trial there).
    sub = project.from_dict({
        "format": "crossplan-project", "version": 1, "name": "sub", "sample_rate": FS,
        "bands": [{"name": "w", "filters": [{"type": "highpass", "family": "butterworth",
                                             "order": 2, "freq": 25}]}]})
    fir.clear_design_cache()
    with RemezCalls() as rc:
        t = time.perf_counter()
        c = compare.compare_project(sub, max_taps=COMPARE_MAX_TAPS)   # as crossplan compare
        tc = time.perf_counter() - t
    b0 = c.bands[0]
    est = int(b0.message.split("needs about ")[1].split()[0]) if "needs about" in b0.message \
        else (b0.fir.taps if b0.fir is not None else 0)
    dp1 = (10 ** (1 / 20) - 1) / (10 ** (1 / 20) + 1)
    t1 = time.perf_counter()
    signal.remez(est, [0, 0.7688, 35.05, FS / 2], [0, 1], weight=[dp1 / 1e-3, 1], fs=FS,
                 maxiter=100)
    t1 = time.perf_counter() - t1
    print(f"compare, one band with a 25 Hz subsonic highpass: {tc * 1e3:8.1f} ms, "
          f"{len(rc.calls)} remez calls, status {b0.status} ({est} taps needed by Kaiser's "
          f"estimate); one scipy remez at {est} taps {t1 * 1e3:.0f} ms, "
          f"compare / one remez = {tc / t1:.2f}")

    bands = np.array(fir.complementary_split([300.0, 2200.0], FS, n, design="equiripple",
                                             transition_hz=100.0))
    freqs = np.geomspace(20.0, 20000.0, 2048)

    def baseline():
        return [signal.freqz(b, worN=freqs, fs=FS)[1] for b in bands]

    def responses():
        return fir.fir_response(bands, freqs, FS)

    def responses_gd():
        return fir.fir_response_and_derivative(bands, freqs, FS)

    # Same values as the baseline (1e-11 absolute: rounding of long sums).
    np.testing.assert_allclose(responses(), np.array(baseline()), rtol=0, atol=1e-11)
    tb, tr, tg = best(baseline), best(responses), best(responses_gd)
    print(f"3 bands x {n} taps, {len(freqs)} log-spaced points")
    print(f"baseline: scipy.signal.freqz per band        {tb * 1e3:8.2f} ms")
    print(f"fir_response, all bands                      {tr * 1e3:8.2f} ms"
          f"  baseline/this = {tb / tr:5.2f}")
    print(f"fir_response_and_derivative, all bands       {tg * 1e3:8.2f} ms"
          f"  baseline/this = {tb / tg:5.2f}")

    project_bench()


def project_bench() -> None:
    """Section 3: a 3-band FIR project, evaluated and analysed, against freqz per band."""
    proj = project.load_preset("fir-three-way")
    fs = float(proj.sample_rate)
    rep = engine.analyse(proj)                    # designs the bands (cached from here on)
    freqs, designs = rep.freqs_hz, rep.designs
    taps = [d.fir for d in designs]

    def baseline():
        return [signal.freqz(t, worN=freqs, fs=fs)[1] for t in taps]

    def evaluate():
        return engine.evaluate(designs, freqs, fs).h

    # Same values as the baseline (1e-11 absolute: rounding of long sums).
    np.testing.assert_allclose(evaluate(), np.array(baseline()), rtol=0, atol=1e-11)
    tb, te, ta = best(baseline), best(evaluate), best(lambda: engine.analyse(proj), repeat=10)
    print(f"project {proj.name!r}: {len(taps)} bands x {len(taps[0])} taps, "
          f"{len(freqs)} grid points")
    print(f"baseline: scipy.signal.freqz per band        {tb * 1e3:8.2f} ms")
    print(f"engine.evaluate, all bands                   {te * 1e3:8.2f} ms"
          f"  baseline/this = {tb / te:5.2f}")
    print(f"engine.analyse (full check)                  {ta * 1e3:8.2f} ms"
          f"  baseline/this = {tb / ta:5.2f}")


if __name__ == "__main__":
    main()
