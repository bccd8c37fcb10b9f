"""Pairing, ordering and gain of a band's second-order sections, without losing exact zeros.

A band's chain is a product of numerators over a product of denominators,
``H = prod N_i / prod D_i``. Any assignment of the numerators to the
denominators, and any split of the overall gain among the numerators, gives
the same ``H``. So this module never rebuilds a section from its roots:
converting to zeros, poles and gain and back (``sos2zpk`` then ``zpk2sos``)
loses zeros at ``z = -1`` when the overall gain is tiny (a low cut-off at a
high rate: 1e-19 is typical), because the conversion trims leading numerator
coefficients it takes for zero. Here each numerator keeps its shape
(``[1, 2, 1]`` stays ``[1, 2, 1]``: its zeros stay exactly at ``z = -1``);
roots are computed only to decide which numerator goes with which
denominator.

* :func:`pair_sections`: each denominator, the poles nearest the unit circle
  first, takes the numerator whose zeros lie nearest its poles, and the
  sections are ordered with those high-Q sections last (Jackson [1]_
  sec. 11.4).
* :func:`scale_sections`: every numerator is scaled so that the signal after
  each section peaks at full scale for a full-scale sine at any frequency
  (L-infinity scaling of the cascade, Jackson [1]_ sec. 11.3; Oppenheim and
  Schafer [2]_ sec. 6.9); what is left of the band's gain is one factor
  after the chain.

References
----------
.. [1] L. B. Jackson, "Digital Filters and Signal Processing", 3rd ed.,
   Kluwer, 1996, sec. 11.3 (scaling), 11.4 (pairing and ordering).
.. [2] A. V. Oppenheim and R. W. Schafer, "Discrete-Time Signal Processing",
   3rd ed., Prentice Hall, 2010, sec. 6.9.
.. [3] W. H. Press et al., "Numerical Recipes", 3rd ed., 2007, sec. 5.6
   (roots of a quadratic without cancellation).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from planner.errors import DesignError

__all__ = ["quadratic_roots", "integer_shape", "pair_sections", "ScaledSections",
           "scale_sections", "peak_grid"]


def _check(sos) -> np.ndarray:
    s = np.asarray(sos, dtype=float)
    if s.ndim != 2 or s.shape[1] != 6:
        raise DesignError(f"must have shape (n, 6), not {np.shape(sos)}", field="sos")
    if not np.all(np.isfinite(s)):
        raise DesignError("coefficients must be finite numbers, found nan or inf", field="sos")
    return s


def quadratic_roots(c) -> np.ndarray:
    """Roots in ``z`` of ``c0 + c1 z^-1 + c2 z^-2`` for each row of ``c`` (shape (n, 3)).

    The roots of ``c0 z^2 + c1 z + c2``, by the cancellation-free form of the
    quadratic formula [3]_; a missing ``z^2`` term (``c0 = 0``) gives a root
    at infinity, a missing constant term (``c2 = 0``) a root at ``z = 0``.

    Returns
    -------
    roots : ndarray, shape (n, 2), complex
    """
    c = np.atleast_2d(np.asarray(c, dtype=float))
    c0, c1, c2 = c[:, 0].astype(complex), c[:, 1].astype(complex), c[:, 2].astype(complex)
    disc = np.sqrt(c1 * c1 - 4.0 * c0 * c2)
    # Pick the sign that avoids cancellation: q = -(c1 + sign * sqrt(disc)) / 2.
    sgn = np.where(np.real(np.conj(c1) * disc) >= 0, 1.0, -1.0)
    q = -0.5 * (c1 + sgn * disc)
    with np.errstate(divide="ignore", invalid="ignore"):
        r1 = np.where(c0 != 0, q / np.where(c0 != 0, c0, 1.0), np.inf)
        r2 = np.where(q != 0, c2 / np.where(q != 0, q, 1.0), np.where(c0 != 0, 0.0, np.inf))
    # c0 = 0: a first-order polynomial c1 z + c2 with root -c2 / c1 (and one at infinity).
    lin = (c0 == 0) & (c1 != 0)
    with np.errstate(over="ignore", invalid="ignore"):      # a root beyond float range: inf
        r2 = np.where(lin, -c2 / np.where(c1 != 0, c1, 1.0), r2)
    return np.stack([r1, r2], axis=1)


def integer_shape(b) -> np.ndarray | None:
    """``b`` divided by its first non-zero coefficient, when that gives whole numbers.

    ``[k, 2k, k] -> [1, 2, 1]``, ``[k, 0, -k] -> [1, 0, -1]``, ``[k, k, 0] -> [1, 1, 0]``:
    numerators whose zeros sit exactly at ``z = +1``, ``z = -1`` or ``z = 0``, as the
    bilinear transform makes them. None for any other numerator.
    """
    b = np.asarray(b, dtype=float)
    nz = np.flatnonzero(b)
    if not len(nz):
        return None
    shape = b / b[nz[0]]
    if np.all(np.abs(shape) <= 2) and np.all(shape == np.round(shape)):
        return shape
    return None


def pair_sections(sos) -> np.ndarray:
    """Pair each denominator with the nearest numerator and order the sections, high-Q last.

    Parameters
    ----------
    sos : ndarray, shape (n, 6)
        The band's sections as designed, ``[b0, b1, b2, 1, a1, a2]``.

    Returns
    -------
    sos : ndarray, shape (n, 6)
        The same numerators and denominators, coefficient for coefficient,
        re-assigned and re-ordered: the product of the chain is unchanged
        up to the order of floating-point multiplication.

    Notes
    -----
    Denominators are taken in order of decreasing pole radius; each takes the
    numerator, of those left, with a zero nearest its outer pole (ties:
    the numerator first in the chain). The sections are then ordered by
    increasing pole radius, so that the poles nearest the unit circle come
    last, where the signal has already been shaped by the others ([1]_
    sec. 11.4).
    """
    s = _check(sos)
    n = len(s)
    if n < 2:
        return s.copy()
    poles = quadratic_roots(s[:, 3:6])
    zeros = quadratic_roots(s[:, 0:3])
    radius = np.max(np.abs(poles), axis=1)
    outer = poles[np.arange(n), np.argmax(np.abs(poles), axis=1)]
    # Distance of each denominator's outer pole to each numerator's nearest zero.
    with np.errstate(invalid="ignore"):
        dist = np.min(np.abs(outer[:, None, None] - zeros[None, :, :]), axis=2)
    dist = np.where(np.isfinite(dist), dist, np.inf)
    free = np.ones(n, dtype=bool)
    numerator_of = np.empty(n, dtype=int)
    for d in np.argsort(-radius, kind="stable"):      # a loop over sections, not frequencies
        cand = np.where(free, dist[d], np.inf)
        j = int(np.argmin(cand)) if np.isfinite(cand).any() else int(np.flatnonzero(free)[0])
        numerator_of[d] = j
        free[j] = False
    order = np.argsort(radius, kind="stable")
    out = np.empty_like(s)
    out[:, 0:3] = s[numerator_of[order], 0:3]
    out[:, 3:6] = s[order, 3:6]
    return out


def peak_grid(sos, points: int = 4096) -> np.ndarray:
    """Normalised angular frequencies (rad/sample) on which section peaks are sought.

    A linear grid over ``[0, pi]`` and a logarithmic one from ``1e-6 pi`` to
    ``pi``, plus the angles of every pole (where a resonance peaks), so that
    narrow peaks and peaks near DC of a low cut-off at a high rate are seen.
    """
    s = _check(sos)
    poles = quadratic_roots(s[:, 3:6]).ravel()
    ang = np.abs(np.angle(poles[np.isfinite(poles)]))
    return np.unique(np.concatenate([np.linspace(0.0, np.pi, points),
                                     np.pi * np.geomspace(1e-6, 1.0, points), ang]))


def _section_h(s: np.ndarray, w: np.ndarray) -> np.ndarray:
    """Per-section complex responses on ``w`` (rad/sample), shape (n, len(w))."""
    z1 = np.exp(-1j * w)[None, :]
    num = s[:, 0:1] + z1 * (s[:, 1:2] + z1 * s[:, 2:3])
    den = s[:, 3:4] + z1 * (s[:, 4:5] + z1 * s[:, 5:6])
    return num / den


@dataclass(frozen=True)
class ScaledSections:
    """Sections whose numerators were scaled, and the factor that restores the band.

    Attributes
    ----------
    sos : ndarray, shape (n, 6)
        Scaled sections; each numerator keeps its shape (its zeros).
    gain : float
        Linear factor after the chain: ``gain * chain(sos)`` equals the
        original chain.
    """

    sos: np.ndarray
    gain: float


def scale_sections(sos, w=None) -> ScaledSections:
    """Scale each numerator so that the cascade peaks at 0 dB after every section.

    For a full-scale sine of any frequency, the signal after section ``k``
    has amplitude ``|H_1 ... H_k|``; each numerator is scaled so that the
    largest of these over frequency is 1 (L-infinity scaling, [1]_
    sec. 11.3, [2]_ sec. 6.9). The band's own gain (what the chain had at its
    peak) is returned as one factor to apply after the chain. Scale factors
    are handled as logarithms, so a chain whose designed numerators multiply
    to 1e-60 or less is scaled without underflow.

    Parameters
    ----------
    sos : ndarray, shape (n, 6)
    w : ndarray, optional
        Grid in rad/sample for the peaks (default :func:`peak_grid`).

    Returns
    -------
    ScaledSections
    """
    s = _check(sos)
    n = len(s)
    if n == 0:
        return ScaledSections(s.copy(), 1.0)
    w = peak_grid(s) if w is None else np.asarray(w, dtype=float)
    lead = np.max(np.abs(s[:, 0:3]), axis=1)
    if np.any(lead == 0):
        raise DesignError(f"section {int(np.flatnonzero(lead == 0)[0]) + 1} has an all-zero "
                          "numerator", field="sos")
    shapes = s.copy()
    shapes[:, 0:3] /= lead[:, None]                  # largest numerator coefficient 1
    log_gain = float(np.sum(np.log(lead)))           # the product of what was taken out
    cum = np.cumprod(_section_h(shapes, w), axis=0)
    peaks = np.max(np.abs(cum), axis=1)
    if np.any(peaks <= 0) or not np.all(np.isfinite(peaks)):
        raise DesignError("the chain has no finite non-zero peak", field="sos")
    log_peak = np.log(peaks)
    # Section k's factor makes the cumulative peak after it 1: s_k = P_{k-1} / P_k.
    log_s = -np.diff(np.concatenate([[0.0], log_peak]))
    out = shapes.copy()
    out[:, 0:3] *= np.exp(log_s)[:, None]
    return ScaledSections(out, float(np.exp(log_gain + log_peak[-1])))
