"""Linear-phase FIR crossovers: windowed sinc, equiripple, least squares, complementary splits.

Pure numpy/scipy: arrays in, arrays out. Taps are 1-D float arrays ``h[n]``
with ``H(z) = sum_n h[n] z^-n``. Frequencies are in Hz with the sample rate
``fs_hz``; ``omega`` is the normalised angular frequency in rad/sample
(``omega = 2 pi f / fs``).

Field names in errors follow the rest of :mod:`planner.dsp`: ``"type"`` for
the filter kind, ``"freq"``/``"freq2"`` for edges, ``"sample_rate"``,
``"taps"``, ``"window"``, ``"beta"``, and the spec fields ``"pass_hz"``,
``"stop_hz"``, ``"ripple_db"``, ``"atten_db"``, ``"transition_hz"``.

Spec conventions (used by the equiripple and least-squares searches):

* ``ripple_db`` is the peak-to-peak pass-band ripple,
  ``20 log10(max|H| / min|H|)`` over the pass band(s); the matching
  deviation is ``delta_p = (10^(R/20) - 1) / (10^(R/20) + 1)``, so that
  ``(1 + delta_p) / (1 - delta_p) = 10^(R/20)``.
* ``atten_db`` is the stop-band attenuation relative to the nominal pass-band
  gain of 1 (0 dB): ``-20 log10(max|H|)`` over the stop band(s); the matching
  deviation is ``delta_s = 10^(-A/20)``.

References
----------
.. [1] A. V. Oppenheim and R. W. Schafer, "Discrete-Time Signal Processing",
   3rd ed., Pearson, 2010, ch. 5 (linear phase, group delay) and ch. 7
   (window method, Kaiser formulas, Parks-McClellan).
.. [2] J. F. Kaiser, "Nonrecursive digital filter design using the I0-sinh
   window function", Proc. IEEE Int. Symp. Circuits and Systems, 1974,
   pp. 20-23.
.. [3] T. W. Parks and J. H. McClellan, "Chebyshev approximation for
   nonrecursive digital filters with linear phase", IEEE Trans. Circuit
   Theory, vol. CT-19, no. 2, pp. 189-194, 1972.
.. [5] F. J. Harris, "On the use of windows for harmonic analysis with the
   discrete Fourier transform", Proc. IEEE, vol. 66, no. 1, pp. 51-83, 1978.
.. [6] T. W. Parks and C. S. Burrus, "Digital Filter Design", Wiley, 1987,
   ch. 3 (least-squares FIR design).
"""

from __future__ import annotations

import math
import threading
from collections import OrderedDict
from dataclasses import dataclass
from typing import Callable, Sequence

import numpy as np
from scipy import signal, special

from planner.defaults import MAX_TAPS
from planner.errors import DesignCancelled, DesignError, SpecNotMetError

__all__ = [
    "WINDOWS",
    "KINDS",
    "DesignCancelled",
    "FirSpec",
    "FirDesign",
    "FirMetrics",
    "window",
    "window_fir",
    "kaiser_beta",
    "kaiser_taps",
    "kaiser_equiripple_taps",
    "estimate_taps",
    "equiripple_fir",
    "least_squares_fir",
    "measure_spec",
    "min_taps_equiripple",
    "min_taps_least_squares",
    "clear_design_cache",
    "complementary_split",
    "fir_response",
    "fir_response_and_derivative",
    "fir_group_delay_samples",
    "is_linear_phase",
    "latency_samples",
    "pre_ringing_energy",
    "fir_metrics",
    "fir_multiplies_per_sample",
    "iir_multiplies_per_sample",
]

#: Window names accepted by :func:`window` and :func:`window_fir`.
WINDOWS = ("boxcar", "triangular", "hann", "hamming", "blackman", "kaiser")

#: Filter kinds accepted by the designs.
KINDS = ("lowpass", "highpass", "bandpass")

#: Largest tap count the searches try unless told otherwise.
DEFAULT_MAX_TAPS = MAX_TAPS

#: Most exchanges of the equiripple designs (scipy.signal.remez's maxiter).
_MAXITER = 100


# --------------------------------------------------------------------------
# validation


def _check_fs(fs_hz) -> float:
    try:
        fs = float(fs_hz)
    except (TypeError, ValueError):
        fs = float("nan")
    if not (fs > 0 and math.isfinite(fs)):
        raise DesignError(f"must be a positive number of Hz, not {fs_hz!r}", field="sample_rate")
    return fs


def _check_freq(freq_hz, fs: float, field: str) -> float:
    try:
        f = float(freq_hz)
    except (TypeError, ValueError):
        raise DesignError(f"must be a number of Hz, not {freq_hz!r}", field=field) from None
    if not (0.0 < f < fs / 2):
        raise DesignError(
            f"{f:g} Hz must be above 0 Hz and below Nyquist ({fs / 2:g} Hz) "
            f"for sample_rate {fs:g}", field=field)
    return f


def _check_kind(kind) -> str:
    if kind not in KINDS:
        raise DesignError(f"must be one of {', '.join(KINDS)}, not {kind!r}", field="type")
    return kind


def _check_taps(taps, kind: str | None = None, odd: bool = False) -> int:
    if isinstance(taps, bool) or not isinstance(taps, (int, np.integer)):
        raise DesignError(f"must be a whole number of taps, not {taps!r}", field="taps")
    n = int(taps)
    if n < 3:
        raise DesignError(f"must be at least 3 taps, not {n}", field="taps")
    if (odd or kind in ("highpass", "bandpass")) and n % 2 == 0:
        what = f"a {kind}" if kind in ("highpass", "bandpass") else "this design"
        raise DesignError(
            f"must be odd for {what} (type I linear phase, whole-sample delay), not {n}",
            field="taps")
    return n


# --------------------------------------------------------------------------
# windows and the window method


def window(name: str, taps: int, beta: float | None = None) -> np.ndarray:
    """Symmetric window of ``taps`` points.

    Parameters
    ----------
    name : {"boxcar", "triangular", "hann", "hamming", "blackman", "kaiser"}
        ``"rectangular"`` and ``"triang"`` are accepted as aliases.
    taps : int
        Number of points (at least 3).
    beta : float, optional
        Kaiser shape parameter (required, and only used, for ``"kaiser"``).

    Returns
    -------
    ndarray, shape (taps,)
        ``w[k]`` for ``k = 0 .. taps-1``, symmetric about ``(taps-1)/2``.

    Notes
    -----
    With ``x = 2 pi k / (N - 1)``: Hann ``0.5 - 0.5 cos x``, Hamming
    ``0.54 - 0.46 cos x``, Blackman ``0.42 - 0.5 cos x + 0.08 cos 2x``
    (Harris 1978 [5]_); triangular ``1 - |k - (N-1)/2| / (L/2)`` with
    ``L = N + 1`` for odd ``N`` and ``L = N`` for even ``N`` (non-zero end
    points); Kaiser ``I0(beta sqrt(1 - (2k/(N-1) - 1)^2)) / I0(beta)``
    (Kaiser 1974 [2]_).

    References
    ----------
    .. [2] J. F. Kaiser, Proc. IEEE ISCAS, 1974.
    .. [5] F. J. Harris, Proc. IEEE 66(1), 1978.
    """
    name = {"rectangular": "boxcar", "triang": "triangular"}.get(name, name)
    if name not in WINDOWS:
        raise DesignError(f"must be one of {', '.join(WINDOWS)}, not {name!r}", field="window")
    n = _check_taps(taps)
    k = np.arange(n, dtype=float)
    x = 2.0 * np.pi * k / (n - 1)
    if name == "boxcar":
        return np.ones(n)
    if name == "triangular":
        half = (n + 1 if n % 2 else n) / 2.0
        return 1.0 - np.abs(k - (n - 1) / 2.0) / half
    if name == "hann":
        return 0.5 - 0.5 * np.cos(x)
    if name == "hamming":
        return 0.54 - 0.46 * np.cos(x)
    if name == "blackman":
        return 0.42 - 0.5 * np.cos(x) + 0.08 * np.cos(2.0 * x)
    if beta is None:
        raise DesignError("the kaiser window needs beta (a shape number >= 0), none given",
                          field="beta")
    try:
        b = float(beta)
    except (TypeError, ValueError):
        b = float("nan")
    if not (b >= 0 and math.isfinite(b)):
        raise DesignError(f"must be a number >= 0, not {beta!r}", field="beta")
    r = 2.0 * k / (n - 1) - 1.0
    return special.i0(b * np.sqrt(np.clip(1.0 - r * r, 0.0, None))) / special.i0(b)


