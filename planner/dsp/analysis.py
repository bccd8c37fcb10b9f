"""Summed-response measures: grid, flatness, crossings, headroom.

Pure functions on arrays. The project-level report that strings them
together lives in :mod:`planner.engine`.

Definitions (the ones the checks use; common practice, no published source):

* Level: ``20 log10 |h|`` in dB (:func:`db`).
* Flatness of a sum ``h_sum`` on a grid: its largest deviation from the
  target (0 dB unless given), ``max_f |20 log10 |h_sum(f)| - target(f)|``,
  reported with its sign and frequency, and the peak-to-peak ripple
  ``max - min`` of the same deviation (:func:`flatness`).
* Crossing of bands ``a`` and ``b``: a frequency where their levels in dB are
  equal, ``20 log10 |h_a| = 20 log10 |h_b|``. Its phase difference is
  ``arg h_a - arg h_b`` (band ``a`` minus band ``b``) in degrees, wrapped to
  (-180, 180] (:func:`wrap_deg`); its level is the mean of the two levels
  there (:class:`Crossing`, :func:`find_crossings`).

Crossings are found as sign changes of the level difference
``g = 20 log10|h_a| - 20 log10|h_b|`` between neighbouring grid points and
refined by a bracketed root search on ``g`` against natural-log frequency:
the Illinois variant of regula falsi (Dowell and Jarratt 1971 [1]_), with a
bisection step after every interpolation step that has not halved ``|g|``,
so that the bracket halves at least every two steps whatever ``g`` looks like
(a sharp notch beside the crossing makes ``g`` steep and far from linear; the
root stays bracketed). All crossings are refined together as arrays, each on
its own two bands only.

References
----------
.. [1] M. Dowell and P. Jarratt, "A modified regula falsi method for
   computing the root of an equation", BIT 11, 1971, pp. 168-174.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Callable

import numpy as np

from planner import config

__all__ = ["log_grid", "db", "flatness", "find_crossings", "Crossing", "wrap_deg",
           "peak_gain", "per_point"]

_TINY = 1e-300


def log_grid(f_min_hz: float, f_max_hz: float, points: int, extra_hz=()) -> np.ndarray:
    """``points`` log-spaced frequencies from f_min to f_max, with ``extra_hz`` inside the range added.

    Parameters
    ----------
    f_min_hz, f_max_hz : float
        Ends of the grid in Hz (both included).
    points : int
        Points of the log-spaced part (:func:`numpy.geomspace`).
    extra_hz : sequence of float
        Frequencies added where they lie strictly inside the range.

    Returns
    -------
    ndarray
        Sorted, without repeats.
    """
    f = np.geomspace(f_min_hz, f_max_hz, int(points))
    extra = np.asarray(extra_hz, dtype=float).ravel()
    extra = extra[(extra > f_min_hz) & (extra < f_max_hz)]
    return np.unique(np.concatenate([f, extra]))


def db(h: np.ndarray) -> np.ndarray:
    """Magnitude in dB, ``20 log10 |h|`` (a floor of 1e-300 keeps exact zeros finite)."""
    return 20.0 * np.log10(np.maximum(np.abs(h), _TINY))


def wrap_deg(deg):
    """Wrap angles in degrees to (-180, 180]."""
    w = np.mod(np.asarray(deg, dtype=float) + 180.0, 360.0) - 180.0
    return np.where(w == -180.0, 180.0, w)


def flatness(freqs_hz: np.ndarray, h_sum: np.ndarray, target_db: np.ndarray | float = 0.0):
    """Largest deviation of the sum from the target on the grid.

    The deviation is ``20 log10 |h_sum| - target_db`` at each grid point
    (module notes); the largest in magnitude is the flatness.

    Parameters
    ----------
    freqs_hz : ndarray, shape (n,)
        The grid in Hz.
    h_sum : ndarray, complex, shape (n,)
        The summed response on the grid.
    target_db : float or ndarray, shape (n,)
        The level the sum should have (dB).

    Returns
    -------
    max_dev_db : float
        Signed deviation with the largest magnitude, in dB.
    at_hz : float
        Where it occurs.
    ripple_db : float
        Peak-to-peak deviation in dB.
    """
    dev = db(h_sum) - target_db
    i = int(np.argmax(np.abs(dev)))
    return float(dev[i]), float(freqs_hz[i]), float(dev.max() - dev.min())


def peak_gain(freqs_hz: np.ndarray, h: np.ndarray):
    """Each row's peak gain in dB and where, shape (n,) each."""
    m = db(h)
    i = np.argmax(m, axis=-1)
    return m[np.arange(len(m)), i], freqs_hz[i]


@dataclass(frozen=True)
class Crossing:
    """Where two bands have equal magnitude.

    ``phase_diff_deg`` is the phase of band ``a`` minus that of band ``b``,
    wrapped to (-180, 180]; ``level_db`` is either band's level there.
    """

    a: int
    b: int
    freq_hz: float
    phase_diff_deg: float
    level_db: float


