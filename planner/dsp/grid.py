"""Where to look: an analysis grid that sees narrow features, bounded in size.

A log-spaced grid misses what is narrower than its spacing: a notch of Q 300
at 3150 Hz is 10.5 Hz wide, a 1024-point grid from 20 Hz to 20 kHz is 21 Hz
apart there. The features of a chain of second-order sections are its poles
and zeros near the unit circle, and both are known in closed form, so the
grid is built around them rather than made denser everywhere:

1. :func:`section_roots` solves each section's two quadratics (numerator and
   denominator) in closed form, all sections at once.
2. :func:`narrow_features` keeps the roots near the unit circle: a root at
   ``r e^{j theta}`` shapes the response near ``f0 = theta fs / (2 pi)`` over
   a bandwidth of about ``(1 - r) fs / pi`` Hz (the -3 dB bandwidth of a
   resonance of radius ``r``: Oppenheim and Schafer, sec. 5.3 and 6.3).
3. :func:`feature_points` adds, for the narrowest features (a bounded
   number), points at ``f0`` and at multiples of the bandwidth either side.
4. :func:`fast_cells` splits the cells where a response still changes
   fast between neighbouring points (a bounded number per pass).
5. :func:`zoom_extremes` refines local extremes by exact evaluation: a
   bracketed zoom search, all extremes at once.

Pure numpy; the numbers (how near, how many, how far) are in
:mod:`planner.config`.

References
----------
.. [1] A. V. Oppenheim and R. W. Schafer, "Discrete-Time Signal Processing",
   3rd ed., Prentice Hall, 2010, sec. 5.3 (frequency response of a pole or
   zero pair, its bandwidth) and sec. 6.3 (cascade of second-order sections).
.. [2] W. H. Press et al., "Numerical Recipes", 3rd ed., Cambridge, 2007,
   sec. 5.6 (roots of a quadratic without cancellation).
"""

from __future__ import annotations

from typing import Callable

import numpy as np

from planner import config

__all__ = ["quadratic_roots", "section_roots", "narrow_features", "feature_points",
           "fast_cells", "zoom_extremes", "local_extremes"]


def quadratic_roots(c0: np.ndarray, c1: np.ndarray, c2: np.ndarray) -> np.ndarray:
    """Both roots of ``c0 z^2 + c1 z + c2`` for arrays of real coefficients, shape (..., 2).

    ``q = -(c1 + sign(c1) sqrt(c1^2 - 4 c0 c2)) / 2``, roots ``q / c0`` and
    ``c2 / q`` (Press et al. [2]_ sec. 5.6: no cancellation between ``c1``
    and the square root). A missing root (``c0 = 0``: the polynomial is of
    lower degree) is ``inf`` or ``nan``; callers keep the finite ones.
    """
    c0, c1, c2 = (np.asarray(c, dtype=float) for c in (c0, c1, c2))
    sq = np.sqrt((c1 * c1 - 4.0 * c0 * c2).astype(complex))
    q = -0.5 * (c1 + np.where(c1 >= 0, 1.0, -1.0) * sq)
    with np.errstate(divide="ignore", invalid="ignore"):
        return np.stack([q / c0, c2 / q], axis=-1)