_window = window


def _sinc_lowpass(fc: float, m: np.ndarray) -> np.ndarray:
    """Ideal lowpass impulse ``2 fc sinc(2 fc m)`` (fc in cycles/sample, m = n - centre)."""
    return 2.0 * fc * np.sinc(2.0 * fc * m)


def window_fir(kind: str, freq_hz: float, fs_hz: float, taps: int, window: str = "hann",
               beta: float | None = None, freq2_hz: float | None = None) -> np.ndarray:
    """Linear-phase FIR by the window method (windowed ideal sinc).

    Parameters
    ----------
    kind : {"lowpass", "highpass", "bandpass"}
    freq_hz : float
        Cut-off in Hz (the -6 dB point, half the ideal gain); the lower edge
        for a bandpass. In (0, fs/2).
    fs_hz : float
        Sample rate in Hz.
    taps : int
        Length ``N`` >= 3; odd for highpass and bandpass (type I: a highpass
        or bandpass of even length has a forced zero at Nyquist).
    window : str
        One of :data:`WINDOWS` (see :func:`window`).
    beta : float, optional
        Kaiser shape parameter, for ``window="kaiser"`` (see :func:`kaiser_beta`).
    freq2_hz : float, optional
        Upper edge in Hz of a bandpass (required for it, above ``freq_hz``).

    Returns
    -------
    ndarray, shape (taps,)
        Symmetric taps; delay ``(N-1)/2`` samples. Scaled to unit gain at DC
        (lowpass), at Nyquist (highpass) or at the band centre (bandpass).

    Notes
    -----
    ``h[n] = w[n] d[n]`` with the ideal response ``d[n]`` a difference of
    sinc lowpasses centred at ``(N-1)/2`` (Oppenheim and Schafer [1]_,
    sec. 7.5); the highpass is the delayed impulse minus a lowpass.

    References
    ----------
    .. [1] A. V. Oppenheim and R. W. Schafer, "Discrete-Time Signal
       Processing", 3rd ed., 2010, sec. 7.5.
    """
    _check_kind(kind)
    fs = _check_fs(fs_hz)
    n = _check_taps(taps, kind)
    f1 = _check_freq(freq_hz, fs, "freq")
    if kind == "bandpass":
        if freq2_hz is None:
            raise DesignError("a bandpass needs its upper edge freq2, none given", field="freq2")
        f2 = _check_freq(freq2_hz, fs, "freq2")
        if not f2 > f1:
            raise DesignError(f"{f2:g} Hz must be above freq ({f1:g} Hz)", field="freq2")
    w = _window(window, n, beta)
    m = np.arange(n) - (n - 1) / 2.0
    if kind == "lowpass":
        d, f_scale = _sinc_lowpass(f1 / fs, m), 0.0
    elif kind == "highpass":
        d, f_scale = _sinc_lowpass(0.5, m) - _sinc_lowpass(f1 / fs, m), 0.5
    else:
        d, f_scale = _sinc_lowpass(f2 / fs, m) - _sinc_lowpass(f1 / fs, m), (f1 + f2) / (2 * fs)
    h = w * d
    # Unit gain where it should pass: the zero-phase amplitude there.
    return h / np.sum(h * np.cos(2.0 * np.pi * f_scale * m))


# --------------------------------------------------------------------------
# Kaiser formulas and length estimates


def _check_atten(atten_db, minimum: float = 0.0) -> float:
    try:
        a = float(atten_db)
    except (TypeError, ValueError):
        a = float("nan")
    if not (a > minimum and math.isfinite(a)):
        raise DesignError(f"must be a number of dB above {minimum:g}, not {atten_db!r}",
                          field="atten_db")
    return a


def _check_positive(value, field: str, unit: str) -> float:
    try:
        v = float(value)
    except (TypeError, ValueError):
        v = float("nan")
    if not (v > 0 and math.isfinite(v)):
        raise DesignError(f"must be a positive number of {unit}, not {value!r}", field=field)
    return v


def kaiser_beta(atten_db: float) -> float:
    """Kaiser window shape ``beta`` for a stop-band attenuation of ``atten_db`` dB.

    ``beta = 0.1102 (A - 8.7)`` for ``A > 50``;
    ``0.5842 (A - 21)^0.4 + 0.07886 (A - 21)`` for ``21 <= A <= 50``;
    ``0`` below 21 dB (Kaiser 1974 [2]_, as given in Oppenheim and Schafer
    [1]_, eq. 7.62).

    References
    ----------
    .. [1] Oppenheim and Schafer, "Discrete-Time Signal Processing", 3rd ed., eq. 7.62.
    .. [2] J. F. Kaiser, Proc. IEEE ISCAS, 1974.
    """
    a = _check_atten(atten_db)
    if a > 50:
        return 0.1102 * (a - 8.7)
    if a >= 21:
        return 0.5842 * (a - 21) ** 0.4 + 0.07886 * (a - 21)
    return 0.0


def kaiser_taps(atten_db: float, transition_hz: float, fs_hz: float) -> int:
    """Kaiser-window length for ``atten_db`` dB over a transition of ``transition_hz``.

    ``N = (A - 7.95) / (2.285 * delta_omega) + 1`` with
    ``delta_omega = 2 pi transition / fs`` rad/sample, rounded up, then up to
    the next odd number (type I) (Kaiser 1974 [2]_; Oppenheim and Schafer
    [1]_, eq. 7.63, where ``M = N - 1``).

    Parameters
    ----------
    atten_db : float
        Stop-band attenuation in dB; at least 8 dB (the formula gives no
        length below about 7.95 dB).
    transition_hz : float
        Transition width in Hz, below fs/2.
    fs_hz : float
        Sample rate in Hz.

    Returns
    -------
    int
        Odd number of taps, at least 3.

    References
    ----------
    .. [1] Oppenheim and Schafer, 3rd ed., eq. 7.63.
    .. [2] J. F. Kaiser, Proc. IEEE ISCAS, 1974.
    """
    a = _check_atten(atten_db, minimum=7.95)
    fs = _check_fs(fs_hz)
    tw = _check_positive(transition_hz, "transition_hz", "Hz")
    if tw >= fs / 2:
        raise DesignError(f"{tw:g} Hz must be below Nyquist ({fs / 2:g} Hz)",
                          field="transition_hz")
    d_omega = 2.0 * np.pi * tw / fs
    n = int(math.ceil((a - 7.95) / (2.285 * d_omega) + 1.0))
    return max(3, n | 1)


def _deviations(ripple_db: float, atten_db: float) -> tuple[float, float]:
    r = 10.0 ** (ripple_db / 20.0)
    return (r - 1.0) / (r + 1.0), 10.0 ** (-atten_db / 20.0)


