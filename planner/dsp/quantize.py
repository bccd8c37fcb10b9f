"""Second-order-section coefficients in a DSP's arithmetic.

A DSP holds each section's coefficients in one number format: IEEE double
(``float64``), IEEE single (``float32``), or a two's-complement fixed-point
format written ``qM.N``: ``M`` integer bits *including* the sign bit and
``N`` fractional bits, a word of ``M + N`` bits whose values are the
multiples of ``2**-N`` in ``[-2**(M-1), 2**(M-1) - 2**-N]``. So ``q1.31``
holds ``[-1, 1 - 2**-31]`` and ``q2.30`` holds ``[-2, 2 - 2**-30]``.

The recursion a DSP runs for a section is
``y[n] = b0 x[n] + b1 x[n-1] + b2 x[n-2] - a1 y[n-1] - a2 y[n-2]``: ``a0`` is
implicitly 1 and is never stored, so it is not quantised here.

Quantisation is rounding to the nearest multiple of ``2**-N`` (ties to even,
as :func:`numpy.round`), and values outside the range saturate to the
nearest end; every saturation is reported. A section whose coefficients do
not fit is stored divided by a power of two, ``2**k``, with a matching
*post-shift*: the DSP shifts the section's accumulator left by ``k`` bits,
which runs the design's section exactly. This is how general-purpose
fixed-point biquad code holds the sections of a low cut-off at a high
rate, whose ``a1`` is close to ``-2`` and does not fit ``q1.N``. Numerators
whose zeros sit exactly at ``z = +1`` or ``z = -1`` (as the bilinear
transform puts them) keep them exactly: their common factor is rounded, not
each coefficient.

The sensitivity of pole positions to coefficient rounding grows as the
poles approach ``z = 1`` (low cut-off relative to the sample rate): see
[1]_ sec. 6.7-6.9 and [2]_. Section pairing, ordering and scaling live in
:mod:`planner.dsp.sections` ([3]_).

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
.. [4] IEEE Std 754-2008, "IEEE Standard for Floating-Point Arithmetic"
   (binary32 round-to-nearest-even).
"""

from __future__ import annotations

import re
from dataclasses import dataclass

import numpy as np

from planner.dsp.sections import integer_shape, pair_sections
from planner.errors import ExportError

__all__ = [
    "Arith",
    "QuantizedSos",
    "PeakGains",
    "parse_arith",
    "quantize_sos",
    "pole_radius",
    "response_deviation_db",
    "post_shifts",
    "unshift",
    "Deviation",
    "judge_deviation",
    "peak_internal_gain_db",
    "suggest_fixes",
]

_ACCEPTED = "'float64', 'float32' or 'qM.N' (M integer bits including sign, N fractional bits, " \
            "1 <= M, 0 <= N, M + N <= 64, e.g. 'q1.31', 'q2.30', 'q1.23', 'q1.15')"
_Q_RE = re.compile(r"^q(\d+)\.(\d+)$")


