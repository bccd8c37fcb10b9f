"""Windows and the window method: a windowed ideal (sinc) response.

References
----------
.. [1] A. V. Oppenheim and R. W. Schafer, "Discrete-Time Signal Processing",
   3rd ed., Pearson, 2010, sec. 7.5 (window method).
.. [2] J. F. Kaiser, "Nonrecursive digital filter design using the I0-sinh
   window function", Proc. IEEE Int. Symp. Circuits and Systems, 1974,
   pp. 20-23.
.. [5] F. J. Harris, "On the use of windows for harmonic analysis with the
   discrete Fourier transform", Proc. IEEE, vol. 66, no. 1, pp. 51-83, 1978.
"""

from __future__ import annotations

import math

import numpy as np
from planner.lazyimport import scipy_module

from planner.dsp.fir.checks import check_fs, check_freq, check_kind, check_taps, check_upper_edge
from planner.errors import DesignError

__all__ = ["WINDOWS", "window", "window_fir"]

#: Window names accepted by :func:`window` and :func:`window_fir`.
WINDOWS = ("boxcar", "triangular", "hann", "hamming", "blackman", "kaiser")

#: Other spellings accepted (scipy.signal's names).
_ALIASES = {"rectangular": "boxcar", "triang": "triangular"}


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
    name = _ALIASES.get(name, name)
    if name not in WINDOWS:
        raise DesignError(f"must be one of {', '.join(WINDOWS)}, not {name!r}", field="window")
    n = check_taps(taps)
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
    return _kaiser(k, n, beta)


def _kaiser(k: np.ndarray, n: int, beta) -> np.ndarray:
    """Kaiser window ``I0(beta sqrt(1 - r^2)) / I0(beta)``, ``r = 2k/(N-1) - 1`` (Kaiser 1974)."""
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
    i0 = scipy_module("special").i0
    return i0(b * np.sqrt(np.clip(1.0 - r * r, 0.0, None))) / i0(b)


#: :func:`window` under another name, for :func:`window_fir`, whose ``window``
#: argument hides it.
_window = window


def _sinc_lowpass(fc: float, m: np.ndarray) -> np.ndarray:
    """Ideal lowpass impulse ``2 fc sinc(2 fc m)`` (fc in cycles/sample, m = n - centre).

    The ideal lowpass ``sin(wc m) / (pi m)`` with ``wc = 2 pi fc`` (Oppenheim and Schafer
    [1]_ sec. 7.5).
    """
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
    check_kind(kind)
    fs = check_fs(fs_hz)
    n = check_taps(taps, kind)
    f1 = check_freq(freq_hz, fs, "freq")
    if kind == "bandpass":
        f2 = check_upper_edge(freq2_hz, fs)
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
    # Unit gain where it should pass: the zero-phase amplitude there,
    # sum_m h[m] cos(2 pi f m) (Oppenheim and Schafer [1]_ sec. 5.7.3, type I/II).
    return h / np.sum(h * np.cos(2.0 * np.pi * f_scale * m))