def kaiser_equiripple_taps(ripple_db: float, atten_db: float, transition_hz: float,
                           fs_hz: float) -> int:
    """Kaiser's length estimate for an equiripple (Parks-McClellan) filter.

    ``N = (-20 log10 sqrt(delta_p delta_s) - 13) / (14.6 delta_f) + 1`` with
    ``delta_f = transition / fs`` (Kaiser 1974 [2]_; quoted in Oppenheim and
    Schafer [1]_, sec. 7.7), rounded up to odd. See the module notes for
    ``delta_p`` and ``delta_s``.

    References
    ----------
    .. [1] Oppenheim and Schafer, 3rd ed., sec. 7.7.
    .. [2] J. F. Kaiser, Proc. IEEE ISCAS, 1974.
    """
    dp, ds = _deviations(_check_positive(ripple_db, "ripple_db", "dB"), _check_atten(atten_db))
    df = _check_positive(transition_hz, "transition_hz", "Hz") / _check_fs(fs_hz)
    n = int(math.ceil((-20.0 * math.log10(math.sqrt(dp * ds)) - 13.0) / (14.6 * df) + 1.0))
    return max(3, n | 1)


# --------------------------------------------------------------------------
# specifications


@dataclass(frozen=True)
class FirSpec:
    """A magnitude specification for a linear-phase FIR.

    Parameters
    ----------
    kind : {"lowpass", "highpass", "bandpass"}
    pass_hz : float or (float, float)
        Pass-band edge in Hz; for a bandpass the (lower, upper) pass edges.
    stop_hz : float or (float, float)
        Stop-band edge in Hz; for a bandpass the (lower, upper) stop edges,
        outside the pass edges.
    ripple_db : float
        Largest peak-to-peak pass-band ripple in dB.
    atten_db : float
        Smallest stop-band attenuation in dB below the nominal 0 dB gain.
    """

    kind: str
    pass_hz: float | tuple[float, float]
    stop_hz: float | tuple[float, float]
    ripple_db: float
    atten_db: float

    def describe(self) -> str:
        """Plain one-line statement of the spec, e.g. for error messages."""
        def edges(v):
            return "-".join(f"{x:g}" for x in np.atleast_1d(v))
        return (f"{self.kind} spec (pass edge {edges(self.pass_hz)} Hz, stop edge "
                f"{edges(self.stop_hz)} Hz, ripple {self.ripple_db:g} dB, "
                f"attenuation {self.atten_db:g} dB)")


def _spec_bands(spec: FirSpec, fs_hz: float):
    """Validate ``spec``; return (bands Hz, desired per band, pass mask per band, transition Hz)."""
    fs = _check_fs(fs_hz)
    _check_kind(spec.kind)
    _check_positive(spec.ripple_db, "ripple_db", "dB")
    _check_atten(spec.atten_db)
    nyq = fs / 2
    if spec.kind == "bandpass":
        p = np.atleast_1d(np.asarray(spec.pass_hz, dtype=float))
        s = np.atleast_1d(np.asarray(spec.stop_hz, dtype=float))
        if p.shape != (2,):
            raise DesignError(f"a bandpass needs (lower, upper) pass edges, not {spec.pass_hz!r}",
                              field="pass_hz")
        if s.shape != (2,):
            raise DesignError(f"a bandpass needs (lower, upper) stop edges, not {spec.stop_hz!r}",
                              field="stop_hz")
        for v, fld in ((p[0], "pass_hz"), (p[1], "pass_hz"), (s[0], "stop_hz"), (s[1], "stop_hz")):
            _check_freq(v, fs, fld)
        if not p[0] < p[1]:
            raise DesignError(f"lower edge must be below upper edge, not {spec.pass_hz!r}",
                              field="pass_hz")
        if not (s[0] < p[0] and p[1] < s[1]):
            raise DesignError(f"stop edges {spec.stop_hz!r} Hz must lie outside the pass edges "
                              f"{spec.pass_hz!r} Hz", field="stop_hz")
        bands = [(0.0, s[0]), (p[0], p[1]), (s[1], nyq)]
        return bands, [0.0, 1.0, 0.0], [False, True, False], min(p[0] - s[0], s[1] - p[1])
    fp = _check_freq(spec.pass_hz, fs, "pass_hz")
    fst = _check_freq(spec.stop_hz, fs, "stop_hz")
    if spec.kind == "lowpass":
        if not fp < fst:
            raise DesignError(f"{fst:g} Hz must be above the pass edge ({fp:g} Hz) "
                              "for a lowpass", field="stop_hz")
        return [(0.0, fp), (fst, nyq)], [1.0, 0.0], [True, False], fst - fp
    if not fst < fp:
        raise DesignError(f"{fst:g} Hz must be below the pass edge ({fp:g} Hz) "
                          "for a highpass", field="stop_hz")
    return [(0.0, fst), (fp, nyq)], [0.0, 1.0], [False, True], fp - fst


def estimate_taps(spec: FirSpec, fs_hz: float) -> int:
    """Kaiser 1974 length estimate of the equiripple filter meeting ``spec``.

    :func:`kaiser_equiripple_taps` on the spec's transition (the narrower
    one of a bandpass). Over ripples of 0.01-1 dB, attenuations of 40-100 dB
    and transitions of 0.005-0.1 fs it lies within -15 % and +11 % of the
    fewest taps the search finds (see the tests); the searches start from
    it but do not depend on it.

    References
    ----------
    .. [2] J. F. Kaiser, Proc. IEEE ISCAS, 1974.
    """
    _, _, _, tw = _spec_bands(spec, fs_hz)
    return kaiser_equiripple_taps(spec.ripple_db, spec.atten_db, tw, fs_hz)


def _weights(spec: FirSpec, is_pass) -> list[float]:
    # Minimax weights inversely proportional to the allowed deviations
    # (Parks and McClellan 1972 [3]): 1 in the pass band, dp/ds in the stop band.
    dp, ds = _deviations(spec.ripple_db, spec.atten_db)
    return [1.0 if p else dp / ds for p in is_pass]


def equiripple_fir(spec: FirSpec, fs_hz: float, taps: int, maxiter: int = _MAXITER,
                   grid_density: int = 16) -> np.ndarray:
    """Parks-McClellan (equiripple) design of ``spec`` at a fixed odd length.

    Weights are ``1`` in the pass band and ``delta_p / delta_s`` in the stop
    band, so that the equal weighted ripple splits as the spec asks. The
    result is not checked against the spec (see :func:`min_taps_equiripple`).
    Designs are kept in the design cache (see :func:`clear_design_cache`):
    the same spec, rate, length and settings are designed once.

    Parameters
    ----------
    spec : FirSpec
    fs_hz : float
    taps : int
        Odd length (type I).
    maxiter, grid_density : int
        Passed to :func:`scipy.signal.remez`. Most designs converge in well
        under 40 exchanges; some steep ones at high attenuation need more,
        and scipy then returns the unconverged design without a word (10 dB
        or more off the spec where a converged one meets it), hence 100.

    Returns
    -------
    ndarray, shape (taps,)
        A fresh array (the cached one is read-only).

    Raises
    ------
    ValueError
        As :func:`scipy.signal.remez` when the exchange does not converge.

    References
    ----------
    .. [3] Parks and McClellan, IEEE Trans. Circuit Theory CT-19(2), 1972.
    """
    _spec_bands(spec, fs_hz)
    n = _check_taps(taps, odd=True)
    entry = _design(_REMEZ, spec, float(fs_hz), n, int(grid_density), int(maxiter))
    if entry.taps is None:
        raise ValueError(entry.error)
    return entry.taps.copy()