@dataclass(frozen=True)
class Arith:
    """A number format for coefficients.

    Attributes
    ----------
    kind : {'float64', 'float32', 'fixed'}
    int_bits : int
        ``M`` of ``qM.N``, sign bit included (0 for floating point).
    frac_bits : int
        ``N`` of ``qM.N`` (0 for floating point).
    """

    kind: str
    int_bits: int = 0
    frac_bits: int = 0

    @property
    def name(self) -> str:
        """Canonical text, e.g. ``'q1.31'`` or ``'float32'``."""
        return f"q{self.int_bits}.{self.frac_bits}" if self.kind == "fixed" else self.kind

    @property
    def word_bits(self) -> int:
        """Bits per coefficient: ``M + N``, 32 or 64."""
        return {"float64": 64, "float32": 32}.get(self.kind, self.int_bits + self.frac_bits)

    @property
    def lsb(self) -> float:
        """Step between fixed-point values, ``2**-N`` (0.0 for floating point)."""
        return 2.0 ** -self.frac_bits if self.kind == "fixed" else 0.0

    @property
    def min_value(self) -> float:
        """Most negative value: ``-2**(M-1)``; ``-max`` finite float for floats."""
        if self.kind == "fixed":
            return -(2.0 ** (self.int_bits - 1))
        return -float(np.finfo(np.float32 if self.kind == "float32" else np.float64).max)

    @property
    def max_value(self) -> float:
        """Most positive value: ``2**(M-1) - 2**-N``; largest finite float for floats."""
        if self.kind == "fixed":
            return 2.0 ** (self.int_bits - 1) - 2.0 ** -self.frac_bits
        return float(np.finfo(np.float32 if self.kind == "float32" else np.float64).max)

    def holds(self, x) -> np.ndarray:
        """Whether each value lies within ``[min_value, max_value]`` (before rounding)."""
        x = np.asarray(x, dtype=float)
        return (x >= self.min_value) & (x <= self.max_value)

    def quantize(self, x):
        """Round to this format.

        Parameters
        ----------
        x : array_like of float

        Returns
        -------
        q : ndarray of float64
            The representable values (float64 holds every ``qM.N`` value with
            ``M + N <= 53`` exactly; wider words are rounded to float64).
        saturated : ndarray of bool
            Where the rounded value fell outside the range and was clipped.
        """
        x = np.asarray(x, dtype=float)
        if self.kind == "float64":
            return x.copy(), np.zeros(x.shape, dtype=bool)
        if self.kind == "float32":
            with np.errstate(over="ignore"):
                q = x.astype(np.float32)  # IEEE 754 round to nearest even [4]_
            sat = np.isinf(q) & np.isfinite(x)
            q = np.where(sat, np.sign(x) * np.finfo(np.float32).max, q)
            return q.astype(np.float64), sat
        scale = 2.0 ** self.frac_bits
        r = np.round(x * scale) / scale  # nearest, ties to even; exact power-of-two scaling
        sat = (r < self.min_value) | (r > self.max_value)
        return np.clip(r, self.min_value, self.max_value), sat

    def int_bits_needed(self, x) -> int:
        """Fewest integer bits (sign included) that hold every value of ``x`` with ``N`` fractional bits."""
        x = np.asarray(x, dtype=float)
        m = 1
        while np.any(x < -(2.0 ** (m - 1))) or np.any(x > 2.0 ** (m - 1) - 2.0 ** -self.frac_bits):
            m += 1
        return m


def parse_arith(text) -> Arith:
    """Parse a number-format name.

    Parameters
    ----------
    text : str
        ``'float64'``, ``'float32'`` or ``'qM.N'`` (case and surrounding
        blanks ignored), with ``M >= 1`` integer bits including the sign,
        ``N >= 0`` fractional bits and ``M + N <= 64``.

    Returns
    -------
    Arith

    Raises
    ------
    ExportError
        ``field='arith'``, naming the value and the accepted forms.

    References
    ----------
    .. [1] IEEE Std 754-2008 (binary64, binary32); the ``Qm.n`` notation as in
       Oppenheim and Schafer, "Discrete-Time Signal Processing", 3rd ed., sec. 6.7.1.

    Examples
    --------
    >>> a = parse_arith("q2.30")
    >>> a.min_value, a.max_value == 2 - 2**-30
    (-2.0, True)
    """
    if not isinstance(text, str):
        raise ExportError(f"{text!r} is not a format name; use {_ACCEPTED}", field="arith")
    t = text.strip().lower()
    if t in ("float64", "float32"):
        return Arith(t)
    m = _Q_RE.match(t)
    if m:
        ib, fb = int(m.group(1)), int(m.group(2))
        if ib >= 1 and ib + fb <= 64:
            return Arith("fixed", ib, fb)
    raise ExportError(f"{text!r} is not a known format; use {_ACCEPTED}", field="arith")


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


def _check_sos(sos, field: str = "sos") -> np.ndarray:
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
    s = _check_sos(sos)
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
    s = _check_sos(sos)
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


def _chain_response(sos: np.ndarray, freqs_hz: np.ndarray, fs_hz: float) -> np.ndarray:
    """Per-section complex responses, shape (n_sections, n_freqs)."""
    z1 = np.exp(-2j * np.pi * np.asarray(freqs_hz, dtype=float) / fs_hz)[None, :]
    num = sos[:, 0:1] + z1 * (sos[:, 1:2] + z1 * sos[:, 2:3])
    den = sos[:, 3:4] + z1 * (sos[:, 4:5] + z1 * sos[:, 5:6])
    return num / den


def _db(h):
    return 20.0 * np.log10(np.maximum(np.abs(h), 1e-300))