def per_point(evaluate_all: Callable[[np.ndarray], np.ndarray]
              ) -> Callable[[np.ndarray, np.ndarray], np.ndarray]:
    """A (band indices, frequencies) evaluator from one that gives every band at every
    frequency (``f -> h`` of shape (n_bands, n)): simple, but it evaluates every band."""
    def evaluate(bands, freqs_hz):
        bands = np.asarray(bands, dtype=np.intp)
        return evaluate_all(np.asarray(freqs_hz, float))[bands, np.arange(len(bands))]
    return evaluate


def find_crossings(freqs_hz: np.ndarray, h: np.ndarray,
                   evaluate: Callable[[np.ndarray, np.ndarray], np.ndarray] | None = None,
                   tol_db: float = config.CROSSING_SOLVE_TOL_DB,
                   xtol: float = config.CROSSING_XTOL,
                   max_iter: int = config.CROSSING_MAX_ITER,
                   level_tol_db: float = config.CROSSING_LEVEL_TOL_DB,
                   noise_rel: float = config.CROSSING_NOISE_REL) -> list[Crossing]:
    """Crossings of every pair of rows of ``h`` (bands), found on the grid and refined exactly.

    A crossing (module notes) is found as a sign change of the level
    difference ``g`` between neighbouring grid points (a touch, ``g`` exactly 0
    at a grid point, counts once). With ``evaluate``, each is refined by the
    bracketed search of the module notes until ``|g| <= tol_db`` or the bracket
    is ``xtol`` wide, and the trial point with the smallest ``|g|`` is reported
    with the exact responses there; a sign change that closes on a jump, not a
    root (``|g|`` still above ``level_tol_db``: both bands have a zero at one
    frequency), is dropped. Without ``evaluate`` it is interpolated linearly.

    Parameters
    ----------
    freqs_hz : ndarray, shape (n,)
    h : ndarray, shape (n_bands, n), complex
    evaluate : callable, optional
        ``evaluate(bands, freqs_hz)`` -> complex responses, shape (m,), of band
        ``bands[k]`` at ``freqs_hz[k]`` (see
        :class:`planner.dsp.response.PointEvaluator`, :func:`per_point`).
    tol_db, xtol : float
        Stop when the levels differ by at most ``tol_db`` dB, or when the
        bracket is at most ``xtol`` wide in natural-log frequency.
    max_iter : int
        Most steps.
    level_tol_db : float
        Largest level difference (dB) of a crossing that is reported.
    noise_rel : float
        Relative rounding error of a response: where the bands are deep
        (level ``L`` dB), the tolerance is raised to
        ``20/ln(10) noise_rel 10^(-L/20)`` dB (at most ``level_tol_db / 10``),
        since the levels cannot be known better there.

    Returns
    -------
    list of Crossing, ordered by pair then frequency.

    References
    ----------
    .. [1] M. Dowell and P. Jarratt, BIT 11, 1971, pp. 168-174.
    """
    if len(h) < 2:
        return []
    m = db(h)
    ia, ib = np.triu_indices(len(h), k=1)
    diff = m[ia] - m[ib]                       # (pairs, n)
    pk, jk = _sign_changes(diff)
    if len(pk) == 0:
        return []
    lf = np.log(freqs_hz)
    d0, d1 = diff[pk, jk], diff[pk, jk + 1]
    a_idx, b_idx = ia[pk], ib[pk]
    if evaluate is None:
        x, ha, hb = _interpolated(h, lf, a_idx, b_idx, jk, d0, d1)
        return _crossings(a_idx, b_idx, x, ha, hb)
    return _refined(evaluate, h, m, lf, a_idx, b_idx, jk, d0, d1, tol_db, xtol, max_iter,
                    level_tol_db, noise_rel)


def _refined(evaluate, h, m, lf, a_idx, b_idx, jk, d0, d1, tol_db, xtol, max_iter,
             level_tol_db, noise_rel) -> list[Crossing]:
    """The crossings bracketed by grid cells ``jk``, refined by :func:`_refine_crossings`."""
    # Deep down, float64 rounding sets how level two bands can be found: never ask for
    # more than noise_rel of the level (in dB: 20/ln 10 of it), nor less than a tenth of
    # level_tol_db.
    depth = 0.25 * (m[a_idx, jk] + m[b_idx, jk] + m[a_idx, jk + 1] + m[b_idx, jk + 1])
    tol = np.clip(20.0 / np.log(10.0) * noise_rel * 10.0 ** (-depth / 20.0), tol_db,
                  max(tol_db, 0.1 * level_tol_db))
    x, ha, hb, g = _refine_crossings(evaluate, a_idx, b_idx, lf[jk], lf[jk + 1], d0, d1,
                                     h[a_idx, jk], h[b_idx, jk], h[a_idx, jk + 1],
                                     h[b_idx, jk + 1], tol, xtol, max_iter)
    # A sign change the search cannot close is a jump, not a crossing: both bands have a
    # zero at one frequency, where the difference is rounding noise.
    real = g <= level_tol_db
    return _crossings(a_idx[real], b_idx[real], x[real], ha[real], hb[real])