def _remez(spec: FirSpec, fs_hz: float, n: int, grid_density: int, maxiter: int) -> np.ndarray:
    bands, desired, is_pass, _ = _spec_bands(spec, fs_hz)
    edges = [f for b in bands for f in b]
    return signal.remez(n, edges, desired, weight=_weights(spec, is_pass), fs=float(fs_hz),
                        maxiter=maxiter, grid_density=grid_density)


def least_squares_fir(kind: str, freq_hz: float, fs_hz: float, taps: int, transition_hz: float,
                      freq2_hz: float | None = None, stop_weight: float = 1.0) -> np.ndarray:
    """Weighted least-squares linear-phase FIR (scipy.signal.firls).

    The transition of width ``transition_hz`` is centred on each edge; for a
    lowpass at ``f`` the pass band is ``[0, f - tw/2]`` and the stop band
    ``[f + tw/2, fs/2]``.

    Parameters
    ----------
    kind : {"lowpass", "highpass", "bandpass"}
    freq_hz : float
        Edge in Hz (lower edge of a bandpass).
    fs_hz : float
    taps : int
        Odd length.
    transition_hz : float
        Width in Hz of each transition band (excluded from the error).
    freq2_hz : float, optional
        Upper edge of a bandpass.
    stop_weight : float
        Weight of the stop band(s) relative to the pass band.

    Returns
    -------
    ndarray, shape (taps,)

    References
    ----------
    .. [6] Parks and Burrus, "Digital Filter Design", 1987, ch. 3.
    """
    _check_kind(kind)
    fs = _check_fs(fs_hz)
    n = _check_taps(taps, odd=True)
    tw = _check_positive(transition_hz, "transition_hz", "Hz")
    sw = _check_positive(stop_weight, "stop_weight", "(relative weight)")
    f1 = _check_freq(freq_hz, fs, "freq")
    if kind == "bandpass":
        if freq2_hz is None:
            raise DesignError("a bandpass needs its upper edge freq2, none given", field="freq2")
        f2 = _check_freq(freq2_hz, fs, "freq2")
        if not f2 > f1 + tw:
            raise DesignError(f"{f2:g} Hz must be above freq + transition_hz "
                              f"({f1 + tw:g} Hz)", field="freq2")
        spec = FirSpec("bandpass", (f1 + tw / 2, f2 - tw / 2), (f1 - tw / 2, f2 + tw / 2), 1, 1)
    elif kind == "lowpass":
        spec = FirSpec(kind, f1 - tw / 2, f1 + tw / 2, 1, 1)
    else:
        spec = FirSpec(kind, f1 + tw / 2, f1 - tw / 2, 1, 1)
    try:
        bands, desired, is_pass, _ = _spec_bands(spec, fs)
    except DesignError:
        raise DesignError(f"{tw:g} Hz puts a band edge outside (0, {fs / 2:g}) Hz "
                          f"around freq {f1:g} Hz", field="transition_hz") from None
    return _firls(n, bands, desired, [1.0 if p else sw for p in is_pass], fs)


def _firls(n, bands, desired, weight, fs):
    edges = [f for b in bands for f in b]
    des = [d for d in desired for _ in range(2)]
    return signal.firls(n, edges, des, weight=weight, fs=fs)


def _least_squares_spec(spec: FirSpec, fs_hz: float, taps: int) -> np.ndarray:
    bands, desired, is_pass, _ = _spec_bands(spec, fs_hz)
    return _firls(_check_taps(taps, odd=True), bands, desired, _weights(spec, is_pass),
                  float(fs_hz))


# --------------------------------------------------------------------------
# measuring a design against its spec

#: Dense measuring grid: FFT points per tap (remez's own grid has about 8
#: points per tap over [0, fs/2] at grid_density 16; this is 4 times denser).
_DENSE_PER_TAP = 64


def measure_spec(taps: np.ndarray, spec: FirSpec, fs_hz: float) -> tuple[float, float]:
    """Measured pass-band ripple and stop-band attenuation of ``taps``.

    The magnitude is taken on a dense grid (a zero-padded FFT of at least
    64 points per tap) plus every band edge exactly.

    Returns
    -------
    ripple_db : float
        ``20 log10(max|H| / min|H|)`` over the pass band(s) (inf if a zero).
    atten_db : float
        ``-20 log10(max|H|)`` over the stop band(s).
    """
    bands, _, is_pass, _ = _spec_bands(spec, fs_hz)
    fs = float(fs_hz)
    h = np.asarray(taps, dtype=float)
    nfft = 1 << max(13, int(math.ceil(math.log2(_DENSE_PER_TAP * len(h)))))
    mag = np.abs(np.fft.rfft(h, nfft))
    grid = np.arange(len(mag)) * (fs / nfft)
    edges = np.array([f for b in bands for f in b])
    mag_edges = np.abs(fir_response(h, edges, fs)).reshape(-1, 2)
    pmax, pmin, smax = 0.0, np.inf, 0.0
    for (lo, hi), p, me in zip(bands, is_pass, mag_edges):
        sel = mag[(grid >= lo) & (grid <= hi)]
        sel = np.concatenate([sel, me])
        if p:
            pmax, pmin = max(pmax, sel.max()), min(pmin, sel.min())
        else:
            smax = max(smax, sel.max())
    with np.errstate(divide="ignore"):
        ripple = float(20.0 * np.log10(pmax / pmin)) if pmin > 0 else math.inf
        atten = float(-20.0 * np.log10(smax)) if smax > 0 else math.inf
    return ripple, atten


# --------------------------------------------------------------------------
# design cache (shared by the fixed-length designs and the searches)

_REMEZ, _FIRLS = "remez", "firls"

#: Grid density of the bracketing trials of the equiripple search (half of
#: scipy.signal.remez's default 16, which the final designs use): at 1625
#: taps it costs about 0.75 of a full design, and the attenuation it reaches
#: is within about 0.15 dB of the full design's.
_COARSE_DENSITY = 8
#: Full grid density (scipy.signal.remez's default).
_FULL_DENSITY = 16
#: Most taps the design cache holds, over all its designs (8 bytes each).
_CACHE_VALUES = 1 << 21


class _Entry:
    """One cached design: its taps (read-only) or why it failed, and its measure per spec."""

    __slots__ = ("taps", "error", "measured")

    def __init__(self, taps: np.ndarray | None, error: str = ""):
        self.taps, self.error, self.measured = taps, error, None


class _DesignCache:
    """Designs by (method, spec, rate, taps, settings); the least recently used go first.

    Shared by the command line and the editor's worker threads (one lock
    around the table; two threads asking for the same new design may both
    make it, and the later one is kept).
    """

    def __init__(self, max_values: int):
        self.max_values = max_values
        self._table: OrderedDict[tuple, _Entry] = OrderedDict()
        self._values = 0
        self._lock = threading.Lock()

    def get(self, key: tuple) -> _Entry | None:
        with self._lock:
            e = self._table.get(key)
            if e is not None:
                self._table.move_to_end(key)
            return e

    def put(self, key: tuple, entry: _Entry) -> None:
        size = 0 if entry.taps is None else len(entry.taps)
        with self._lock:
            old = self._table.pop(key, None)
            if old is not None and old.taps is not None:
                self._values -= len(old.taps)
            self._table[key] = entry
            self._values += size
            while self._values > self.max_values and len(self._table) > 1:
                _, e = self._table.popitem(last=False)
                if e.taps is not None:
                    self._values -= len(e.taps)

    def clear(self) -> None:
        with self._lock:
            self._table.clear()
            self._values = 0

    def __len__(self) -> int:
        return len(self._table)


_CACHE = _DesignCache(_CACHE_VALUES)


def clear_design_cache() -> None:
    """Forget every cached equiripple and least-squares design (for timing, or to free memory).

    :func:`equiripple_fir`, :func:`min_taps_equiripple` and
    :func:`min_taps_least_squares` keep their designs, keyed by method,
    spec, sample rate, length and design settings, in one table of at most
    about two million taps (16 MB), the least recently used dropped first.
    """
    _CACHE.clear()


