"""Numerical sweep of the IIR crossover designs against scipy.signal's analog prototypes.

Every family and normalisation (Butterworth, Linkwitz-Riley, Bessel phase/mag/delay),
lowpass and highpass, at every allowed order from 1 to 8, at cut-offs from 10 Hz to
0.45 x fs (log-spaced), at 44.1, 48, 96 and 192 kHz, designed by
:func:`planner.dsp.iir.crossover_sos`, is checked for:

* stability: every pole of every section strictly inside the unit circle (poles by
  ``scipy.signal.sos2zpk``);
* the bilinear identity: the digital magnitude at ``f`` against the analog prototype
  designed by scipy.signal (``butter`` / ``bessel`` with ``analog=True``; a
  Linkwitz-Riley is a Butterworth of half the order squared, Linkwitz 1976) at the
  cut-off the design uses (prewarped ``2 fs tan(pi f_c / fs)``, or ``2 pi f_c`` for the
  Bessel ``delay`` normalisation), evaluated by ``scipy.signal.freqs_zpk`` at the
  warped frequency ``2 fs tan(pi f / fs)`` (Oppenheim and Schafer, 3rd ed., sec. 7.2.2).
  This holds at every frequency, so it must be within 0.01 dB wherever the level is
  above -100 dB;
* against the analog filter the user means, at the same frequency: the prototype at
  ``2 pi f_c`` evaluated at ``2 pi f``. The bilinear transform compresses the whole
  analog axis into 0 .. fs/2, so the two agree only while ``tan(pi f / fs)`` is close to
  ``pi f / fs``: exactly at DC and (prewarped families) at the cut-off, closely an octave
  either side of a cut-off far below Nyquist, and not near Nyquist, where the digital
  lowpass falls to zero (a zero at z = -1) and the analog one does not. The figure is the
  largest difference over [f_c / 2, 2 f_c] (up to 0.45 fs) where the analog level is above
  -60 dB, and the sweep reports the largest f_c / fs at which it stays within 0.01 dB.

Run:  python benchmarks/design_sweep.py            (the full sweep, a table in Markdown)
      python benchmarks/design_sweep.py --thin     (a few cut-offs and two rates)
"""

from __future__ import annotations

import sys
import time
import warnings
from dataclasses import dataclass
from pathlib import Path

import numpy as np
from scipy import signal

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

from planner.dsp.iir import FAMILIES, crossover_sos  # noqa: E402

RATES_HZ = (44100.0, 48000.0, 96000.0, 192000.0)
KINDS = ("lowpass", "highpass")
#: (family, Bessel norm or None)
DESIGNS = [("butterworth", None), ("linkwitz-riley", None), ("bessel", "phase"),
           ("bessel", "mag"), ("bessel", "delay")]
TOL_DB = 0.01
IDENTITY_FLOOR_DB = -100.0   # below it a dB difference is rounding noise of tiny numbers
NEAR_FLOOR_DB = -60.0


def analog_zpk(family: str, norm: str | None, kind: str, order: int, wo: float):
    """The analog prototype by scipy.signal, cut-off ``wo`` rad/s."""
    if family == "butterworth":
        return signal.butter(order, wo, btype=kind.replace("pass", ""),
                             analog=True, output="zpk")
    if family == "linkwitz-riley":
        z, p, k = signal.butter(order // 2, wo, btype=kind.replace("pass", ""), analog=True,
                                output="zpk")
        return np.concatenate([z, z]), np.concatenate([p, p]), k * k
    return signal.bessel(order, wo, btype=kind.replace("pass", ""), analog=True, norm=norm,
                         output="zpk")


def _db(h):
    return 20.0 * np.log10(np.maximum(np.abs(h), 1e-300))


@dataclass
class Row:
    family: str
    norm: str | None
    kind: str
    order: int
    fs: float
    fc: float
    max_radius: float
    identity_err_db: float
    near_err_db: float