def _check_grid(freqs_hz, fs_hz):
    f = np.atleast_1d(np.asarray(freqs_hz, dtype=float))
    if not np.isfinite(fs_hz) or fs_hz <= 0:
        raise ExportError(f"must be a positive number of Hz, not {fs_hz!r}", field="fs_hz")
    if f.ndim != 1 or len(f) == 0 or not np.all(np.isfinite(f)) or np.any(f < 0) \
            or np.any(f > fs_hz / 2):
        raise ExportError(f"must be finite frequencies in [0, {fs_hz / 2:g}] Hz (Nyquist)",
                          field="freqs_hz")
    return f


def response_deviation_db(sos_ref, sos_q, freqs_hz, fs_hz: float, gain_q: float = 1.0,
                          floor_db: float | None = None):
    """Largest magnitude deviation of ``sos_q`` from ``sos_ref``.

    Parameters
    ----------
    sos_ref, sos_q : ndarray, shape (n, 6) and (m, 6)
        Reference and quantised chains (pass
        :attr:`QuantizedSos.effective_sos`, or ``sos`` with ``gain_q=gain``).
    freqs_hz : ndarray
        Grid in Hz, within [0, fs/2].
    fs_hz : float
        Sample rate in Hz.
    gain_q : float
        Linear gain applied after ``sos_q``.
    floor_db : float, optional
        Ignore points where the reference is below this level (dB), e.g.
        deep stopbands where a large relative deviation is inaudible.

    Returns
    -------
    max_dev_db : float
        ``max |20 log10 |H_q / H_ref||`` in dB (0.0 if every point is below the floor).
    at_hz : float
        Frequency where it occurs (nan if none).

    References
    ----------
    .. [1] A. V. Oppenheim and R. W. Schafer, "Discrete-Time Signal
       Processing", 3rd ed., sec. 6.7 (frequency response of a quantised
       cascade).
    """
    f = _check_grid(freqs_hz, fs_hz)
    r = np.prod(_chain_response(_check_sos(sos_ref, "sos_ref"), f, fs_hz), axis=0)
    q = np.prod(_chain_response(_check_sos(sos_q, "sos_q"), f, fs_hz), axis=0) * gain_q
    ref_db = _db(r)
    dev = np.abs(_db(q) - ref_db)
    if floor_db is not None:
        dev = np.where(ref_db >= floor_db, dev, -np.inf)
    i = int(np.argmax(dev))
    if not np.isfinite(dev[i]) and dev[i] < 0:
        return 0.0, float("nan")
    return float(dev[i]), float(f[i])


@dataclass(frozen=True)
class Deviation:
    """How far a rounded chain's magnitude is from its design, judged where it matters.

    Attributes
    ----------
    in_range_db : float
        Largest ``|20 log10 |H_q / H_ref||`` (dB) where the design is within
        ``range_db`` of its peak level (0.0 where no point is).
    in_range_at_hz : float
        Where it occurs (nan if nowhere).
    floor_error_db : float
        Elsewhere (deeper than ``range_db`` below the peak), the largest
        ``||H_q| - |H_ref||`` in dB relative to the peak (``-inf`` where there
        is no such point): a 3 dB change at -90 dB is an error of about -94 dB
        re the peak, inaudible beside the pass band.
    floor_at_hz : float
    range_db, floor_db : float
        The judging range and the error floor (both in dB, relative to the peak).
    """

    in_range_db: float
    in_range_at_hz: float
    floor_error_db: float
    floor_at_hz: float
    range_db: float
    floor_db: float

    def ok(self, limit_db: float) -> bool:
        """Within ``limit_db`` inside the range, and below the floor outside it."""
        return bool(self.in_range_db <= limit_db and self.floor_error_db <= self.floor_db)