def _spec_key(spec: FirSpec) -> tuple:
    def edges(v):
        return tuple(float(x) for x in np.atleast_1d(np.asarray(v, dtype=float)))
    return (spec.kind, edges(spec.pass_hz), edges(spec.stop_hz), float(spec.ripple_db),
            float(spec.atten_db))


def _design(method: str, spec: FirSpec, fs: float, n: int, grid_density: int = _FULL_DENSITY,
            maxiter: int = _MAXITER) -> _Entry:
    """The cached design of ``spec`` at ``n`` taps (``spec`` already checked)."""
    key = (method, _spec_key(spec), fs, n) + ((grid_density, maxiter) if method == _REMEZ else ())
    entry = _CACHE.get(key)
    if entry is None:
        try:
            h = (_remez(spec, fs, n, grid_density, maxiter) if method == _REMEZ
                 else _least_squares_spec(spec, fs, n))
        except (ValueError, np.linalg.LinAlgError) as exc:   # no convergence / singular
            entry = _Entry(None, str(exc) or type(exc).__name__)
        else:
            if np.all(np.isfinite(h)):
                h = np.asarray(h, dtype=float)
                h.setflags(write=False)
                entry = _Entry(h)
            else:
                entry = _Entry(None, "non-finite taps")
        _CACHE.put(key, entry)
    return entry


# --------------------------------------------------------------------------
# minimum-length search (shared by the equiripple and least-squares designs)


@dataclass(frozen=True)
class FirDesign:
    """Result of a minimum-length search.

    Attributes
    ----------
    taps : ndarray
        The shortest odd-length design found that meets the spec.
    ripple_db, atten_db : float
        Its measured pass-band ripple and stop-band attenuation (dB).
    estimate_taps : int
        The Kaiser 1974 estimate (:func:`estimate_taps`) the search started from.
    trials : int
        Number of trial designs the search looked at (made, or taken from
        the design cache), the bracketing ones at the lower grid density
        included.
    """

    taps: np.ndarray
    ripple_db: float
    atten_db: float
    estimate_taps: int
    trials: int

    @property
    def n_taps(self) -> int:
        """Length of the design (taps)."""
        return len(self.taps)


def _ceil_odd(x: float) -> int:
    """The smallest odd whole number >= ``x``."""
    n = int(math.ceil(x - 1e-9))
    return n if n % 2 else n + 1


def _round_odd(x: float) -> int:
    """The odd whole number nearest to ``x``."""
    return 2 * int(math.floor((x - 1.0) / 2.0 + 0.5)) + 1


#: Margins (dB) beyond this are clipped: a design that far off says only "far".
_MARGIN_CLIP_DB = 300.0
#: A trial whose predicted length is more than this fraction away (or 4 taps)
#: is followed by a bracketing trial at the lower grid density; a closer one
#: by a full design. (At 95-100 dB the coarse designs' margins scatter by a
#: few dB, so they only serve to get near.)
_COARSE_STEP = 0.1
#: A secant through a coarse and a full trial needs margins this far apart
#: (dB), well above what the grid density changes.
_MIXED_SECANT_DB = 1.5
#: Secant slopes are kept between 1/_SLOPE_LOW and _SLOPE_RANGE times the
#: nominal (Kaiser) slope: two noisy margins close together give any slope.
_SLOPE_LOW, _SLOPE_RANGE = 2.0, 3.0
#: Fraction of the way a prediction from one full trial and the nominal slope
#: goes: near the crossing the margin usually grows 1.5-2 times faster.
_DAMP = 0.67
#: Allowance (dB) of the downward check, at least: see :func:`_descent_floor`.
_NOISE_FLOOR_DB = 0.05
#: Full trials nearest the answer that the downward check fits its line to.
_FIT_POINTS = 5
#: The margin's jitter from one length to the next, in odd steps of the
#: nominal slope (measured over the tests' sweeps: within about 1.5 steps).
_JITTER_STEPS = 1.5
#: Most extra full designs the downward check makes.
_MAX_DESCENT = 8
#: Most trials of the prediction step (it takes 2-5 as a rule; bisection over
#: the whole range takes at most 13).
_MAX_TRIALS = 40


def _margin_db(spec: FirSpec, ripple_db: float, atten_db: float) -> float:
    """How far a measured design is inside ``spec`` (dB; negative: outside).

    The smaller of the stop-band margin ``atten - A`` and the pass-band one
    ``20 log10(delta_p / delta_p_measured)``. An equiripple design of fixed
    weights keeps ``delta_p / delta_s`` constant, so both margins grow at
    the same rate with the length, nearly linearly in dB (Kaiser 1974 [2]_:
    ``-20 log10 sqrt(delta_p delta_s)`` grows by ``14.6 transition / fs``
    dB per tap).
    """
    dp, _ = _deviations(spec.ripple_db, spec.atten_db)
    r = 10.0 ** (min(ripple_db, 600.0) / 20.0)
    dp_m = (r - 1.0) / (r + 1.0)
    mp = 20.0 * math.log10(dp / dp_m) if dp_m > 0 else math.inf
    m = min(mp, atten_db - spec.atten_db)
    return max(-_MARGIN_CLIP_DB, min(_MARGIN_CLIP_DB, m))

def _descent_floor(full: dict, hi: int, slope0: float) -> float:
    """Shortest length that could still meet the spec below ``hi``, given the full trials.

    scipy's remez is not exactly monotone in the length: the margin it
    reaches jitters about its trend by up to about one and a half odd steps
    (some tenths of a dB at 95-100 dB, where its stop-band error is near the
    limits of its arithmetic), so a length just below the first miss may
    still meet. The trend down from ``hi`` falls at ``s`` dB per tap, the
    slope fitted to the full trials nearest ``hi`` but no steeper than the
    nominal ``slope0``; a shorter length can meet only while that line plus an
    allowance ``L`` stays above 0 dB, that is down to ``hi - (m(hi) + L) / s``.
    ``L`` is the largest of _NOISE_FLOOR_DB, the scatter of those trials about
    the line, and _JITTER_STEPS odd steps of the nominal slope.
    """
    pts = sorted(((k, v[1]) for k, v in full.items() if v[1] is not None),
                 key=lambda p: abs(p[0] - hi))[:_FIT_POINTS]
    m_hi = full[hi][1] if full[hi][1] is not None else 0.0
    s, scatter = slope0, 0.0
    n = np.array([p[0] for p in pts], dtype=float)
    m = np.array([p[1] for p in pts], dtype=float)
    if len(pts) >= 2 and np.ptp(n) > 0:
        fit = np.polyfit(n, m, 1)[0] if len(pts) >= 3 else (m[1] - m[0]) / (n[1] - n[0])
        s = min(max(float(fit), slope0 / _SLOPE_LOW), slope0)
        if len(pts) >= 3:
            resid = m - (m_hi + s * (n - hi))
            scatter = float(np.max(np.abs(resid - np.median(resid))))
    allowance = max(_NOISE_FLOOR_DB, scatter, _JITTER_STEPS * 2.0 * slope0)
    return hi - (m_hi + allowance) / s


