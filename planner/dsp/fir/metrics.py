"""Properties and costs of FIR taps: linear phase, latency, pre-ringing, multiplies.

References
----------
.. [1] A. V. Oppenheim and R. W. Schafer, "Discrete-Time Signal Processing",
   3rd ed., Pearson, 2010, sec. 5.7.3 (generalised linear phase), 6.3.2
   (cascade form), 6.5.3 (linear-phase FIR structures).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from planner.dsp.fir.checks import check_fs
from planner.errors import DesignError

__all__ = ["is_linear_phase", "latency_samples", "pre_ringing_energy", "FirMetrics",
           "fir_metrics", "fir_multiplies_per_sample", "iir_multiplies_per_sample"]


def _taps_1d(taps) -> np.ndarray:
    h = np.asarray(taps, dtype=float)
    if h.ndim != 1 or len(h) == 0:
        raise DesignError(f"must be a non-empty 1-D array of taps, not shape {h.shape}",
                          field="taps")
    return h


def is_linear_phase(taps, rtol: float = 1e-9) -> bool:
    """True if the taps are symmetric or antisymmetric (types I-IV).

    Compared within ``rtol`` of the largest tap magnitude (window and
    remez designs are symmetric only to rounding).

    References
    ----------
    .. [1] Oppenheim and Schafer, 3rd ed., sec. 5.7.3 (generalised linear phase).
    """
    h = _taps_1d(taps)
    tol = rtol * float(np.max(np.abs(h)))
    if tol == 0:
        return True
    return bool(np.all(np.abs(h - h[::-1]) <= tol) or np.all(np.abs(h + h[::-1]) <= tol))


def latency_samples(taps) -> float:
    """Latency in samples: ``(N-1)/2`` for linear phase, else the index of the largest |tap|.

    A linear-phase FIR of ``N`` taps delays every frequency by ``(N-1)/2``
    samples (Oppenheim and Schafer [1]_ sec. 5.7.3); for any other the main
    peak of the impulse response is taken as its arrival (common practice,
    no published source).

    References
    ----------
    .. [1] Oppenheim and Schafer, 3rd ed., sec. 5.7.3.
    """
    h = _taps_1d(taps)
    if is_linear_phase(h):
        return (len(h) - 1) / 2.0
    return float(np.argmax(np.abs(h)))


def pre_ringing_energy(h) -> float:
    """Fraction of the impulse response's energy before its main (largest |h|) peak.

    ``sum_{n < p} h[n]^2 / sum_n h[n]^2`` with ``p = argmax |h|`` (the first
    one if tied). 0 for a filter whose energy all arrives at or after the peak.
    (The definition used here: common practice, no published source.)
    """
    h = _taps_1d(h)
    e = h * h
    total = float(e.sum())
    if total == 0:
        return 0.0
    return float(e[: int(np.argmax(np.abs(h)))].sum() / total)


@dataclass(frozen=True)
class FirMetrics:
    """Summary of one FIR (see :func:`fir_metrics`).

    Attributes
    ----------
    n_taps : int
    linear_phase : bool
    latency_samples : float
    latency_ms : float
    pre_ringing : float
        Fraction of energy before the main peak.
    multiplies_per_sample : int
        As :func:`fir_multiplies_per_sample`.
    dc_gain_db, nyquist_gain_db : float
        ``20 log10 |H|`` at 0 Hz and fs/2 (-inf for an exact zero).
    """

    n_taps: int
    linear_phase: bool
    latency_samples: float
    latency_ms: float
    pre_ringing: float
    multiplies_per_sample: int
    dc_gain_db: float
    nyquist_gain_db: float


def fir_metrics(taps, fs_hz: float) -> FirMetrics:
    """Length, latency (samples and ms), pre-ringing, cost and end gains of one FIR.

    The end gains are ``H(1) = sum_n h[n]`` at 0 Hz and ``H(-1) = sum_n
    (-1)^n h[n]`` at fs/2 (``z = e^{j omega}`` at ``omega = 0, pi``).
    """
    h = _taps_1d(taps)
    fs = check_fs(fs_hz)
    lat = latency_samples(h)
    dc = abs(float(h.sum()))
    ny = abs(float(np.sum(h * (-1.0) ** np.arange(len(h)))))
    with np.errstate(divide="ignore"):
        dc_db, ny_db = float(20 * np.log10(dc)), float(20 * np.log10(ny))
    return FirMetrics(n_taps=len(h), linear_phase=is_linear_phase(h), latency_samples=lat,
                      latency_ms=1000.0 * lat / fs, pre_ringing=pre_ringing_energy(h),
                      multiplies_per_sample=fir_multiplies_per_sample(h),
                      dc_gain_db=dc_db, nyquist_gain_db=ny_db)


def fir_multiplies_per_sample(taps, folded: bool | None = None) -> int:
    """Multiplications per output sample of a direct-form FIR.

    Parameters
    ----------
    taps : int or array_like
        A length ``N``, or the taps themselves.
    folded : bool, optional
        Count the folded form of a linear-phase FIR: the two samples that
        share a coefficient are added (or subtracted) first, so ``ceil(N/2)``
        multiplies (a zero centre tap of an antisymmetric filter is still
        counted). Default: folded if ``taps`` is an array that is linear
        phase (:func:`is_linear_phase`), unfolded (``N``) for a bare length.

    Returns
    -------
    int
        ``N`` (direct form) or ``ceil(N/2)`` (folded form). Additions are
        not counted.

    References
    ----------
    .. [1] Oppenheim and Schafer, 3rd ed., sec. 6.5.3 (linear-phase FIR structures).
    """
    if isinstance(taps, (int, np.integer)) and not isinstance(taps, bool):
        n = int(taps)
        if n < 1:
            raise DesignError(f"must be at least 1 tap, not {n}", field="taps")
        linear = False
    else:
        h = _taps_1d(taps)
        n = len(h)
        linear = is_linear_phase(h)
    if folded is None:
        folded = linear
    return (n + 1) // 2 if folded else n


def iir_multiplies_per_sample(n_sections: int) -> int:
    """Multiplications per sample of a cascade of biquads: 5 per section.

    Each second-order section in direct form (I or II, either transposed)
    with ``a0 = 1`` multiplies by ``b0, b1, b2, a1, a2`` once per sample.

    Parameters
    ----------
    n_sections : int
        Number of sections (rows of an (n, 6) sos array).

    References
    ----------
    .. [1] Oppenheim and Schafer, 3rd ed., sec. 6.3.2 (cascade form).
    """
    if isinstance(n_sections, bool) or not isinstance(n_sections, (int, np.integer)) \
            or n_sections < 0:
        raise DesignError(f"must be a whole number of sections >= 0, not {n_sections!r}",
                          field="n_sections")
    return 5 * int(n_sections)