def sweep(rates=RATES_HZ, n_cutoffs: int = 24, n_freqs: int = 1500) -> list[Row]:
    rows = []
    for fs in rates:
        fcs = np.geomspace(10.0, 0.45 * fs, n_cutoffs)
        f = np.geomspace(1.0, 0.4999 * fs, n_freqs)
        for family, norm in DESIGNS:
            for order in FAMILIES[family]:
                for kind in KINDS:
                    for fc in fcs:
                        sos = crossover_sos(family, kind, order, fc, fs, norm=norm or "phase")
                        _, p, _ = signal.sos2zpk(sos)
                        radius = float(np.max(np.abs(p)))
                        _, hd = signal.sosfreqz(sos, worN=f, fs=fs)
                        warp = norm != "delay"
                        wo = 2 * fs * np.tan(np.pi * fc / fs) if warp else 2 * np.pi * fc
                        za, pa, ka = analog_zpk(family, norm, kind, order, wo)
                        _, ha = signal.freqs_zpk(za, pa, ka, worN=2 * fs * np.tan(np.pi * f / fs))
                        lv = _db(ha)
                        ok = lv > IDENTITY_FLOOR_DB
                        ident = float(np.max(np.abs(_db(hd)[ok] - lv[ok]))) if ok.any() else 0.0
                        zr, pr, kr = analog_zpk(family, norm, kind, order, 2 * np.pi * fc)
                        band = (f >= fc / 2) & (f <= min(2 * fc, 0.45 * fs))
                        _, hr = signal.freqs_zpk(zr, pr, kr, worN=2 * np.pi * f[band])
                        near_ok = _db(hr) > NEAR_FLOOR_DB
                        near = (float(np.max(np.abs(_db(hd[band])[near_ok] - _db(hr)[near_ok])))
                                if near_ok.any() else 0.0)
                        rows.append(Row(family, norm, kind, order, fs, float(fc), radius, ident,
                                        near))
    return rows


def thin_sweep() -> list[Row]:
    """The sweep thinned for a test: two rates, six cut-offs each, 400 frequencies."""
    return sweep(rates=(44100.0, 192000.0), n_cutoffs=6, n_freqs=400)


def summary(rows: list[Row]):
    """Per family, norm and order: designs, stable, largest pole radius, largest identity
    error, and the largest f_c / fs up to which every tested cut-off is within TOL_DB of the
    unwarped analog filter around its cut-off."""
    out = []
    for family, norm in DESIGNS:
        for order in FAMILIES[family]:
            rs = [r for r in rows if (r.family, r.norm, r.order) == (family, norm, order)]
            if not rs:
                continue
            stable = sum(r.max_radius < 1.0 for r in rs)
            ratios = sorted({r.fc / r.fs for r in rs})
            limit = 0.0
            for x in ratios:
                if all(r.near_err_db <= TOL_DB for r in rs if r.fc / r.fs <= x):
                    limit = x
                else:
                    break
            out.append(dict(family=family, norm=norm, order=order, n=len(rs), stable=stable,
                            max_radius=max(r.max_radius for r in rs),
                            identity=max(r.identity_err_db for r in rs),
                            near_limit=limit,
                            near_worst=max(r.near_err_db for r in rs),
                            near_at=max(rs, key=lambda r: r.near_err_db)))
    return out


def table(summ) -> str:
    lines = ["| family | order | designs | stable | largest pole radius | bilinear identity, "
             "max error (dB) | within 0.01 dB of the unwarped analog up to f_c/fs | worst "
             "difference (dB, at f_c/fs) |",
             "|---|---|---|---|---|---|---|---|"]
    for s in summ:
        fam = s["family"] + (f" ({s['norm']})" if s["norm"] else "")
        w = s["near_at"]
        lines.append(f"| {fam} | {s['order']} | {s['n']} | {s['stable']} | "
                     f"{s['max_radius']:.9f} | {s['identity']:.1e} | {s['near_limit']:.4f} | "
                     f"{s['near_worst']:.2f} ({w.fc / w.fs:.3f}) |")
    return "\n".join(lines)


def main(argv=None) -> int:
    argv = sys.argv[1:] if argv is None else argv
    thin = "--thin" in argv
    t0 = time.perf_counter()
    with warnings.catch_warnings():
        # A section of a lowpass far below Nyquist has a numerator near 1e-12: scipy warns
        # while finding its zeros; the zeros are not used here, only the poles.
        warnings.simplefilter("ignore", signal.BadCoefficients)
        rows = thin_sweep() if thin else sweep()
    summ = summary(rows)
    print(table(summ))
    unstable = [r for r in rows if r.max_radius >= 1.0]
    bad = [r for r in rows if r.identity_err_db > TOL_DB]
    print(f"\n{len(rows)} designs in {time.perf_counter() - t0:.1f} s: {len(unstable)} unstable, "
          f"{len(bad)} off the bilinear identity by more than {TOL_DB} dB")
    return 0 if not unstable and not bad else 1


if __name__ == "__main__":
    sys.exit(main())