def _search_min_odd(trial: Callable[[int, bool], tuple[bool, float | None, object]],
                    n_start: int, max_taps: int, slope0: float,
                    progress: Callable[[float], None] | None,
                    cancel: Callable[[], bool] | None, coarse_is_exact: bool = False):
    """Smallest odd ``n`` in ``[3, max_taps]`` whose full design meets the spec.

    ``trial(n, coarse)`` designs ``n`` taps (at the lower grid density when
    ``coarse``) and returns ``(meets, margin_db, value)``: whether it meets
    the spec, :func:`_margin_db` (None when the design failed) and what to
    return. ``slope0`` is the nominal margin gained per tap (dB).

    1. Prediction: the margin is close to linear in the length, so each
       trial predicts where it crosses 0 dB, by the secant through the two
       trials nearest the crossing (a meeting and a missing full one when
       both are known; from ``slope0`` while there is only one trial). The
       first trial is at ``n_start``; a prediction more than _COARSE_STEP
       away is tried at the lower grid density (a bracketing trial), a
       nearer one with a full design. It ends when a full design of ``N``
       taps meets the spec and one of ``N - 2`` does not. Predictions that
       land beyond a known bound, or two in a row that do not halve the
       bracket, give way to bisection (or to a doubling step while nothing
       meets), so the search converges whatever the first guess.
    2. Downward check: shorter lengths are tried while
       :func:`_descent_floor` says one could still meet; one that does
       becomes ``N``.

    Returns ``(n, value, trials)``, or ``(None, (n_best, value), trials)``
    when even ``max_taps`` fails (``n_best`` the longest full design tried).
    """
    steps = [0]
    full: dict[int, tuple[bool, float | None, object]] = {}
    coarse: dict[int, float] = {}
    coarse_tried: set[int] = set()

    def run(n: int, is_coarse: bool):
        if cancel is not None and cancel():
            raise DesignCancelled(
                f"the design was cancelled after {steps[0]} trial designs "
                f"(next would have been {n} taps)", field="taps")
        steps[0] += 1
        res = trial(n, is_coarse)
        if is_coarse and not coarse_is_exact:
            coarse_tried.add(n)
            if res[1] is not None:
                coarse[n] = res[1]
        else:
            full[n] = res
        # Most searches end within 3-5 trials; the fraction never goes back.
        if progress is not None:
            progress(0.9 * (1.0 - 0.6 ** steps[0]))

    def bounds() -> tuple[int, int | None]:
        """Shortest full design that meets, and the longest one below it that misses.

        A length whose design failed (remez did not converge: it does at long
        lengths and high attenuations) says nothing about the spec and is no
        bound; it is only never tried again.
        """
        hi = min((k for k, v in full.items() if v[0]), default=None)
        lo = max((k for k, v in full.items()
                  if not v[0] and v[1] is not None and (hi is None or k < hi)), default=1)
        return lo, hi

    def untried(lower: int, upper: int, near: int) -> int | None:
        """The untried odd length in [lower, upper] nearest to ``near`` (None if none)."""
        near = min(max(near, lower), upper)
        for d in range(0, upper - lower + 1, 2):
            for k in (near - d, near + d):
                if lower <= k <= upper and k not in full:
                    return k
        return None

    def done(lo: int, hi: int | None) -> bool:
        if hi is not None:               # every length between lo and hi tried
            return untried(lo + 2, hi - 2, hi - 2) is None
        return lo >= max_taps or untried(lo + 2, max_taps, max_taps) is None

    def slope_of(p1, p2, mixed: bool) -> float | None:
        (n1, m1), (n2, m2) = p1, p2
        if n1 == n2 or (mixed and abs(m2 - m1) < _MIXED_SECANT_DB):
            return None
        s = (m2 - m1) / (n2 - n1)
        if not (s > 0 and math.isfinite(s)):
            return None
        # Two noisy margins close together can give any slope: keep it within
        # a factor of _SLOPE_RANGE of the nominal one.
        return min(max(s, slope0 / _SLOPE_LOW), slope0 * _SLOPE_RANGE)

    def predict() -> tuple[float, int, bool] | None:
        """Length where the margin is predicted to cross 0 dB, the trial it is predicted
        from, and whether that is a full trial and the nominal slope."""
        pts = [(k, v[1], True) for k, v in full.items() if v[1] is not None]
        pts += [(k, m, False) for k, m in coarse.items() if k not in full]
        if not pts:
            return None
        # The trial nearest the crossing (a full one on a tie).
        ref = min(pts, key=lambda p: (abs(p[1]), not p[2]))
        s = None
        meet = [p for p in pts if p[2] and full[p[0]][0]]
        miss = [p for p in pts if p[2] and not full[p[0]][0]]
        if meet and miss:                       # full trials on both sides
            s = slope_of(min(meet)[:2], max(miss)[:2], False)
        if s is None:
            for other in sorted((p for p in pts if p is not ref), key=lambda p: abs(p[1])):
                s = slope_of(ref[:2], other[:2], other[2] != ref[2])
                if s is not None:
                    break
        nominal = s is None
        if nominal:
            s = slope0
        return ref[0] - ref[1] / s, ref[0], nominal and ref[2]

    def clamp(n: int) -> int:
        return min(max(3, n), max_taps)

    n, is_coarse = clamp(_round_odd(n_start)), False
    widths: list[int] = []
    growth = 0
    while steps[0] < _MAX_TRIALS:
        if is_coarse and n in coarse_tried:
            is_coarse = False
        if not (not is_coarse and n in full):
            run(n, is_coarse)
        lo, hi = bounds()
        if done(lo, hi):
            break
        if hi is not None and lo in full:
            widths.append(hi - lo)
        lower, upper = lo + 2, (max_taps if hi is None else hi - 2)
        guess = predict()
        nxt = None
        if guess is not None and math.isfinite(guess[0]):
            root, ref, _ = guess
            # Never jump by more than 4x at once, whatever the prediction says.
            root = min(max(root, ref / 4.0), 4.0 * ref + 8.0)
            far = abs(root - ref) > max(_COARSE_STEP * root, 4.0)
            is_coarse = bool(far) and not coarse_is_exact
            if not is_coarse and guess[2]:
                # From one full trial and the nominal slope only: go part of the
                # way (the slope near the crossing is often steeper).
                root = ref + _DAMP * (root - ref)
            nxt = _round_odd(root)
            if nxt < lo - 2 or (hi is not None and nxt > hi + 2):
                nxt = None              # beyond a bound by more than a step: not linear here
        if nxt is None:
            is_coarse = False
            failed_above = [k for k, v in full.items() if v[1] is None and k > lo]
            if hi is not None:
                nxt = _round_odd((lo + hi) / 2)
            elif failed_above:          # halfway down to the shortest design that failed
                nxt = _round_odd((lo + min(failed_above)) / 2)
            else:                       # grow from the longest miss, doubling the step
                growth = max(2 * growth, _ceil_odd(0.05 * lo) + 1)
                nxt = lo + growth
        if len(widths) >= 3 and widths[-1] * 2 > widths[-3]:
            nxt, is_coarse = _round_odd((lo + hi) / 2), False   # slow progress: bisect
        n = untried(lower, upper, nxt)
        if n is None:
            break
        if is_coarse and n != min(max(nxt, lower), upper):
            is_coarse = False
    # 2. Downward check (see _descent_floor).
    lo, hi = bounds()
    extra = 0
    while hi is not None and extra < _MAX_DESCENT and steps[0] < _MAX_TRIALS + _MAX_DESCENT:
        floor = _descent_floor(full, hi, slope0)
        k = next((j for j in range(hi - 2, 2, -2) if j not in full), None)
        if k is None or k < floor:
            break
        run(k, False)
        extra += 1
        lo, hi = bounds()
    if progress is not None:
        progress(1.0)
    lo, hi = bounds()
    if hi is None:                     # the longest design made, else the longest tried
        best = max((k for k, v in full.items() if v[1] is not None), default=max(full))
        return None, (best, full[best][2]), steps[0]
    return hi, full[hi][2], steps[0]