def judge_deviation(ref_h, got_h, freqs_hz, range_db: float = 40.0,
                    floor_db: float = -80.0) -> Deviation:
    """Compare a rounded chain's response with its design where the response matters.

    Inside ``range_db`` below the design's peak level the deviation is judged
    in dB (a relative measure: what a listener hears in and near the pass
    band); deeper down, by the absolute magnitude error relative to the peak
    (``floor_db``), so that a large relative change deep in a stop band (2.9
    dB at -90 dB, say) does not fail a benign design, while an error that
    reaches up towards the pass band does. The defaults (40 dB, -80 dB: a
    0.1 dB change at -40 dB is an error of -78.7 dB re the peak) are common
    practice, no published source.

    Parameters
    ----------
    ref_h, got_h : ndarray, complex, shape (n,)
        The design's and the rounded chain's responses on one grid.
    freqs_hz : ndarray, shape (n,)
    range_db, floor_db : float

    Returns
    -------
    Deviation
    """
    ref = np.abs(np.asarray(ref_h))
    got = np.abs(np.asarray(got_h))
    f = np.asarray(freqs_hz, dtype=float)
    peak = float(np.max(ref)) if len(ref) else 0.0
    if not peak > 0:
        return Deviation(0.0, float("nan"), float("-inf"), float("nan"), range_db, floor_db)
    inside = _db(ref) >= _db(np.array(peak))[()] - range_db
    with np.errstate(divide="ignore", invalid="ignore"):
        dev = np.where(inside, np.abs(_db(got) - _db(ref)), -np.inf)
        err = np.where(inside, -np.inf, _db(np.abs(got - ref) / peak))
    i, j = int(np.argmax(dev)), int(np.argmax(err))
    in_db, in_at = (float(dev[i]), float(f[i])) if np.isfinite(dev[i]) else (0.0, float("nan"))
    fl_db, fl_at = (float(err[j]), float(f[j])) if np.isfinite(err[j]) else (float("-inf"),
                                                                             float("nan"))
    return Deviation(in_db, in_at, fl_db, fl_at, float(range_db), float(floor_db))


@dataclass
class PeakGains:
    """Largest gain after each cumulative section.

    Attributes
    ----------
    gain_db : ndarray, shape (n,)
        ``max_f 20 log10 |H_1 ... H_k|`` for k = 1..n, in dB.
    at_hz : ndarray, shape (n,)
        Where each maximum occurs.
    """

    gain_db: np.ndarray
    at_hz: np.ndarray

    @property
    def headroom_db(self) -> float:
        """Pre-attenuation (dB, >= 0) that keeps every section output at or below the input's full scale."""
        return float(max(0.0, np.max(self.gain_db)))


def peak_internal_gain_db(sos, freqs_hz, fs_hz: float) -> PeakGains:
    """Largest gain seen at the output of each cumulative section.

    For a full-scale sine at any grid frequency, the output of section ``k``
    has amplitude ``|H_1 ... H_k|``; the maximum over the grid is how far the
    intermediate signal may rise above full scale, i.e. how much
    pre-attenuation avoids clipping inside the chain (``L-infinity`` scaling
    of cascade forms, Jackson [1]_ sec. 11.3; Oppenheim and Schafer [2]_
    sec. 6.9). It is a sine (steady-state) bound, not a worst-case bound
    for arbitrary signals. Pass :attr:`QuantizedSos.sos` to see the levels a
    fixed-point DSP holds after numerator shifts.

    Parameters
    ----------
    sos : ndarray, shape (n, 6)
    freqs_hz : ndarray
        Grid in Hz.
    fs_hz : float
        Sample rate in Hz.

    Returns
    -------
    PeakGains

    References
    ----------
    .. [1] L. B. Jackson, "Digital Filters and Signal Processing", 3rd ed.,
       1996, sec. 11.3.
    .. [2] A. V. Oppenheim and R. W. Schafer, "Discrete-Time Signal
       Processing", 3rd ed., sec. 6.9.
    """
    s = _check_sos(sos)
    f = _check_grid(freqs_hz, fs_hz)
    cum = _db(np.cumprod(_chain_response(s, f, fs_hz), axis=0))
    i = np.argmax(cum, axis=1)
    return PeakGains(cum[np.arange(len(s)), i], f[i])


def _wider(cand: Arith, a: Arith) -> bool:
    """Whether ``cand`` is worth trying instead of ``a``: a longer word, or the same
    word with more integer bits (fixed) or as floating point."""
    if cand.word_bits != a.word_bits:
        return cand.word_bits > a.word_bits
    if a.kind != "fixed":
        return False
    return cand.kind != "fixed" or cand.int_bits > a.int_bits


#: Wider formats tried, in order, when a design does not fit.
_WIDER = ("q2.14", "q2.22", "q2.30", "q3.29", "q2.46", "float32", "q4.60", "float64")


