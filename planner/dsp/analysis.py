"""Summed-response measures: grid, flatness, crossings, headroom.

Pure functions on arrays. The project-level report that strings them
together lives in :mod:`planner.engine`.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Callable

import numpy as np

__all__ = ["log_grid", "db", "flatness", "find_crossings", "Crossing", "wrap_deg",
           "peak_gain"]

_TINY = 1e-300


def log_grid(f_min_hz: float, f_max_hz: float, points: int, extra_hz=()) -> np.ndarray:
    """``points`` log-spaced frequencies from f_min to f_max, with ``extra_hz`` inside the range added."""
    f = np.geomspace(f_min_hz, f_max_hz, int(points))
    extra = np.asarray([x for x in extra_hz if f_min_hz < x < f_max_hz], dtype=float)
    return np.unique(np.concatenate([f, extra]))


def db(h: np.ndarray) -> np.ndarray:
    """Magnitude in dB, ``20 log10 |h|`` (a floor of 1e-300 keeps exact zeros finite)."""
    return 20.0 * np.log10(np.maximum(np.abs(h), _TINY))


def wrap_deg(deg):
    """Wrap angles in degrees to (-180, 180]."""
    w = np.mod(np.asarray(deg, dtype=float) + 180.0, 360.0) - 180.0
    return np.where(w == -180.0, 180.0, w)


def flatness(freqs_hz: np.ndarray, h_sum: np.ndarray, target_db: np.ndarray | float = 0.0):
    """Largest deviation of the sum from the target.

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


def find_crossings(freqs_hz: np.ndarray, h: np.ndarray,
                   evaluate: Callable[[np.ndarray], np.ndarray] | None = None,
                   refine_steps: int = 3) -> list[Crossing]:
    """Crossings of every pair of rows of ``h`` (bands) on the grid.

    A crossing is a change of sign of the level difference in dB between two
    neighbouring grid points. Its frequency is found by linear interpolation
    of the difference against log frequency, then refined by secant steps on
    the exact response when ``evaluate`` (frequencies -> responses of all
    bands, shape (n_bands, n)) is given. All pairs and all crossings are
    found in a few array operations.

    Parameters
    ----------
    freqs_hz : ndarray, shape (n,)
    h : ndarray, shape (n_bands, n), complex
    evaluate : callable, optional
    refine_steps : int

    Returns
    -------
    list of Crossing, ordered by pair then frequency.
    """
    nb = len(h)
    if nb < 2:
        return []
    m = db(h)
    ia, ib = np.triu_indices(nb, k=1)
    diff = m[ia] - m[ib]                       # (pairs, n)
    s = np.sign(diff)
    # A touch (diff exactly 0 at a grid point) counts once: where the sign
    # changes across it, or where it is exact and its neighbours differ.
    change = (s[:, :-1] * s[:, 1:] < 0) | ((s[:, :-1] != 0) & (s[:, 1:] == 0))
    pk, jk = np.nonzero(change)
    if len(pk) == 0:
        return []
    lf = np.log(freqs_hz)
    d0, d1 = diff[pk, jk], diff[pk, jk + 1]
    t = np.where(d1 == d0, 0.0, d0 / (d0 - d1))
    lo, hi = lf[jk], lf[jk + 1]
    x = lo + t * (hi - lo)
    a_idx, b_idx = ia[pk], ib[pk]
    if evaluate is not None:
        # Secant refinement on the exact difference, bracketed by the grid cell.
        x_prev, d_prev = lo.copy(), d0.copy()
        for _ in range(refine_steps):
            hv = evaluate(np.exp(x))
            dv = db(hv[a_idx, np.arange(len(x))]) - db(hv[b_idx, np.arange(len(x))])
            denom = dv - d_prev
            step = np.where(np.abs(denom) > 1e-15, dv * (x - x_prev) / np.where(
                np.abs(denom) > 1e-15, denom, 1.0), 0.0)
            x_prev, d_prev = x, dv
            x = np.clip(x - step, lo, hi)
        hv = evaluate(np.exp(x))
        ha, hb = hv[a_idx, np.arange(len(x))], hv[b_idx, np.arange(len(x))]
    else:
        ha = h[a_idx, jk] + t * (h[a_idx, jk + 1] - h[a_idx, jk])
        hb = h[b_idx, jk] + t * (h[b_idx, jk + 1] - h[b_idx, jk])
    phase = wrap_deg(np.degrees(np.angle(ha) - np.angle(hb)))
    level = 0.5 * (db(ha) + db(hb))
    freq = np.exp(x)
    out = [Crossing(int(a), int(b), float(f), float(p), float(lv))
           for a, b, f, p, lv in zip(a_idx, b_idx, freq, phase, level)]
    out.sort(key=lambda c: (c.a, c.b, c.freq_hz))
    return out