def _min_taps(method: str, spec: FirSpec, fs_hz: float, max_taps: int, progress,
              cancel) -> FirDesign:
    _, _, _, tw = _spec_bands(spec, fs_hz)
    if isinstance(max_taps, bool) or not isinstance(max_taps, (int, np.integer)) or max_taps < 3:
        raise DesignError(f"must be a whole number of taps >= 3, not {max_taps!r}",
                          field="max_taps")
    fs = float(fs_hz)
    max_taps = int(max_taps) if max_taps % 2 else int(max_taps) - 1
    est = estimate_taps(spec, fs)
    what = "equiripple (remez)" if method == _REMEZ else "least squares (firls)"

    def trial(n: int, coarse: bool):
        entry = _design(method, spec, fs, n, _COARSE_DENSITY if coarse else _FULL_DENSITY)
        if entry.taps is None:
            return False, None, (None, math.inf, -math.inf, entry.error)
        if entry.measured is None:
            entry.measured = measure_spec(entry.taps, spec, fs)
        r, a = entry.measured
        ok = r <= spec.ripple_db and a >= spec.atten_db
        return ok, _margin_db(spec, r, a), (entry.taps, r, a, "")

    # Kaiser 1974 [2]: each tap adds about 14.6 df dB of attenuation (df = transition / fs).
    slope0 = 14.6 * tw / fs
    n, value, trials = _search_min_odd(trial, est, max_taps, slope0, progress, cancel,
                                       coarse_is_exact=method == _FIRLS)
    if n is None:
        n_best, (h, r, a, why) = value
        reached = (f"reached ripple {r:.3g} dB and attenuation {a:.3g} dB at {n_best} taps"
                   if h is not None else f"{what} failed at {n_best} taps ({why})")
        need = (f"about {est} taps would be needed (Kaiser 1974 estimate)"
                if est > max_taps else
                f"the Kaiser 1974 estimate is {est} taps, but {what} did not "
                f"meet the spec up to max_taps")
        raise SpecNotMetError(
            f"{spec.describe()} not met by {what} within max_taps {max_taps} at "
            f"{fs:g} Hz: {reached}; {need}", field="taps")
    h, r, a, _ = value
    return FirDesign(taps=h.copy(), ripple_db=r, atten_db=a, estimate_taps=est, trials=trials)


def min_taps_equiripple(spec: FirSpec, fs_hz: float, max_taps: int = DEFAULT_MAX_TAPS,
                        progress: Callable[[float], None] | None = None,
                        cancel: Callable[[], bool] | None = None) -> FirDesign:
    """Shortest odd-length Parks-McClellan filter that meets ``spec``.

    Each trial design is measured on a dense grid (:func:`measure_spec`)
    and its margin to the spec taken in dB (the smaller of the stop-band
    and pass-band margins), which is close to linear in the length. From
    the Kaiser 1974 estimate (:func:`estimate_taps`) the search predicts
    the length where the margin crosses 0 dB by the secant through its
    last two trials: first with designs at half of remez's grid density,
    then with full ones, and ends when a full design of ``N`` taps meets
    the spec and one of ``N - 2`` does not. A prediction that stops
    converging falls back to bisection, so the result does not depend on
    the estimate. Only a design that meets both ripple and attenuation is
    returned; designs are kept in the design cache
    (:func:`clear_design_cache`).

    Parameters
    ----------
    spec : FirSpec
    fs_hz : float
    max_taps : int
        Longest design tried.
    progress : callable, optional
        Called with a fraction in [0, 1] after each trial (non-decreasing,
        ends with 1.0).
    cancel : callable, optional
        Called before each trial; if it returns True the search stops with
        :class:`DesignCancelled`.

    Returns
    -------
    FirDesign

    Raises
    ------
    SpecNotMetError
        If no length up to ``max_taps`` meets the spec (or remez does not
        converge); the message gives the spec, the best ripple and
        attenuation reached, and the estimated length needed.
    DesignCancelled

    References
    ----------
    .. [2] Kaiser, 1974.
    .. [3] Parks and McClellan, 1972.
    """
    return _min_taps(_REMEZ, spec, fs_hz, max_taps, progress, cancel)


def min_taps_least_squares(spec: FirSpec, fs_hz: float, max_taps: int = DEFAULT_MAX_TAPS,
                           progress: Callable[[float], None] | None = None,
                           cancel: Callable[[], bool] | None = None) -> FirDesign:
    """Shortest odd-length weighted least-squares (firls) filter that meets ``spec``.

    The weights are those of the equiripple design (``delta_p/delta_s`` in
    the stop band). The search is the one of :func:`min_taps_equiripple`
    (firls has no design grid, so every trial is a full design), started
    from the Kaiser estimate: the equiripple filter is the shortest that
    meets a minimax spec, so a least-squares one is no shorter and the
    search usually goes up from there.

    Parameters, returns and raises as :func:`min_taps_equiripple`.

    References
    ----------
    .. [6] Parks and Burrus, "Digital Filter Design", 1987, ch. 3.
    """
    return _min_taps(_FIRLS, spec, fs_hz, max_taps, progress, cancel)


# --------------------------------------------------------------------------
# complementary N-band split