def suggest_fixes(sos, arith: Arith | str, fs_hz: float, freqs_hz,
                  max_deviation_db: float = 0.1, range_db: float = 40.0,
                  floor_db: float = -80.0) -> list[str]:
    """Plain-language fixes when ``arith`` cannot hold a band's sections.

    Checks, each giving at most one suggestion:

    * a section that needs a post-shift wider than the word: its largest
      coefficient, and the wider format that holds it;
    * unstable, or response off by more than ``max_deviation_db`` (judged by
      :func:`judge_deviation`): a lower sample rate for the band when its
      poles lie close to ``z = 1`` (pole sensitivity grows as poles cluster
      near ``z = 1``, Kaiser 1966; see Oppenheim and Schafer sec. 6.7), and
      the narrowest wider format that meets the tolerance (by actually
      quantising to each candidate);
    * re-pairing the sections (:func:`planner.dsp.sections.pair_sections`)
      when that alone makes ``arith`` hold them.

    Parameters
    ----------
    sos : ndarray, shape (n, 6)
        The sections as they would be stored before rounding (scaled).
    arith : Arith or str
    fs_hz : float
        Sample rate in Hz.
    freqs_hz : ndarray
        Grid in Hz for the deviation check.
    max_deviation_db, range_db, floor_db : float
        See :func:`judge_deviation`.

    Returns
    -------
    list of str
        Empty when the format holds the sections.

    References
    ----------
    .. [1] A. V. Oppenheim and R. W. Schafer, "Discrete-Time Signal
       Processing", 3rd ed., sec. 6.7-6.9.
    .. [2] L. B. Jackson, "Digital Filters and Signal Processing", 3rd ed.,
       sec. 11.3-11.4.
    """
    a = parse_arith(arith) if isinstance(arith, str) else arith
    s = _check_sos(sos)
    f = _check_grid(freqs_hz, fs_hz)
    ref = np.prod(_chain_response(s, f, fs_hz), axis=0)

    def meets(cand: Arith, sections: np.ndarray = s) -> bool:
        res = quantize_sos(sections, cand)
        if not res.ok:
            return False
        got = np.prod(_chain_response(res.effective_sos, f, fs_hz), axis=0)
        return judge_deviation(ref, got, f, range_db, floor_db).ok(max_deviation_db)

    q = quantize_sos(s, a)
    out: list[str] = []
    if q.overflow.any():
        idx = np.flatnonzero(q.overflow)
        worst = s[idx][:, [0, 1, 2, 4, 5]].flat[np.argmax(np.abs(s[idx][:, [0, 1, 2, 4, 5]]))]
        out.append(
            f"section(s) {', '.join(str(i + 1) for i in idx)}: a coefficient ({worst:.6g}) "
            f"needs a post-shift wider than {a.name}'s {a.word_bits}-bit word")
    if meets(a):
        return out
    r = pole_radius(s)
    worst = int(np.argmax(r))
    # Distance of the pole from z = 1 expressed as a frequency: for a pole
    # near z = 1, |1 - p| * fs / (2 pi) is close to its analog natural
    # frequency (bilinear/impulse-invariant mapping, small w).
    p = np.roots(s[worst, 3:6])
    p = p[np.argmax(np.abs(p))]
    f_pole = abs(1 - p) * fs_hz / (2 * np.pi)
    if f_pole < fs_hz / 100:  # common practice, no published source
        out.append(
            f"section {worst + 1} has poles near z = 1 (radius {r[worst]:.6f}, about "
            f"{f_pole:.3g} Hz at {fs_hz:g} Hz): run this band at a lower sample rate "
            f"(e.g. {fs_hz / 4:g} Hz), which moves the poles away from z = 1 and "
            f"makes them far less sensitive to rounding")
    if len(s) > 1 and meets(a, pair_sections(s)):
        out.append(f"{a.name} holds the sections re-paired with the poles nearest the unit "
                   "circle last (export --sections paired)")
    for name in _WIDER:
        cand = parse_arith(name)
        if cand == a or not _wider(cand, a):
            continue
        if meets(cand):
            out.append(f"{cand.name} holds this design within {max_deviation_db:g} dB")
            break
    else:
        out.append(f"no format tried ({', '.join(_WIDER)}) holds this design within "
                   f"{max_deviation_db:g} dB: change the design or the sample rate")
    return out
