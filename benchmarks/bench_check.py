"""Time the analysis of a 4-band project (12 sections per band, 4096 points).

Baseline, in the same process: scipy.signal.sosfreqz called band by band on
the check's grid (the plain way to get the band responses, before any check).
Prints the time of each and the ratio baseline / crossplan (above 1: faster).
The project's crossings are out of phase (its EQ turns them), so the full check
includes the phase hints (each candidate fix judged, the named ones analysed
again); a line without them is what the editor shows first.
The last line is the same project with 8 narrow raw biquad notches added
(their poles and zeros put points on the grid, the extremes are refined).

Run:  python benchmarks/bench_check.py
"""

from __future__ import annotations

import os

# One BLAS thread unless set (as the crossplan command does; see DEVELOPERS.md), before numpy.
for _var in ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ.setdefault(_var, "1")

import sys
from pathlib import Path
import time

import numpy as np
from scipy import signal

# The checkout this script sits in, before any installed copy.
sys.path.insert(0, str(Path(__file__).resolve().parent.parent))

# The process keeps freed memory for its next arrays, as the crossplan command does
# (planner.memory; the baseline runs in the same process).
from planner.memory import keep_freed_memory  # noqa: E402

keep_freed_memory()

from planner import engine, project


def four_band_project(points: int = 4096) -> dict:
    """4 bands x 12 sections: LR8 crossovers plus EQ (each LR8 = 4 sections)."""
    xo = [120.0, 900.0, 4500.0]

    def lr8(kind, f):
        return {"type": kind, "family": "linkwitz-riley", "order": 8, "freq": f}

    def eq(n, base):
        return [{"type": "peaking", "freq": base * (1.3 ** i), "gain_db": -1.0, "q": 2.0}
                for i in range(n)]

    bands = [
        {"name": "sub", "filters": [lr8("lowpass", xo[0])] + eq(8, 40)},
        {"name": "low", "filters": [lr8("highpass", xo[0]), lr8("lowpass", xo[1])] + eq(4, 200)},
        {"name": "mid", "filters": [lr8("highpass", xo[1]), lr8("lowpass", xo[2])] + eq(4, 1200)},
        {"name": "high", "filters": [lr8("highpass", xo[2])] + eq(8, 2500)},
    ]
    return {"format": "crossplan-project", "version": 1, "name": "bench", "sample_rate": 48000,
            "analysis": {"f_min": 20, "f_max": 20000, "points": points}, "bands": bands}


def with_notches(d: dict, fs: float = 48000.0) -> dict:
    """The project with 8 raw biquad notches (scipy.signal.iirnotch, Q 100-300) in its bands."""
    import copy

    d = copy.deepcopy(d)
    for k, (f0, q) in enumerate(zip(np.geomspace(90, 12000, 8), np.linspace(100, 300, 8))):
        b, a = signal.iirnotch(f0, q, fs=fs)
        d["bands"][k % 4]["filters"].append(
            {"type": "biquad", "rate": fs, "coeffs": [*map(float, b), *map(float, a[1:])]})
    return d


def with_measured_drivers(d: dict, folder) -> dict:
    """The project with a measured driver file (800 points, magnitude only: its phase is
    derived) behind every band, as a speaker builder's measurements would be."""
    import copy
    from pathlib import Path

    from planner.dsp import acoustic as ac
    from planner.dsp.response_text import format_response_text

    d = copy.deepcopy(d)
    f = np.geomspace(10, 24000, 800)
    shapes = [ac.vented_box(f, 30), ac.closed_box(f, 90, 0.7) * ac.rolloff(f, 3000),
              ac.closed_box(f, 400, 0.7) * ac.rolloff(f, 9000), ac.closed_box(f, 1500, 0.8)]
    for k, h in enumerate(shapes):
        name = f"drv{k}.txt"
        Path(folder, name).write_text(format_response_text(f, 87 + 20 * np.log10(np.abs(h))))
        d["bands"][k]["driver"] = {"file": name, "offset_mm": 5.0 * k}
    return d


def best(fn, repeat=30):
    fn()
    times = []
    for _ in range(repeat):
        t = time.perf_counter()
        fn()
        times.append(time.perf_counter() - t)
    return min(times)


def main() -> None:
    proj = project.from_dict(four_band_project())
    designs = [engine.design_band(b, proj.sample_rate) for b in proj.bands]
    assert all(d.n_sections == 12 for d in designs), [d.n_sections for d in designs]
    freqs = engine.analyse(proj).freqs_hz
    notched = project.from_dict(with_notches(four_band_project()))

    def baseline():
        return [signal.sosfreqz(d.sos, worN=freqs, fs=proj.sample_rate)[1] for d in designs]

    def responses():
        return engine.evaluate(designs, freqs, proj.sample_rate)

    def responses_gd():
        r = engine.evaluate(designs, freqs, proj.sample_rate)
        return r.group_delay_samples(), r.sum_group_delay_samples()

    # As `crossplan check` runs it: the report shows the sum's group delay, so its
    # derivative is evaluated in the same pass as the responses.
    def full_check():
        return engine.analyse(proj, group_delay=True).to_dict()

    # What the editor shows first: the check without the phase hints (they follow).
    def check_first():
        return engine.analyse(proj, group_delay=True, hints=False).to_dict()

    def full_check_second_pass():
        return engine.analyse(proj).to_dict()   # the derivative in a pass of its own

    # The two give the same responses (apart from band gain, which is 0 dB here).
    np.testing.assert_allclose(responses().h, np.array(baseline()), rtol=1e-9, atol=1e-15)
    def notched_check():
        return engine.analyse(notched, group_delay=True).to_dict()

    tb, tr, tg, tc = best(baseline), best(responses), best(responses_gd), best(full_check)
    tn = best(notched_check)
    t2 = best(full_check_second_pass)
    t1 = best(check_first)
    failing = sum(not c.ok for c in engine.analyse(proj).checked_crossings)
    import tempfile

    with tempfile.TemporaryDirectory() as tmp:
        acoustic = project.from_dict(with_measured_drivers(four_band_project(), tmp), tmp)
        ta = best(lambda: engine.analyse(acoustic, group_delay=True).to_dict())
        na = len(engine.analyse(acoustic).freqs_hz)
    print(f"grid points: {len(freqs)}, bands: 4, sections per band: 12")
    print(f"baseline: scipy.signal.sosfreqz per band        {tb * 1e3:7.2f} ms")
    print(f"responses of all bands                          {tr * 1e3:7.2f} ms"
          f"  baseline/this = {tb / tr:5.2f}")
    print(f"responses + exact group delay (bands and sum)   {tg * 1e3:7.2f} ms"
          f"  baseline/this = {tb / tg:5.2f}")
    print(f"full check to JSON (crossings, group delay, ...) {tc * 1e3:7.2f} ms"
          f"  baseline/this = {tb / tc:5.2f}")
    print(f"the same, derivative in a second pass        {t2 * 1e3:7.2f} ms"
          f"  baseline/this = {tb / t2:5.2f}")
    print(f"the same without the phase hints of its {failing} failing crossings"
          f" {t1 * 1e3:6.2f} ms  baseline/this = {tb / t1:5.2f}")
    print(f"the same + 8 raw Q 100-300 notches ({len(engine.analyse(notched).freqs_hz)} points)"
          f" {tn * 1e3:6.2f} ms  baseline/this = {tb / tn:5.2f}")
    print(f"the same, acoustic: 4 measured drivers ({na} points)      {ta * 1e3:6.2f} ms"
          f"  baseline/this = {tb / ta:5.2f}")


if __name__ == "__main__":
    main()
