"""Independent references for the check: band responses by scipy.signal, roots by scipy.optimize.

Each band is rebuilt from the engine's designs (its sections, FIR taps, gain, polarity and
delay) and evaluated with scipy.signal.sosfreqz / freqz, never with crossplan's evaluator;
crossings are found by a dense scan and scipy.optimize.brentq; extremes of the sum by
sosfreqz on 2^20 points and scipy.optimize.minimize_scalar around the dense extreme.
"""

from __future__ import annotations

import numpy as np
from scipy import optimize, signal


def band_h(design, freqs_hz, fs_hz):
    """One band's complex response by scipy.signal (sosfreqz of its sections, freqz of its FIR)."""
    f = np.atleast_1d(np.asarray(freqs_hz, float))
    h = np.ones(len(f), complex)
    if len(design.sos):
        h = signal.sosfreqz(np.asarray(design.sos), worN=f, fs=fs_hz)[1]
    if design.fir is not None:
        h = h * signal.freqz(np.asarray(design.fir), worN=f, fs=fs_hz)[1]
    g = 10 ** (design.gain_db / 20) * (-1.0 if design.invert else 1.0)
    return h * g * np.exp(-2j * np.pi * f / fs_hz * design.delay_samples)


def band_h_dense(design, n, fs_hz):
    """One band on ``n`` points from 0 to Nyquist (``scipy.signal.sosfreqz`` and ``freqz`` with
    an integer ``worN``: their FFT path). Returns (freqs_hz, h)."""
    h = np.ones(n, complex)
    f = np.arange(n) * (fs_hz / 2) / n
    if len(design.sos):
        f, h = signal.sosfreqz(np.asarray(design.sos), worN=n, fs=fs_hz)
    if design.fir is not None:
        h = h * signal.freqz(np.asarray(design.fir), worN=n, fs=fs_hz)[1]
    g = 10 ** (design.gain_db / 20) * (-1.0 if design.invert else 1.0)
    return f, h * g * np.exp(-2j * np.pi * f / fs_hz * design.delay_samples)


def db(h):
    return 20 * np.log10(np.maximum(np.abs(h), 1e-300))


def level_difference_db(da, db_, f_hz, fs_hz):
    """Level of band a minus band b in dB at ``f_hz``, by scipy.signal."""
    return db(band_h(da, f_hz, fs_hz)) - db(band_h(db_, f_hz, fs_hz))


def crossings(da, db_, fs_hz, f_min, f_max, scan_points=200_000):
    """Every crossing of two bands in [f_min, f_max]: a dense log scan brackets each sign
    change, scipy.optimize.brentq refines it on the level difference against log f.

    Returns a list of (freq_hz, phase_diff_deg wrapped to (-180, 180], level_db).
    """
    f = np.geomspace(f_min, f_max, scan_points)
    ha, hb = band_h(da, f, fs_hz), band_h(db_, f, fs_hz)
    g = db(ha) - db(hb)
    k = np.nonzero(np.sign(g[:-1]) * np.sign(g[1:]) < 0)[0]

    def fun(x):
        return float(level_difference_db(da, db_, np.exp(x), fs_hz)[0])

    out = []
    for j in k:
        x = optimize.brentq(fun, np.log(f[j]), np.log(f[j + 1]), xtol=1e-14, rtol=1e-15)
        fx = np.exp(x)
        a, b = band_h(da, fx, fs_hz)[0], band_h(db_, fx, fs_hz)[0]
        ph = np.degrees(np.angle(a) - np.angle(b))
        ph = (ph + 180.0) % 360.0 - 180.0
        out.append((fx, 180.0 if ph == -180.0 else ph, 0.5 * (db(a) + db(b))))
    return out


def sum_h(designs, active, freqs_hz, fs_hz):
    return sum(band_h(d, freqs_hz, fs_hz) for d, on in zip(designs, active) if on)


def band_peak(design, fs_hz, f_min, f_max, n=2 ** 20):
    """One band's peak level in dB in [f_min, f_max]: sosfreqz on ``n`` points, then
    scipy.optimize.minimize_scalar around the dense peak."""
    f, h = band_h_dense(design, n, fs_hz)
    keep = (f >= f_min) & (f <= f_max)
    f, lv = f[keep], db(h[keep])
    i = int(np.argmax(lv))
    lo, hi = f[max(i - 1, 0)], f[min(i + 1, len(f) - 1)]
    res = optimize.minimize_scalar(lambda x: -float(db(band_h(design, x, fs_hz))[0]),
                                   bounds=(lo, hi), method="bounded",
                                   options={"xatol": 1e-9 * hi})
    return float(max(lv[i], -res.fun))


def max_deviation(designs, active, fs_hz, f_min, f_max, n=2 ** 20):
    """The sum's largest deviation from 0 dB in [f_min, f_max] and where.

    sosfreqz on ``n`` points from 0 to Nyquist, then scipy.optimize.minimize_scalar (bounded)
    on the neighbours of the dense extreme, then grids zoomed in around the best point.
    """
    parts = [band_h_dense(d, n, fs_hz) for d, on in zip(designs, active) if on]
    f = parts[0][0]
    keep = (f >= f_min) & (f <= f_max)
    ends = np.array([f_min, f_max])
    f = np.concatenate([[f_min], f[keep], [f_max]])
    h = sum(p[1] for p in parts)[keep]
    h = np.concatenate([sum_h(designs, active, ends[:1], fs_hz), h,
                        sum_h(designs, active, ends[1:], fs_hz)])
    dev = db(h)
    i = int(np.argmax(np.abs(dev)))
    sign = 1.0 if dev[i] >= 0 else -1.0

    def neg(x):
        return -sign * float(db(sum_h(designs, active, np.array([x]), fs_hz))[0])

    lo, hi = f[max(i - 1, 0)], f[min(i + 1, len(f) - 1)]
    best_f, best = f[i], dev[i]
    if hi > lo:
        res = optimize.minimize_scalar(neg, bounds=(lo, hi), method="bounded",
                                       options={"xatol": 1e-9 * hi})
        value = -sign * res.fun
        if sign * value > sign * best:
            best_f, best = res.x, value
        # minimize_scalar stops within sqrt(eps) |x| of the extreme: a near-cancellation of
        # two bands (a notch against another band's leakage) is narrower than that, so
        # the extreme is then zoomed into on grids of 2001 points, each 1/50 as wide.
        half = (hi - lo) / 2.0
        while half > 1e-12 * hi:
            x = np.linspace(max(lo, best_f - half), min(hi, best_f + half), 2001)
            v = sign * db(sum_h(designs, active, x, fs_hz))
            k = int(np.argmax(v))
            if v[k] > sign * best:
                best_f, best = x[k], sign * v[k]
            half /= 50.0
    return float(best), float(best_f)