def complementary_split(crossovers_hz: Sequence[float], fs_hz: float, taps: int,
                        design: str = "window", window: str = "hann", beta: float | None = None,
                        transition_hz: float | None = None,
                        stop_weight: float = 1.0) -> list[np.ndarray]:
    """Linear-phase N-band split whose bands sum to a pure delay.

    With lowpasses ``L_1 .. L_N`` of the same odd length at the increasing
    crossovers, the bands are ``L_1, L_2 - L_1, ..., L_N - L_{N-1},
    delta - L_N`` (``delta`` the unit impulse at ``(taps-1)/2``): their sum
    telescopes to ``delta``, a delay of ``(taps-1)/2`` samples with flat
    magnitude and no phase error. For one crossover this is the familiar
    "highpass = delay minus lowpass".

    Parameters
    ----------
    crossovers_hz : sequence of float
        Crossover frequencies in Hz, strictly increasing, in (0, fs/2).
    fs_hz : float
    taps : int
        Odd length of every band.
    design : {"window", "equiripple", "least_squares"}
        How the lowpasses are designed: :func:`window_fir` at each crossover
        (``window``, ``beta``), or remez / firls with a transition band of
        ``transition_hz`` centred on each crossover (weight ``stop_weight``
        on the stop band).
    window, beta : see :func:`window_fir`.
    transition_hz : float, optional
        Required for ``"equiripple"`` and ``"least_squares"``.
    stop_weight : float

    Returns
    -------
    list of ndarray
        ``len(crossovers_hz) + 1`` arrays of shape (taps,), lowest band first.

    References
    ----------
    .. [1] Oppenheim and Schafer, 3rd ed., ch. 7 (the delayed impulse is the
       all-pass of a linear-phase type I FIR).
    """
    fs = _check_fs(fs_hz)
    n = _check_taps(taps, odd=True)
    xo = np.atleast_1d(np.asarray(crossovers_hz, dtype=float))
    if xo.ndim != 1 or len(xo) == 0:
        raise DesignError(f"must be a list of at least one frequency, not {crossovers_hz!r}",
                          field="crossovers")
    for i, f in enumerate(xo):
        _check_freq(f, fs, f"crossovers[{i}]")
    if np.any(np.diff(xo) <= 0):
        raise DesignError(f"must be strictly increasing, not {[float(x) for x in xo]!r}",
                          field="crossovers")
    if design == "window":
        lows = [window_fir("lowpass", f, fs, n, window=window, beta=beta) for f in xo]
    elif design in ("equiripple", "least_squares"):
        if transition_hz is None:
            raise DesignError(f"the {design} split needs transition_hz, none given",
                              field="transition_hz")
        tw = _check_positive(transition_hz, "transition_hz", "Hz")
        if xo[0] - tw / 2 <= 0 or xo[-1] + tw / 2 >= fs / 2:
            raise DesignError(f"{tw:g} Hz puts a band edge outside (0, {fs / 2:g}) "
                              "Hz around the outer crossovers", field="transition_hz")
        if design == "least_squares":
            lows = [least_squares_fir("lowpass", f, fs, n, tw, stop_weight=stop_weight)
                    for f in xo]
        else:
            sw = _check_positive(stop_weight, "stop_weight", "(relative weight)")
            lows = [signal.remez(n, [0, f - tw / 2, f + tw / 2, fs / 2], [1, 0],
                                 weight=[1, sw], fs=fs, maxiter=_MAXITER) for f in xo]
    else:
        raise DesignError(f"must be window, equiripple or least_squares, not {design!r}",
                          field="design")
    delta = np.zeros(n)
    delta[(n - 1) // 2] = 1.0
    nested = [np.zeros(n)] + lows + [delta]
    return [nested[i + 1] - nested[i] for i in range(len(xo) + 1)]


# --------------------------------------------------------------------------
# responses


def _omega(freqs_hz, fs_hz: float) -> np.ndarray:
    return 2.0 * np.pi * np.asarray(freqs_hz, dtype=float) / _check_fs(fs_hz)


def _block_response(rows: np.ndarray, w: np.ndarray) -> np.ndarray:
    """``sum_n rows[:, n] e^{-j w n}`` for every row: complex (n_rows, n_freqs).

    The taps are cut into ``B`` blocks of length ``L`` (``B L >= N``, both
    about ``sqrt(N)``): ``H(w) = sum_b e^{-j w b L} sum_m h[bL + m] e^{-j w m}``.
    Only ``(L + B)`` complex exponentials per frequency are computed; the
    inner sums are one matrix product and the outer one a batched
    multiply-add, so the cost is BLAS-bound rather than exp-bound.
    """
    r, n = rows.shape
    L = max(1, int(math.ceil(math.sqrt(n))))
    B = int(math.ceil(n / L))
    padded = np.zeros((r, B * L))
    padded[:, :n] = rows
    blocks = padded.reshape(r * B, L).T                             # (L, r B)
    # Long grids go in chunks so the temporaries stay small (fresh large
    # arrays cost more in page faults than in arithmetic).
    chunk = max(64, _CHUNK_VALUES // max(1, r * B))
    if len(w) <= chunk:
        return _block_chunk(blocks, w, r, L, B)
    return np.concatenate([_block_chunk(blocks, w[i:i + chunk], r, L, B)
                           for i in range(0, len(w), chunk)], axis=1)


#: Complex values of the inner block sums held at once per chunk of frequencies.
_CHUNK_VALUES = 32768


def _block_chunk(blocks: np.ndarray, w: np.ndarray, r: int, L: int, B: int) -> np.ndarray:
    """:func:`_block_response` on one chunk of frequencies."""
    nf = len(w)
    # Powers of e^{-jw} by running products (rounding grows only like L eps).
    e_in = _powers(np.exp(-1j * w), L)                              # (F, L)
    # inner[f, row, b] = sum_m e^{-j w_f m} h_row[b L + m]: one real BLAS
    # product on the stacked real and imaginary parts.
    ri = np.concatenate([e_in.real, e_in.imag]) @ blocks            # (2F, r B)
    inner = (ri[:nf] + 1j * ri[nf:]).reshape(nf, r, B)
    e_out = _powers(np.exp(-1j * w * L), B)                         # (F, B)
    return np.matmul(inner, e_out[:, :, None])[:, :, 0].T


def _powers(z: np.ndarray, count: int) -> np.ndarray:
    """``z^0 .. z^(count-1)`` for each element of ``z``: shape (len(z), count)."""
    out = np.empty((len(z), count), dtype=complex)
    out[:, 0] = 1.0
    if count > 1:
        out[:, 1:] = z[:, None]
        np.cumprod(out[:, 1:], axis=1, out=out[:, 1:])
    return out


def fir_response(taps, freqs_hz, fs_hz: float) -> np.ndarray:
    """Complex response of FIR taps at arbitrary frequencies (e.g. a log grid).

    Parameters
    ----------
    taps : array_like, shape (N,) or (n_filters, N)
        One filter, or several of the same length (evaluated together).
    freqs_hz : array_like, shape (F,)
        Frequencies in Hz (any spacing).
    fs_hz : float

    Returns
    -------
    ndarray, complex, shape (F,) or (n_filters, F)
        ``H(e^{jw}) = sum_n h[n] e^{-j w n}``, ``w = 2 pi f / fs``; the same
        quantity as :func:`scipy.signal.freqz` with ``worN=freqs_hz``.

    Notes
    -----
    Evaluated in blocks of about ``sqrt(N)`` taps (see the module source):
    ``O(F sqrt(N))`` exponentials and one matrix product, instead of
    ``O(F N)`` exponentials or ``N`` sequential Horner steps.
    """
    h = np.asarray(taps, dtype=float)
    w = np.atleast_1d(_omega(freqs_hz, fs_hz))
    if h.ndim == 1:
        return _block_response(h[None, :], w)[0]
    return _block_response(h, w)


def fir_response_and_derivative(taps, freqs_hz, fs_hz: float):
    """Complex response ``H`` and its derivative ``dH/domega`` (omega in rad/sample).

    ``dH/dw = -j sum_n n h[n] e^{-j w n}``, evaluated together with ``H``
    in one block product, so that group delay ``-Im(H'/H)`` (samples) is
    exact rather than a finite difference of unwrapped phase (Oppenheim and
    Schafer [1]_, sec. 5.1.2).

    Parameters
    ----------
    taps : array_like, shape (N,) or (n_filters, N)
    freqs_hz : array_like, shape (F,)
    fs_hz : float

    Returns
    -------
    h, dh : ndarray, complex, shape (F,) or (n_filters, F)

    References
    ----------
    .. [1] Oppenheim and Schafer, 3rd ed., sec. 5.1.2.
    """
    h = np.asarray(taps, dtype=float)
    w = np.atleast_1d(_omega(freqs_hz, fs_hz))
    rows = np.atleast_2d(h)
    both = _block_response(np.concatenate([rows, rows * np.arange(rows.shape[1])]), w)
    hh, dh = both[: len(rows)], -1j * both[len(rows):]
    if h.ndim == 1:
        return hh[0], dh[0]
    return hh, dh


def fir_group_delay_samples(taps, freqs_hz, fs_hz: float) -> np.ndarray:
    """Exact group delay ``-Im(H'/H)`` in samples (NaN where ``H`` is 0)."""
    hh, dh = fir_response_and_derivative(taps, freqs_hz, fs_hz)
    with np.errstate(divide="ignore", invalid="ignore"):
        return -np.imag(dh / hh)


# --------------------------------------------------------------------------
# properties and costs


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
    """Latency in samples: ``(N-1)/2`` for linear phase, else the index of the largest |tap|."""
    h = _taps_1d(taps)
    if is_linear_phase(h):
        return (len(h) - 1) / 2.0
    return float(np.argmax(np.abs(h)))


def pre_ringing_energy(h) -> float:
    """Fraction of the impulse response's energy before its main (largest |h|) peak.

    ``sum_{n < p} h[n]^2 / sum_n h[n]^2`` with ``p = argmax |h|`` (the first
    one if tied). 0 for a filter whose energy all arrives at or after the peak.
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
    """Length, latency (samples and ms), pre-ringing, cost and end gains of one FIR."""
    h = _taps_1d(taps)
    fs = _check_fs(fs_hz)
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
