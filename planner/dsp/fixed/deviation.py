"""How far a rounded chain is from its design, how high it rises inside, and what would fix it.

References
----------
.. [1] A. V. Oppenheim and R. W. Schafer, "Discrete-Time Signal Processing",
   3rd ed., Prentice Hall, 2010, sec. 6.7 (frequency response of a quantised
   cascade), 6.9 (scaling of cascade forms).
.. [2] L. B. Jackson, "Digital Filters and Signal Processing", 3rd ed.,
   Kluwer, 1996, sec. 11.3 (L-infinity scaling), 11.4 (pairing and ordering).
.. [3] J. F. Kaiser, "Digital Filters", ch. 7 of F. F. Kuo and J. F. Kaiser
   (eds.), "System Analysis by Digital Computer", Wiley, 1966 (coefficient
   sensitivity of clustered poles).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from planner.dsp.fixed.formats import Arith, parse_arith
from planner.dsp.fixed.quantize import check_sos, pole_radius, quantize_sos
from planner.dsp.fixed.sections import pair_sections
from planner.errors import ExportError

__all__ = ["response_deviation_db", "Deviation", "judge_deviation", "PeakGains",
           "peak_internal_gain_db", "suggest_fixes"]


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
    r = np.prod(_chain_response(check_sos(sos_ref, "sos_ref"), f, fs_hz), axis=0)
    q = np.prod(_chain_response(check_sos(sos_q, "sos_q"), f, fs_hz), axis=0) * gain_q
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
    s = check_sos(sos)
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
      near ``z = 1``, Kaiser 1966 [3]_; see Oppenheim and Schafer [1]_
      sec. 6.7), and the narrowest wider format that meets the tolerance (by
      actually quantising to each candidate);
    * re-pairing the sections (:func:`planner.dsp.fixed.sections.pair_sections`)
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
    .. [3] J. F. Kaiser, "Digital Filters", 1966.
    """
    a = parse_arith(arith) if isinstance(arith, str) else arith
    s = check_sos(sos)
    f = _check_grid(freqs_hz, fs_hz)
    meets = _meets_in(s, f, fs_hz, max_deviation_db, range_db, floor_db)
    out = _overflow_fix(s, a)
    if meets(a):
        return out
    out += _lower_rate_fix(s, fs_hz)
    if len(s) > 1 and meets(a, pair_sections(s)):
        out.append(f"{a.name} holds the sections re-paired with the poles nearest the unit "
                   "circle last (export --sections paired)")
    out.append(_wider_format_fix(a, meets, max_deviation_db))
    return out


def _meets_in(s: np.ndarray, f: np.ndarray, fs_hz: float, max_deviation_db: float,
              range_db: float, floor_db: float):
    """``meets(cand, sections=s)``: whether ``sections`` rounded to ``cand`` are stable,
    unsaturated and within ``max_deviation_db`` of the design ``s`` (:func:`judge_deviation`)."""
    ref = np.prod(_chain_response(s, f, fs_hz), axis=0)

    def meets(cand: Arith, sections: np.ndarray = s) -> bool:
        res = quantize_sos(sections, cand)
        if not res.ok:
            return False
        got = np.prod(_chain_response(res.effective_sos, f, fs_hz), axis=0)
        return judge_deviation(ref, got, f, range_db, floor_db).ok(max_deviation_db)
    return meets


def _overflow_fix(s: np.ndarray, a: Arith) -> list[str]:
    """The sections that need a post-shift wider than ``a``'s word, with the largest coefficient."""
    q = quantize_sos(s, a)
    if not q.overflow.any():
        return []
    idx = np.flatnonzero(q.overflow)
    worst = s[idx][:, [0, 1, 2, 4, 5]].flat[np.argmax(np.abs(s[idx][:, [0, 1, 2, 4, 5]]))]
    return [f"section(s) {', '.join(str(i + 1) for i in idx)}: a coefficient ({worst:.6g}) "
            f"needs a post-shift wider than {a.name}'s {a.word_bits}-bit word"]


def _lower_rate_fix(s: np.ndarray, fs_hz: float) -> list[str]:
    """A lower sample rate, when the outermost poles lie close to ``z = 1``."""
    r = pole_radius(s)
    worst = int(np.argmax(r))
    # Distance of the pole from z = 1 expressed as a frequency: for a pole
    # near z = 1, |1 - p| * fs / (2 pi) is close to its analog natural
    # frequency (bilinear/impulse-invariant mapping, small w).
    p = np.roots(s[worst, 3:6])
    p = p[np.argmax(np.abs(p))]
    f_pole = abs(1 - p) * fs_hz / (2 * np.pi)
    if not f_pole < fs_hz / 100:  # common practice, no published source
        return []
    return [f"section {worst + 1} has poles near z = 1 (radius {r[worst]:.6f}, about "
            f"{f_pole:.3g} Hz at {fs_hz:g} Hz): run this band at a lower sample rate "
            f"(e.g. {fs_hz / 4:g} Hz), which moves the poles away from z = 1 and "
            f"makes them far less sensitive to rounding"]


def _wider_format_fix(a: Arith, meets, max_deviation_db: float) -> str:
    """The first format of :data:`_WIDER` wider than ``a`` that holds the design, or why none."""
    for name in _WIDER:
        cand = parse_arith(name)
        if cand == a or not _wider(cand, a):
            continue
        if meets(cand):
            return f"{cand.name} holds this design within {max_deviation_db:g} dB"
    return (f"no format tried ({', '.join(_WIDER)}) holds this design within "
            f"{max_deviation_db:g} dB: change the design or the sample rate")
