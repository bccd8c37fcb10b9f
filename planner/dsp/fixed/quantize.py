"""Second-order sections rounded to a DSP's number format, with a post-shift per section.

The recursion a DSP runs for a section is
``y[n] = b0 x[n] + b1 x[n-1] + b2 x[n-2] - a1 y[n-1] - a2 y[n-2]``: ``a0`` is
implicitly 1 and is never stored, so it is not quantised here.

A section whose coefficients do not fit its format
(:mod:`planner.dsp.fixed.formats`) is stored divided by a power of two,
``2**k``, with a matching *post-shift*: the DSP shifts the section's
accumulator left by ``k`` bits, which runs the design's section exactly. This
is how general-purpose fixed-point biquad code holds the sections of a low
cut-off at a high rate, whose ``a1`` is close to ``-2`` and does not fit
``q1.N``. Numerators whose zeros sit exactly at ``z = +1`` or ``z = -1`` (as
the bilinear transform puts them) keep them exactly: their common factor is
rounded, not each coefficient.

The sensitivity of pole positions to coefficient rounding grows as the
poles approach ``z = 1`` (low cut-off relative to the sample rate): see
[1]_ sec. 6.7-6.9 and [2]_. Section pairing, ordering and scaling live in
:mod:`planner.dsp.fixed.sections` ([3]_).

References
----------
.. [1] A. V. Oppenheim and R. W. Schafer, "Discrete-Time Signal Processing",
   3rd ed., Prentice Hall, 2010, sec. 6.7 (effects of coefficient
   quantisation), 6.8-6.9 (round-off noise and scaling in cascade forms).
.. [2] J. F. Kaiser, "Digital Filters", ch. 7 of F. F. Kuo and J. F. Kaiser
   (eds.), "System Analysis by Digital Computer", Wiley, 1966 (coefficient
   sensitivity of clustered poles).
.. [3] L. B. Jackson, "Digital Filters and Signal Processing", 3rd ed.,
   Kluwer, 1996, sec. 11.4 (pairing poles with the nearest zeros, section
   ordering for low noise and headroom).
.. [5] W. H. Press et al., "Numerical Recipes", 3rd ed., Cambridge, 2007,
   sec. 5.6 (roots of a quadratic without cancellation).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from planner.dsp.fixed.formats import Arith, parse_arith
from planner.dsp.fixed.sections import integer_shape
from planner.errors import ExportError

__all__ = ["QuantizedSos", "pole_radius", "unshift", "check_sos", "post_shifts", "quantize_sos"]


def pole_radius(sos) -> np.ndarray:
    """Largest pole radius of each section, in closed form.

    The poles of ``1 + a1 z^-1 + a2 z^-2`` are the roots of
    ``z^2 + a1 z + a2``. Complex pair (``a1^2 < 4 a2``): radius
    ``sqrt(a2)``. Real pair: ``q = -(a1 + sign(a1) sqrt(a1^2 - 4 a2)) / 2``
    and ``a2 / q``, the cancellation-free form of the quadratic formula
    (Press et al., "Numerical Recipes", 3rd ed., sec. 5.6).

    Parameters
    ----------
    sos : ndarray, shape (n, 6)

    Returns
    -------
    radius : ndarray, shape (n,)
    """
    sos = np.atleast_2d(np.asarray(sos, dtype=float))
    a1, a2 = sos[:, 4] / sos[:, 3], sos[:, 5] / sos[:, 3]
    disc = a1 * a1 - 4.0 * a2
    complex_pair = disc < 0
    root_disc = np.sqrt(np.where(complex_pair, 0.0, disc))
    sgn = np.where(a1 >= 0, 1.0, -1.0)
    q = -0.5 * (a1 + sgn * root_disc)
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        other = np.where(q != 0, a2 / np.where(q != 0, q, 1.0), 0.0)
    real_r = np.maximum(np.abs(q), np.abs(other))
    return np.where(complex_pair, np.sqrt(np.abs(a2)), real_r)


@dataclass
class QuantizedSos:
    """Sections rounded to a format, and what that did.

    Attributes
    ----------
    arith : Arith
    sos : ndarray, shape (n, 6)
        The stored coefficients ``[b0, b1, b2, 1, a1, a2]``: each section's
        five coefficients divided by ``2**shifts`` and rounded (``a0 = 1`` is
        implicit and not stored).
    shifts : ndarray of int, shape (n,)
        Post-shift of each section: the DSP computes the section's
        accumulator with the stored coefficients and shifts it left by this
        many bits (multiplies it by ``2**shift``) to get the output, so
        ``y = 2**k (b' x - a' y_prev)`` runs the design's section exactly.
    overflow : ndarray of bool, shape (n,)
        The section would need a post-shift of more than :attr:`Arith.word_bits` - 1
        bits: the format cannot hold it.
    saturated : ndarray of bool, shape (n,)
        Some coefficient of the section was clipped to the range.
    max_coef_error : float
        Largest ``|effective - original|`` over all coefficients, in the
        original (unshifted) scale.
    pole_radius : ndarray, shape (n,)
        Largest pole radius of each section as the DSP runs it.
    stable : bool
        All pole radii below 1.
    """

    arith: Arith
    sos: np.ndarray
    shifts: np.ndarray
    overflow: np.ndarray
    saturated: np.ndarray
    max_coef_error: float
    pole_radius: np.ndarray
    stable: bool

    @property
    def effective_sos(self) -> np.ndarray:
        """Sections the DSP effectively runs: every stored coefficient times ``2**shift``."""
        return unshift(self.sos, self.shifts)

    @property
    def ok(self) -> bool:
        """Stable and no section overflowed or saturated."""
        return bool(self.stable and not self.overflow.any() and not self.saturated.any())


def unshift(stored, shifts) -> np.ndarray:
    """Sections as a DSP runs them: stored ``[b0, b1, b2, 1, a1, a2]`` times ``2**shift``.

    The inverse of storing a section with a post-shift ``k``: every
    coefficient but ``a0`` is multiplied by ``2**k``.
    """
    out = np.array(stored, dtype=float, copy=True).reshape(-1, 6)
    k = (2.0 ** np.asarray(shifts, dtype=float))[:, None]
    out[:, 0:3] *= k
    out[:, 4:6] *= k
    return out


def check_sos(sos, field: str = "sos") -> np.ndarray:
    """Sections as a float array of shape (n, 6), n >= 1, finite, with ``a0 = 1`` in every row."""
    s = np.asarray(sos, dtype=float)
    if s.ndim != 2 or s.shape[1] != 6 or len(s) == 0:
        raise ExportError(f"must have shape (n, 6) with n >= 1, not {np.shape(sos)}", field=field)
    if not np.all(np.isfinite(s)):
        raise ExportError("coefficients must be finite numbers, found nan or inf", field=field)
    if not np.allclose(s[:, 3], 1.0, rtol=0, atol=1e-12):
        raise ExportError(f"a0 must be 1 in every section, found {s[:, 3].tolist()}", field=field)
    return s


def post_shifts(sos, arith: Arith | str) -> np.ndarray:
    """Smallest post-shift ``k >= 0`` per section that puts all five coefficients in range.

    Fixed point only (0 for floating point): ``[b0, b1, b2, a1, a2] / 2**k``
    must lie in ``[min_value, max_value]``. A section of a low cut-off has
    ``a1`` near -2, which needs ``k = 1`` in ``q1.N`` formats and ``k = 0``
    in ``q2.N``.
    """
    a = parse_arith(arith) if isinstance(arith, str) else arith
    s = check_sos(sos)
    five = s[:, [0, 1, 2, 4, 5]]
    shifts = np.zeros(len(s), dtype=int)
    if a.kind != "fixed":
        return shifts
    top = np.max(np.abs(five), axis=1)
    limit = a.word_bits - 1
    while True:
        bad = ~np.all(a.holds(five / (2.0 ** shifts)[:, None]), axis=1) & (shifts <= limit)
        if not bad.any():
            return shifts
        # Jump to a lower bound, then step: |c| / 2**k <= 2**(M-1) needs
        # k >= log2(|c|) - (M-1) for the largest |c|.
        low = np.floor(np.log2(np.maximum(top[bad], 1e-300) / -a.min_value)).astype(int)
        shifts[bad] = np.maximum(shifts[bad] + 1, np.minimum(low, limit + 1))


def _round_numerators(b: np.ndarray, a: Arith):
    """Round numerators; one whose shape is whole numbers (zeros at +-1, 0) keeps its shape.

    ``q [1, 2, 1]`` is stored as ``round(q) [1, 2, 1]``, so its zeros stay
    exactly at ``z = -1`` after rounding (rounding the three coefficients one
    by one would move them off the unit circle).
    """
    q, sat = a.quantize(b)
    for i in range(len(b)):             # a loop over sections, not frequencies
        shape = integer_shape(b[i])
        if shape is None:
            continue
        lead = b[i][np.flatnonzero(b[i])[0]]
        ql, sl = a.quantize(np.array([lead]))
        cand = ql[0] * shape
        if np.all(a.holds(cand)):
            q[i], sat[i] = cand, np.repeat(sl, 3)
    return q, sat


def quantize_sos(sos, arith: Arith | str) -> QuantizedSos:
    """Round sections to ``arith``, with a post-shift per section where the values do not fit.

    Parameters
    ----------
    sos : ndarray, shape (n, 6)
        Rows ``[b0, b1, b2, 1, a1, a2]``.
    arith : Arith or str
        Target format (a string goes through :func:`parse_arith`).

    Returns
    -------
    QuantizedSos

    Notes
    -----
    For fixed point, each section is divided by the smallest power of two
    that puts its five coefficients in range (:func:`post_shifts`) and then
    rounded; the DSP shifts the section's accumulator left by as many bits,
    which is how general-purpose fixed-point biquad code holds sections whose
    ``|a1|`` is near 2 in a ``q1.N`` word. Numerators whose shape is whole
    numbers keep it (see :func:`_round_numerators`). Pole radii use
    :func:`pole_radius` on the sections as they run. See [1]_ sec. 6.7 for
    the effect of coefficient rounding on poles.

    References
    ----------
    .. [1] A. V. Oppenheim and R. W. Schafer, "Discrete-Time Signal
       Processing", 3rd ed., 2010, sec. 6.7.

    Examples
    --------
    >>> from scipy import signal
    >>> q = quantize_sos(signal.butter(2, 1000, fs=48000, output="sos"), "q1.31")
    >>> bool(q.stable), q.shifts.tolist()
    (True, [1])
    """
    a = parse_arith(arith) if isinstance(arith, str) else arith
    s = check_sos(sos)
    shifts = post_shifts(s, a)
    overflow = shifts > a.word_bits - 1
    shifts = np.minimum(shifts, a.word_bits - 1)
    scaled = s / (2.0 ** shifts)[:, None]
    q_b, sat_b = _round_numerators(scaled[:, 0:3], a)
    q_a, sat_a = a.quantize(scaled[:, 4:6])
    stored = scaled.copy()
    stored[:, 0:3], stored[:, 4:6], stored[:, 3] = q_b, q_a, 1.0
    saturated = sat_b.any(axis=1) | sat_a.any(axis=1) | overflow
    effective = unshift(stored, shifts)
    radius = pole_radius(effective)
    return QuantizedSos(
        arith=a, sos=stored, shifts=shifts, overflow=overflow, saturated=saturated,
        max_coef_error=float(np.max(np.abs(effective - s))), pole_radius=radius,
        stable=bool(np.all(radius < 1.0)))
