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
nearest end; every saturation is reported. A numerator that does not fit is
scaled by a power of two (a right shift of the section's numerator), and the
lost gain is kept as one separate linear factor, so the overall response is
preserved. A denominator that does not fit cannot be scaled without changing
the poles: that section overflows the format and is reported. Sections of a
stable low-frequency filter at a high sample rate have ``a1`` close to
``-2``, which needs 2 integer bits; this is the classic case.

The sensitivity of pole positions to coefficient rounding grows as the
poles approach ``z = 1`` (low cut-off relative to the sample rate): see
[1]_ sec. 6.7-6.9 and [2]_. Section pairing and ordering follow [3]_ as
implemented by :func:`scipy.signal.zpk2sos`.

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
from scipy import signal

from planner.errors import ExportError

__all__ = [
    "Arith",
    "QuantizedSos",
    "PeakGains",
    "parse_arith",
    "quantize_sos",
    "pole_radius",
    "response_deviation_db",
    "order_sections",
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
        The stored coefficients ``[b0, b1, b2, 1, a1, a2]`` (numerators
        already scaled down by ``2**shifts``).
    shifts : ndarray of int, shape (n,)
        Right shift applied to each numerator (``b / 2**shift``).
    gain : float
        Linear factor ``2**sum(shifts)`` to apply after the chain (a left
        shift of the output) so the overall response is preserved.
    overflow : ndarray of bool, shape (n,)
        A denominator coefficient lies outside the format's range: the
        section cannot be held.
    saturated : ndarray of bool, shape (n,)
        Some coefficient of the section was clipped to the range.
    max_coef_error : float
        Largest ``|effective - original|`` over all coefficients, in the
        original (unshifted) scale.
    pole_radius : ndarray, shape (n,)
        Largest pole radius of each quantised section.
    stable : bool
        All pole radii below 1.
    """

    arith: Arith
    sos: np.ndarray
    shifts: np.ndarray
    gain: float
    overflow: np.ndarray
    saturated: np.ndarray
    max_coef_error: float
    pole_radius: np.ndarray
    stable: bool

    @property
    def effective_sos(self) -> np.ndarray:
        """Sections the DSP effectively runs: stored numerators times ``2**shift``.

        Their cascade equals the stored chain followed by :attr:`gain`.
        """
        out = self.sos.copy()
        out[:, :3] *= (2.0 ** self.shifts)[:, None]
        return out

    @property
    def ok(self) -> bool:
        """Stable and no section overflowed or saturated."""
        return bool(self.stable and not self.overflow.any() and not self.saturated.any())


def _check_sos(sos, field: str = "sos") -> np.ndarray:
    s = np.asarray(sos, dtype=float)
    if s.ndim != 2 or s.shape[1] != 6 or len(s) == 0:
        raise ExportError(f"must have shape (n, 6) with n >= 1, not {np.shape(sos)}", field=field)
    if not np.all(np.isfinite(s)):
        raise ExportError("coefficients must be finite numbers, found nan or inf", field=field)
    if not np.allclose(s[:, 3], 1.0, rtol=0, atol=1e-12):
        raise ExportError(f"a0 must be 1 in every section, found {s[:, 3].tolist()}", field=field)
    return s


def quantize_sos(sos, arith: Arith | str) -> QuantizedSos:
    """Round sections to ``arith``, scaling numerators that do not fit.

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
    For fixed point, each numerator whose largest coefficient exceeds the
    range is divided by the smallest power of two that makes it fit, before
    rounding; ``a1, a2`` are rounded as they are, and a section whose ``a1``
    or ``a2`` lies outside the range is flagged in ``overflow`` (its
    saturated value is kept, so the reported poles are those the DSP would
    get). ``a0 = 1`` is implicit in the recursion and not stored.
    Pole radii use :func:`pole_radius`. See [1]_ sec. 6.7 for the effect of
    coefficient rounding on poles.

    References
    ----------
    .. [1] A. V. Oppenheim and R. W. Schafer, "Discrete-Time Signal
       Processing", 3rd ed., 2010, sec. 6.7.

    Examples
    --------
    >>> from scipy import signal
    >>> q = quantize_sos(signal.butter(2, 1000, fs=48000, output="sos"), "q2.30")
    >>> bool(q.stable), q.shifts.tolist()
    (True, [0])
    """
    a = parse_arith(arith) if isinstance(arith, str) else arith
    s = _check_sos(sos)
    n = len(s)
    shifts = np.zeros(n, dtype=int)
    if a.kind == "fixed":
        b = s[:, :3]
        # Smallest shift k >= 0 with every b / 2**k inside [min, max].
        while True:
            bad = ~np.all(a.holds(b / (2.0 ** shifts)[:, None]), axis=1)
            if not bad.any():
                break
            shifts[bad] += 1
    stored = s.copy()
    stored[:, :3] = s[:, :3] / (2.0 ** shifts)[:, None]
    overflow = ~np.all(a.holds(s[:, 4:6]), axis=1)
    q_b, sat_b = a.quantize(stored[:, :3])
    q_a, sat_a = a.quantize(stored[:, 4:6])
    stored[:, :3], stored[:, 4:6], stored[:, 3] = q_b, q_a, 1.0
    saturated = sat_b.any(axis=1) | sat_a.any(axis=1) | overflow
    result = QuantizedSos(
        arith=a, sos=stored, shifts=shifts, gain=float(2.0 ** shifts.sum()),
        overflow=overflow, saturated=saturated, max_coef_error=0.0,
        pole_radius=pole_radius(stored), stable=False)
    result.max_coef_error = float(np.max(np.abs(result.effective_sos - s)))
    result.stable = bool(np.all(result.pole_radius < 1.0))
    return result


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


def order_sections(sos, pairing: str = "nearest") -> np.ndarray:
    """Re-pair poles with the nearest zeros and re-order the sections.

    The chain is converted to zeros, poles and gain
    (:func:`scipy.signal.sos2zpk`) and paired again by
    :func:`scipy.signal.zpk2sos`: poles closest to the unit circle are paired
    first with their nearest zeros, and those sections come *last* in the
    cascade, so the high-Q sections see a signal already shaped by the others
    (Jackson [1]_ sec. 11.4; scipy's documented behaviour). The overall
    gain goes into the first section.

    Parameters
    ----------
    sos : ndarray, shape (n, 6)
    pairing : {'nearest', 'keep_odd', 'minimal'}
        Passed to :func:`scipy.signal.zpk2sos`.

    Returns
    -------
    sos : ndarray, shape (n, 6)
        Same response, new pairing and order.

    References
    ----------
    .. [1] L. B. Jackson, "Digital Filters and Signal Processing", 3rd ed.,
       Kluwer, 1996, sec. 11.4.
    """
    s = _check_sos(sos)
    if pairing not in ("nearest", "keep_odd", "minimal"):
        raise ExportError(f"must be 'nearest', 'keep_odd' or 'minimal', not {pairing!r}",
                          field="pairing")
    z, p, k = signal.sos2zpk(s)
    return signal.zpk2sos(z, p, k, pairing=pairing)


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
                  max_deviation_db: float = 0.1, floor_db: float = -100.0) -> list[str]:
    """Plain-language fixes when ``arith`` cannot hold the design.

    Checks, each giving at most one suggestion:

    * a denominator out of range: the integer bits it needs, and the format
      of the same word length that holds it;
    * unstable, or response off by more than ``max_deviation_db``: a lower
      sample rate for the band when its poles lie close to ``z = 1`` (pole
      sensitivity grows as poles cluster near ``z = 1``, Kaiser 1966; see
      Oppenheim and Schafer sec. 6.7), and the narrowest wider format that
      meets the tolerance (by actually quantising to each candidate);
    * fixed point only: an internal gain above 0 dB (more than 0.01 dB): the
      pre-attenuation needed, and whether re-ordering
      (:func:`order_sections`) lowers it by more than 0.5 dB.

    Parameters
    ----------
    sos : ndarray, shape (n, 6)
    arith : Arith or str
    fs_hz : float
        Sample rate in Hz.
    freqs_hz : ndarray
        Grid in Hz for the deviation and gain checks.
    max_deviation_db : float
        Largest acceptable magnitude deviation, dB.
    floor_db : float
        Reference levels below this (dB) are ignored in the deviation check.

    Returns
    -------
    list of str
        Empty when the format holds the design.

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
    q = quantize_sos(s, a)
    out: list[str] = []

    def meets(res: QuantizedSos) -> bool:
        if not res.ok:
            return False
        return response_deviation_db(s, res.effective_sos, f, fs_hz,
                                     floor_db=floor_db)[0] <= max_deviation_db

    if q.overflow.any():
        idx = np.flatnonzero(q.overflow)
        need = a.int_bits_needed(s[idx][:, 4:6])
        word = a.word_bits
        worst = s[idx][:, 4:6].flat[np.argmax(np.abs(s[idx][:, 4:6]))]
        out.append(
            f"section(s) {', '.join(str(i + 1) for i in idx)}: a denominator coefficient "
            f"({worst:.6g}) is outside {a.name}'s range [{a.min_value:g}, {a.max_value:.6g}]; "
            f"it needs {need} integer bits: use q{need}.{max(word - need, 0)} "
            f"(same {word}-bit word) or a wider format")
    ok = meets(q)
    if not ok:
        r = pole_radius(s)
        worst = int(np.argmax(r))
        # Distance of the pole from z = 1 expressed as a frequency: for a
        # pole near z = 1, |1 - p| * fs / (2 pi) is close to its analog
        # natural frequency (bilinear/impulse-invariant mapping, small w).
        p = np.roots(s[worst, 3:6])
        p = p[np.argmax(np.abs(p))]
        f_pole = abs(1 - p) * fs_hz / (2 * np.pi)
        if f_pole < fs_hz / 100:  # common practice, no published source
            out.append(
                f"section {worst + 1} has poles near z = 1 (radius {r[worst]:.6f}, about "
                f"{f_pole:.3g} Hz at {fs_hz:g} Hz): run this band at a lower sample rate "
                f"(e.g. {fs_hz / 4:g} Hz), which moves the poles away from z = 1 and "
                f"makes them far less sensitive to rounding")
        for name in _WIDER:
            cand = parse_arith(name)
            if cand == a or not _wider(cand, a):
                continue
            if meets(quantize_sos(s, cand)):
                out.append(f"{cand.name} holds this design within {max_deviation_db:g} dB")
                break
        else:
            out.append(f"no format tried ({', '.join(_WIDER)}) holds this design within "
                       f"{max_deviation_db:g} dB: change the design or the sample rate")
    if a.kind != "fixed":
        return out
    # Levels a fixed-point DSP holds: the design with the numerator shifts
    # applied, before rounding (rounding is judged above).
    scaled = s.copy()
    scaled[:, :3] /= (2.0 ** q.shifts)[:, None]
    peaks = peak_internal_gain_db(scaled, f, fs_hz)
    # 0.01 dB: below this an overshoot is numerical noise of a maximally flat
    # passband (common practice, no published source).
    if peaks.headroom_db > 0.01:
        k = int(np.argmax(peaks.gain_db))
        msg = (f"the signal rises to {peaks.headroom_db:.2f} dB above full scale inside the "
               f"chain (after section {k + 1}, {peaks.at_hz[k]:.4g} Hz): attenuate the input "
               f"by {np.ceil(peaks.headroom_db * 100) / 100:.2f} dB")
        re_peaks = peak_internal_gain_db(order_sections(s), f, fs_hz)
        if re_peaks.headroom_db < peaks.headroom_db - 0.5:
            msg += (f", or re-order the sections (poles nearest the unit circle last), "
                    f"which needs only {re_peaks.headroom_db:.1f} dB")
        out.append(msg)
    return out