def _sign_changes(diff: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """(pair, grid index) of each sign change of ``diff`` between index ``j`` and ``j + 1``.

    A touch (diff exactly 0 at a grid point) counts once: where the sign
    changes across it, or where it is exact and its neighbours differ.
    """
    s = np.sign(diff)
    change = (s[:, :-1] * s[:, 1:] < 0) | ((s[:, :-1] != 0) & (s[:, 1:] == 0))
    return np.nonzero(change)


def _interpolated(h, lf, a_idx, b_idx, jk, d0, d1):
    """Crossings interpolated linearly on the grid: log frequency and both responses."""
    t = np.where(d1 == d0, 0.0, d0 / (d0 - d1))
    x = lf[jk] + t * (lf[jk + 1] - lf[jk])
    ha = h[a_idx, jk] + t * (h[a_idx, jk + 1] - h[a_idx, jk])
    hb = h[b_idx, jk] + t * (h[b_idx, jk + 1] - h[b_idx, jk])
    return x, ha, hb


def _crossings(a_idx, b_idx, x, ha, hb) -> list[Crossing]:
    """The crossings at log frequencies ``x``: phase of a minus b wrapped, mean level."""
    phase = wrap_deg(np.degrees(np.angle(ha) - np.angle(hb)))
    level = 0.5 * (db(ha) + db(hb))
    freq = np.exp(x)
    out = [Crossing(int(a), int(b), float(f), float(p), float(lv))
           for a, b, f, p, lv in zip(a_idx, b_idx, freq, phase, level)]
    out.sort(key=lambda c: (c.a, c.b, c.freq_hz))
    return out


def _refine_crossings(evaluate, a_idx, b_idx, xa, xb, fa, fb, ha_lo, hb_lo, ha_hi, hb_hi,
                      tol_db, xtol, max_iter):
    """The bracketed search of :func:`find_crossings`, on all crossings at once.

    ``[xa, xb]`` brackets each root, ``fa`` and ``fb`` the (opposite-signed
    or zero) level differences there. Returns the best point of each
    crossing and both bands' responses there.
    """
    xa, xb, fa, fb = (np.array(v, dtype=float) for v in (xa, xb, fa, fb))
    n = len(xa)
    tol_db = np.broadcast_to(np.asarray(tol_db, dtype=float), (len(xa),))
    # Best point so far: the grid end nearer a root, with the grid's responses.
    lo_best = np.abs(fa) <= np.abs(fb)
    x_best = np.where(lo_best, xa, xb)
    g_best = np.where(lo_best, np.abs(fa), np.abs(fb))
    ha_best = np.where(lo_best, ha_lo, ha_hi)
    hb_best = np.where(lo_best, hb_lo, hb_hi)
    done = (g_best <= tol_db) | (np.abs(xb - xa) <= xtol)
    side = np.zeros(n, dtype=np.int8)          # which end the last step moved: -1 a, +1 b
    bisect = np.zeros(n, dtype=bool)
    g_last = g_best.copy()                     # |g| at the last trial point
    for _ in range(max_iter):
        k = np.nonzero(~done)[0]
        if not len(k):
            break
        a0, b0, ga, gb = xa[k], xb[k], fa[k], fb[k]
        with np.errstate(divide="ignore", invalid="ignore"):
            x = b0 - gb * (b0 - a0) / (gb - ga)          # regula falsi
        inside = np.isfinite(x) & (x > np.minimum(a0, b0)) & (x < np.maximum(a0, b0))
        x = np.where(bisect[k] | ~inside, 0.5 * (a0 + b0), x)
        hv = evaluate(np.concatenate([a_idx[k], b_idx[k]]), np.exp(np.concatenate([x, x])))
        hav, hbv = hv[: len(k)], hv[len(k):]
        g = db(hav) - db(hbv)
        better = np.abs(g) < g_best[k]
        kb = k[better]
        x_best[kb], g_best[kb] = x[better], np.abs(g[better])
        ha_best[kb], hb_best[kb] = hav[better], hbv[better]
        # Keep the root bracketed: the new point replaces the end of its sign. When the
        # same end moves twice running, the other end's value is halved (Illinois).
        to_a = np.sign(g) == np.sign(ga)
        ka, kb_ = k[to_a], k[~to_a]
        fb[ka[side[ka] == -1]] *= 0.5
        fa[kb_[side[kb_] == 1]] *= 0.5
        xa[ka], fa[ka] = x[to_a], g[to_a]
        xb[kb_], fb[kb_] = x[~to_a], g[~to_a]
        side[ka], side[kb_] = -1, 1
        # An interpolation step that did not halve |g| is followed by a bisection step, so
        # the bracket halves at least every other step when interpolation is poor.
        bisect[k] = ~bisect[k] & (np.abs(g) > 0.5 * g_last[k])
        g_last[k] = np.abs(g)
        done[k] = (g_best[k] <= tol_db[k]) | (np.abs(xb[k] - xa[k]) <= xtol) | (g == 0)
    return x_best, ha_best, hb_best, g_best