def section_roots(sos: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Zeros and poles of each section ``[b0, b1, b2, a0, a1, a2]``, each of shape (n, 2).

    ``b0 + b1 z^-1 + b2 z^-2 = 0`` is ``b0 z^2 + b1 z + b2 = 0``, and the
    same for the denominator.
    """
    s = np.asarray(sos, dtype=float).reshape(-1, 6)
    return (quadratic_roots(s[:, 0], s[:, 1], s[:, 2]),
            quadratic_roots(s[:, 3], s[:, 4], s[:, 5]))


def narrow_features(sos: np.ndarray, fs_hz: float,
                    near: float = config.GRID_NEAR_CIRCLE) -> tuple[np.ndarray, np.ndarray]:
    """Centre frequencies and bandwidths (Hz) of the poles and zeros near the unit circle.

    A root ``r e^{j theta}`` with ``0 < theta < pi`` and ``|1 - r| < near``
    is a feature at ``f0 = theta fs / (2 pi)``. A pole's bandwidth is
    ``(1 - r) fs / pi``; a zero's is the larger of its own and that of its
    section's poles (a notch's zeros sit on the circle, and its width is set
    by its poles).

    Parameters
    ----------
    sos : ndarray, shape (n, 6)
    fs_hz : float
    near : float
        Largest distance ``|1 - r|`` from the unit circle looked at.

    Returns
    -------
    f0_hz, bandwidth_hz : ndarray, shape (k,)
    """
    s = np.asarray(sos, dtype=float).reshape(-1, 6)
    if not len(s):
        return np.zeros(0), np.zeros(0)
    zeros, poles = section_roots(s)
    pole_r = np.abs(np.where(np.isfinite(poles), poles, 0.0))
    d_pole = np.abs(1.0 - pole_r)
    # Width a zero of the section cannot be narrower than: its nearest pole's distance.
    d_sec = 1.0 - pole_r.max(axis=1)
    d_zero = np.maximum(np.abs(1.0 - np.abs(zeros)), np.abs(d_sec)[:, None])
    roots = np.concatenate([zeros.ravel(), poles.ravel()])
    dist = np.concatenate([np.abs(1.0 - np.abs(zeros)).ravel(), d_pole.ravel()])
    width = np.concatenate([d_zero.ravel(), d_pole.ravel()])
    with np.errstate(invalid="ignore"):
        keep = np.isfinite(roots) & (roots.imag > 0) & (dist < near)
    theta = np.angle(roots[keep])
    return theta * fs_hz / (2.0 * np.pi), width[keep] * fs_hz / np.pi


def feature_points(f0_hz: np.ndarray, bandwidth_hz: np.ndarray, f_min_hz: float,
                   f_max_hz: float, points: int,
                   narrow_spacings: float = config.GRID_NARROW_SPACINGS,
                   max_features: int = config.GRID_FEATURES_MAX,
                   offsets=config.GRID_FEATURE_OFFSETS) -> np.ndarray:
    """Grid points for the narrow features: each centre and ``f0 +/- k B`` for ``k`` in
    ``offsets``, inside ``(f_min, f_max)``.

    A feature is narrow when its bandwidth ``B`` is below ``narrow_spacings``
    spacings of a ``points``-point log grid at ``f0`` (``f0 (rho - 1)`` with
    ``rho = (f_max / f_min)^(1 / (points - 1))``); wider ones are already
    sampled well. At most ``max_features`` features are kept, the narrowest
    (relative to the grid) first, so the count is bounded whatever the
    number of filters: at most ``max_features (2 len(offsets) + 1)`` points.

    Parameters
    ----------
    f0_hz, bandwidth_hz : ndarray, shape (k,)
        Centres and bandwidths in Hz (:func:`narrow_features`).
    f_min_hz, f_max_hz : float
        The analysis range in Hz.
    points : int
        Points of the log grid the features are compared with.
    narrow_spacings : float
        A feature narrower than this many grid spacings at its centre gets points.
    max_features : int
        Most features given points.
    offsets : sequence of float
        Multiples ``k`` of the bandwidth either side of each centre.

    Returns
    -------
    ndarray
        The points in Hz, inside ``(f_min_hz, f_max_hz)``.
    """
    f0 = np.asarray(f0_hz, dtype=float)
    bw = np.asarray(bandwidth_hz, dtype=float)
    if not len(f0):
        return np.zeros(0)
    k = np.asarray(offsets, dtype=float)
    reach = k.max() if len(k) else 0.0
    rho = (f_max_hz / f_min_hz) ** (1.0 / max(1, int(points) - 1))
    rel = bw / (f0 * (rho - 1.0))
    keep = (rel < narrow_spacings) & (f0 + reach * bw > f_min_hz) & (f0 - reach * bw < f_max_hz)
    f0, bw, rel = f0[keep], bw[keep], rel[keep]
    # The same feature from several sections (an LR8's repeated sections) counts once.
    key = np.round(np.log(f0), 9) + 1j * np.round(np.log(np.maximum(bw, 1e-300)), 9)
    _, first = np.unique(key, return_index=True)
    f0, bw, rel = f0[first], bw[first], rel[first]
    order = np.argsort(rel, kind="stable")[:max_features]
    f0, bw = f0[order], bw[order]
    pts = (f0[:, None] + bw[:, None] * np.concatenate([-k[::-1], [0.0], k])[None, :]).ravel()
    return pts[(pts > f_min_hz) & (pts < f_max_hz)]


def fast_cells(freqs_hz: np.ndarray, levels_db: np.ndarray, floors_db: np.ndarray,
               step_db: float = config.GRID_REFINE_STEP_DB,
               max_cells: int = config.GRID_REFINE_CELLS,
               split: int = config.GRID_REFINE_SPLIT) -> np.ndarray:
    """New points inside the cells where a level changes by more than ``step_db``.

    Parameters
    ----------
    freqs_hz : ndarray, shape (n,)
        Increasing.
    levels_db : ndarray, shape (k, n)
        Levels in dB (the sum's, each band's).
    floors_db : ndarray, shape (k,)
        A cell counts for row ``i`` only where one of its ends is at or above
        ``floors_db[i]`` (``-inf``: everywhere), so that a band's deep stop
        band (an FIR's lobes) is left alone.
    step_db, max_cells, split : as in :mod:`planner.config`
        The ``max_cells`` cells that change most are each split into
        ``split + 1`` equal parts in log frequency.

    Returns
    -------
    ndarray
        The new points (sorted), at most ``max_cells * split``.
    """
    f = np.asarray(freqs_hz, dtype=float)
    lv = np.atleast_2d(np.asarray(levels_db, dtype=float))
    if len(f) < 2:
        return np.zeros(0)
    a, b = lv[:, :-1], lv[:, 1:]
    jump = np.abs(b - a)
    # Cells below the row's floor, and non-finite jumps (NaN fails the comparison), count 0.
    counts = (np.maximum(a, b) >= np.asarray(floors_db, float)[:, None]) & (jump < np.inf)
    change = np.where(counts, jump, 0.0).max(axis=0)
    cells = np.nonzero(change > step_db)[0]
    if not len(cells):
        return np.zeros(0)
    cells = cells[np.argsort(-change[cells], kind="stable")[:max_cells]]
    t = np.arange(1, split + 1) / (split + 1.0)
    lf = np.log(f)
    lo, hi = lf[cells], lf[cells + 1]
    pts = np.exp(lo[:, None] + (hi - lo)[:, None] * t[None, :]).ravel()
    return np.sort(pts[(pts > f[cells].min()) & (pts < f[cells + 1].max())])


def local_extremes(values: np.ndarray, count: int) -> np.ndarray:
    """Indices of the ``count`` largest local maxima of ``values`` (ends included), largest
    first."""
    v = np.asarray(values, dtype=float)
    n = len(v)
    if n == 0:
        return np.zeros(0, dtype=np.intp)
    left = np.concatenate([[-np.inf], v[:-1]])
    right = np.concatenate([v[1:], [-np.inf]])
    peaks = np.nonzero((v >= left) & (v >= right) & np.isfinite(v))[0]
    return peaks[np.argsort(-v[peaks], kind="stable")[:count]]


def zoom_extremes(value: Callable[[np.ndarray, np.ndarray], np.ndarray], lo_hz: np.ndarray,
                  hi_hz: np.ndarray, x0_hz: np.ndarray, v0: np.ndarray,
                  points: int = config.GRID_ZOOM_POINTS,
                  steps: int = config.GRID_ZOOM_STEPS, xtol: float = config.GRID_ZOOM_XTOL,
                  vtol: float = config.GRID_ZOOM_VTOL):
    """Refine maxima by exact evaluation, each in its own bracket, all at once.

    Candidate ``c`` maximises ``value(c, f)`` over ``[lo_hz[c], hi_hz[c]]``,
    starting from ``x0_hz[c]`` (a grid point in the bracket) with value
    ``v0[c]``. Each step evaluates ``points`` trial frequencies spread
    evenly in log frequency across each bracket, keeps the best point so far
    and narrows the bracket to that point's neighbours (a zoom search: the
    bracket shrinks by at least ``(points + 1) / 2`` per step). The result is
    never worse than the start.

    Parameters
    ----------
    value : callable
        ``value(candidates, freqs_hz)`` for flat arrays of candidate indices and
        frequencies (shape (m,)) -> values to maximise, shape (m,).
    lo_hz, hi_hz, x0_hz, v0 : ndarray, shape (n,)
    points, steps : int
    xtol, vtol : float
        A candidate is done when its bracket is ``xtol`` narrow in natural-log
        frequency, or when two steps in a row have raised its value by at most
        ``vtol``.

    Returns
    -------
    x_hz, v : ndarray, shape (n,)
        The best point of each candidate and its value.
    """
    lo = np.log(np.asarray(lo_hz, dtype=float))
    hi = np.log(np.asarray(hi_hz, dtype=float))
    xb = np.log(np.asarray(x0_hz, dtype=float))
    vb = np.asarray(v0, dtype=float).copy()
    n = len(lo)
    if not n:
        return np.exp(xb), vb
    t = np.arange(1, points + 1) / (points + 1.0)
    still = np.zeros(n, dtype=int)                       # steps in a row without gain
    for _ in range(steps):
        k = np.nonzero((hi - lo > xtol) & (still < 2))[0]
        if not len(k):
            break
        xs = lo[k, None] + (hi - lo)[k, None] * t[None, :]
        vs = np.asarray(value(np.repeat(k, points), np.exp(xs.ravel())),
                        dtype=float).reshape(len(k), points)
        vs = np.where(np.isfinite(vs), vs, -np.inf)
        _zoom_in(k, xs, vs, lo, hi, xb, vb, still, vtol)
    return np.exp(xb), vb


def _zoom_in(k, xs, vs, lo, hi, xb, vb, still, vtol) -> None:
    """One step of :func:`zoom_extremes` for candidates ``k``, in place.

    ``xs``, ``vs`` (shape (len(k), points)) are the trial points (log Hz) and
    their values. The best so far (a trial point, or the old best) and its
    neighbours among the trial points (or the bracket's ends) make the new
    bracket ``[lo, hi]``; ``still`` counts the steps in a row that gained at
    most ``vtol``.
    """
    points = xs.shape[1]
    rows = np.arange(len(k))
    j = np.argmax(vs, axis=1)
    gain = vs[rows, j] - vb[k]
    moved = gain > 0
    still[k] = np.where(gain > vtol, 0, still[k] + 1)
    xk = np.where(moved, xs[rows, j], xb[k])
    xb[k] = xk
    vb[k] = np.where(moved, vs[rows, j], vb[k])
    below = (xs < xk[:, None]).sum(axis=1)           # trial points left of the best
    above = below + np.where(moved, 1, 0)            # first trial point right of it
    lo[k] = np.where(below > 0, xs[rows, np.maximum(below - 1, 0)], lo[k])
    hi[k] = np.where(above < points, xs[rows, np.minimum(above, points - 1)], hi[k])
