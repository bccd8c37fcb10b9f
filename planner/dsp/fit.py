"""Solving EQ gains so that a chain, or a sum of bands, follows a target curve.

Pure functions on arrays. The unknowns are gains in dB, each bounded; the
response they make is given as a function, so the same solver serves

* a bank of EQ filters in one chain (their centres and Qs fixed, their
  gains free): the level in dB is the sum of each filter's level, and
* the bands of a split, each with its own gain: the level is that of the
  complex sum of the bands.

The fit is least squares on the level in dB (:func:`fit_gains`): first the
problem linearised at the starting gains, solved with bounds
(:func:`scipy.optimize.lsq_linear`), then the exact, nonlinear problem
(:func:`scipy.optimize.least_squares`, trust-region reflective with bounds)
from there. Neighbouring filters overlap, and the linearised columns carry
that: the gain of one filter is solved with what its neighbours add at its
frequency, which "set each slider to the error" ignores. An optional minimax
pass (:func:`minimax_gains`) then lowers the worst deviation by sequential
linear programming (:func:`scipy.optimize.linprog`, HiGHS).

References
----------
.. [1] J. Nocedal and S. J. Wright, "Numerical Optimization", 2nd ed.,
   Springer, 2006, ch. 10 (nonlinear least squares) and sec. 18.1
   (sequential linear programming with a trust region).
.. [2] ISO 266:1997, "Acoustics - Preferred frequencies"; IEC 61260-1:2014,
   "Electroacoustics - Octave-band and fractional-octave-band filters",
   sec. 5.2-5.4 (base-ten band centres ``1000 * 10^(k/10)`` Hz for
   third-octaves).
.. [3] R. Bristow-Johnson, "Audio EQ Cookbook", W3C Working Group Note,
   2021 (bandwidth in octaves and Q: ``1/Q = 2 sinh(ln(2)/2 * BW)``).
.. [4] A. N. Tikhonov and V. Y. Arsenin, "Solutions of Ill-Posed Problems",
   Winston, 1977 (the regularised least squares of :func:`fit_gains`).
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Callable

import numpy as np
from scipy import optimize

from planner.errors import DesignError

__all__ = ["ISO_THIRD_OCTAVE_HZ", "ISO_OCTAVE_HZ", "band_centres_hz", "q_of_bandwidth",
           "FitResult", "fit_gains", "minimax_gains", "linearised", "db", "log_weights",
           "evaluate"]

#: ISO 266 nominal third-octave centres from 20 Hz to 20 kHz (preferred numbers, R10).
ISO_THIRD_OCTAVE_HZ = (20, 25, 31.5, 40, 50, 63, 80, 100, 125, 160, 200, 250, 315, 400, 500,
                       630, 800, 1000, 1250, 1600, 2000, 2500, 3150, 4000, 5000, 6300, 8000,
                       10000, 12500, 16000, 20000)
#: ISO 266 nominal octave centres.
ISO_OCTAVE_HZ = (31.5, 63, 125, 250, 500, 1000, 2000, 4000, 8000, 16000)


def band_centres_hz(fraction: int, f_lo_hz: float = 20.0, f_hi_hz: float = 20000.0):
    """Exact base-ten band centres ``1000 * 10^(3k / (10 fraction))`` Hz within a range.

    ``fraction`` 1 for octaves, 3 for third-octaves (IEC 61260-1, [2]_); the
    ISO 266 nominal values (:data:`ISO_THIRD_OCTAVE_HZ`) are these rounded
    to preferred numbers.
    """
    if fraction not in (1, 2, 3, 6, 12, 24):
        raise DesignError(f"must be 1, 2, 3, 6, 12 or 24 (1/N octave), not {fraction!r}",
                          field="fraction")
    step = 3.0 / (10.0 * fraction)
    k = np.arange(np.floor(np.log10(f_lo_hz / 1000) / step) - 1,
                  np.ceil(np.log10(f_hi_hz / 1000) / step) + 2)
    f = 1000.0 * 10.0 ** (k * step)
    edge = 10.0 ** (step / 2)
    return f[(f * edge > f_lo_hz) & (f / edge < f_hi_hz)]


def q_of_bandwidth(octaves: float) -> float:
    """Q of a band ``octaves`` wide between its -3 dB points: ``1 / (2 sinh(ln 2 / 2 * BW))`` ([3]_)."""
    if not octaves > 0:
        raise DesignError(f"must be above 0 octaves, not {octaves!r}", field="bandwidth")
    return float(1.0 / (2.0 * np.sinh(np.log(2.0) / 2.0 * octaves)))


def db(h) -> np.ndarray:
    """``20 log10 |h|`` with a floor of -300 dB (so an exact zero stays finite)."""
    return 20.0 * np.log10(np.maximum(np.abs(h), 1e-15))


@dataclass(frozen=True)
class FitResult:
    """Gains that make a response follow a target, and how well.

    Attributes
    ----------
    gains_db : ndarray
    error_db : ndarray
        Level minus target on the grid, with these gains.
    max_error_db, max_at_hz, rms_error_db : float
    at_limit : list of int
        Indices of the gains that sit on one of their bounds (within 1e-6 dB).
    method : str
        ``least-squares`` or ``minimax``.
    """

    gains_db: np.ndarray
    error_db: np.ndarray
    max_error_db: float
    max_at_hz: float
    rms_error_db: float
    at_limit: list
    method: str


def log_weights(freqs_hz) -> np.ndarray:
    """Weights of a grid's points by log-frequency spacing (trapezoid), summing to one:
    every octave counts alike however the points are spread."""
    f = np.asarray(freqs_hz, dtype=float)
    if len(f) < 2 or not np.log(f[-1] / f[0]) > 0:
        return np.full(len(f), 1.0 / max(len(f), 1))
    d = np.diff(np.log(f))
    w = np.zeros(len(f))
    w[:-1] += d / 2
    w[1:] += d / 2
    return w / w.sum()


def evaluate(level_db: Callable, gains_db, target_db, freqs_hz, weights, lo, hi,
             method: str) -> FitResult:
    """The :class:`FitResult` of given gains (limits ``lo``, ``hi`` name those at a limit)."""
    return _result(level_db, np.asarray(gains_db, float), np.asarray(target_db, float),
                   np.asarray(freqs_hz, float), np.asarray(weights, float),
                   np.broadcast_to(lo, np.shape(gains_db)), np.broadcast_to(hi, np.shape(gains_db)),
                   method)


def _result(level_db: Callable, gains, target_db, freqs_hz, weights, lo, hi, method):
    err = level_db(gains) - target_db
    w = weights / weights.sum()
    k = int(np.argmax(np.abs(err) * (weights > 0)))
    at = [i for i, g in enumerate(gains) if g <= lo[i] + 1e-6 or g >= hi[i] - 1e-6]
    return FitResult(np.asarray(gains, float), err, float(err[k]), float(freqs_hz[k]),
                     float(np.sqrt(np.sum(w * err * err))), at, method)


def linearised(level_db: Callable, gains_db, step_db: float = 0.01, jacobian=None):
    """Level and its Jacobian (dB per dB) at ``gains_db``.

    ``J[:, k] = d level / d gain_k``, from ``jacobian(gains)`` when given, else
    by central differences ``(L(g + h e_k) - L(g - h e_k)) / (2 h)`` ([1]_
    sec. 8.1). For a chain of EQ filters column ``k`` is filter ``k``'s own
    shape: where it overlaps its neighbours the columns overlap, which is
    what a fit must account for.

    Parameters
    ----------
    level_db : callable
        ``gains (n,) -> level in dB on the grid (m,)``.
    gains_db : array_like, shape (n,)
        Where to linearise.
    step_db : float
        Step ``h`` of the central differences, dB.
    jacobian : callable, optional
        ``gains -> (m, n)`` derivatives, used instead of differences.

    Returns
    -------
    level : ndarray, shape (m,)
    J : ndarray, shape (m, n)
    """
    g = np.asarray(gains_db, dtype=float)
    base = level_db(g)
    if jacobian is not None:
        return base, np.asarray(jacobian(g), dtype=float)
    cols = []
    for k in range(len(g)):                       # a loop over gains, not frequencies
        d = np.zeros_like(g)
        d[k] = step_db
        cols.append((level_db(g + d) - level_db(g - d)) / (2 * step_db))
    return base, np.stack(cols, axis=1)


def _check(freqs_hz, target_db, weights, n, bounds_db):
    f = np.asarray(freqs_hz, dtype=float)
    t = np.asarray(target_db, dtype=float)
    if t.shape != f.shape:
        raise DesignError(f"the target has {t.size} points, the grid {f.size}", field="target")
    w = np.ones_like(f) if weights is None else np.asarray(weights, dtype=float)
    lo, hi = (np.broadcast_to(np.asarray(b, dtype=float), (n,)).copy() for b in bounds_db)
    if np.any(lo >= hi):
        raise DesignError(f"each lower gain limit must be below its upper one, not "
                          f"{lo.tolist()} / {hi.tolist()}", field="gain_limits_db")
    return f, t, w, lo, hi


def fit_gains(level_db: Callable[[np.ndarray], np.ndarray], freqs_hz, target_db,
              start_db, bounds_db=(-12.0, 12.0), weights=None, jacobian=None,
              ridge: float = 0.0) -> FitResult:
    """Gains (dB) within bounds that make ``level_db(gains)`` follow ``target_db``.

    Minimises ``sum_f w_f (level_f - target_f)^2 + ridge * sum_k g_k^2``.

    Parameters
    ----------
    level_db : callable
        ``gains (n,) -> level in dB on the grid (m,)``: the chain or the sum.
    freqs_hz : ndarray, shape (m,)
    target_db : ndarray, shape (m,)
    start_db : array_like, shape (n,)
    bounds_db : (lo, hi)
        Scalars or arrays of shape (n,): each gain's limits in dB.
    weights : ndarray, shape (m,), optional
        Per grid point (default 1: a log grid weights every octave alike).
    jacobian : callable, optional
        ``gains -> (m, n)`` derivatives of the level; by central differences
        of ``level_db`` when not given.
    ridge : float
        Weight of the gains' own size (Tikhonov regularisation, [4]_):
        keeps a gain that barely changes the level near 0 dB instead
        of letting it drift to a limit. 0: plain least squares.

    Returns
    -------
    FitResult
        ``method='least-squares'``.
    """
    g0 = np.asarray(start_db, dtype=float)
    f, t, w, lo, hi = _check(freqs_hz, target_db, weights, len(g0), bounds_db)
    sw, sr = np.sqrt(w), np.sqrt(max(float(ridge), 0.0))
    eye = sr * np.eye(len(g0))
    base, jac = linearised(level_db, np.clip(g0, lo, hi), jacobian=jacobian)
    lin = optimize.lsq_linear(np.vstack([jac * sw[:, None], eye]),
                              np.r_[(t - base + jac @ np.clip(g0, lo, hi)) * sw,
                                    np.zeros(len(g0))],
                              bounds=(lo, hi), method="bvls")
    start = np.clip(lin.x, lo, hi)

    def resid(g):
        return np.r_[(level_db(g) - t) * sw, sr * g]

    jac_fn = "2-point" if jacobian is None else (
        lambda g: np.vstack([np.asarray(jacobian(g)) * sw[:, None], eye]))
    sol = optimize.least_squares(resid, start, jac=jac_fn, bounds=(lo, hi), method="trf",
                                 x_scale=1.0, diff_step=1e-4, max_nfev=50 * max(1, len(g0)))
    best = sol.x if np.sum(resid(sol.x) ** 2) <= np.sum(resid(start) ** 2) else start
    return _result(level_db, best, t, f, w, lo, hi, "least-squares")


def minimax_gains(level_db: Callable[[np.ndarray], np.ndarray], freqs_hz, target_db,
                  start_db, bounds_db=(-12.0, 12.0), weights=None, rounds: int = 8,
                  trust_db: float = 3.0, jacobian=None) -> FitResult:
    """Lower the worst deviation: sequential linear programming from ``start_db``.

    Each round solves ``min t`` subject to ``|w (level + J d - target)| <= t``
    on the grid, the gain limits, and ``|d| <= trust`` (linearised at the
    current gains, :func:`scipy.optimize.linprog`), and keeps the step only
    when the true worst deviation falls; otherwise the trust region halves
    ([1]_ sec. 18.1). Points of weight 0 do not count.

    Parameters
    ----------
    level_db, freqs_hz, target_db, start_db, bounds_db, weights, jacobian
        As :func:`fit_gains`.
    rounds : int
        Most linear programs solved.
    trust_db : float
        First trust region: the largest change of any gain in one round, dB.

    Returns
    -------
    FitResult
        ``method='minimax'``; never worse (in its worst deviation) than the start.
    """
    g = np.asarray(start_db, dtype=float)
    f, t, w, lo, hi = _check(freqs_hz, target_db, weights, len(g), bounds_db)
    g = np.clip(g, lo, hi)
    live = w > 0
    worst = float(np.max(np.abs(level_db(g) - t)[live] * w[live]))
    for _ in range(rounds):
        cand = _minimax_step(level_db, g, t, w, live, lo, hi, trust_db, jacobian)
        if cand is None:
            break
        new = float(np.max(np.abs(level_db(cand) - t)[live] * w[live]))
        if new < worst - 1e-9:
            g, worst = cand, new
        else:
            trust_db /= 2
            if trust_db < 1e-3:
                break
    return _result(level_db, g, t, f, w, lo, hi, "minimax")


def _minimax_step(level_db, g, t, w, live, lo, hi, trust_db, jacobian):
    """Gains after one linear program of :func:`minimax_gains` (None if it has no solution).

    Minimises ``tau`` over the step ``d`` and ``tau`` subject to
    ``|w (level + J d - target)| <= tau`` on the live points, the gain limits
    and ``|d| <= trust_db`` ([1]_ sec. 18.1).
    """
    n = len(g)
    base, jac = linearised(level_db, g, jacobian=jacobian)
    r = (base - t)[live] * w[live]
    a = jac[live] * w[live][:, None]
    # Variables: d (n), tau. Rows: a d - tau <= -r ; -a d - tau <= r.
    ones = np.ones((len(r), 1))
    a_ub = np.vstack([np.hstack([a, -ones]), np.hstack([-a, -ones])])
    b_ub = np.concatenate([-r, r])
    step_lo = np.maximum(lo - g, -trust_db)
    step_hi = np.minimum(hi - g, trust_db)
    lp = optimize.linprog(np.r_[np.zeros(n), 1.0], A_ub=a_ub, b_ub=b_ub,
                          bounds=list(zip(step_lo, step_hi)) + [(0, None)], method="highs")
    if lp.status != 0:
        return None
    return np.clip(g + lp.x[:n], lo, hi)
