"""Audio EQ Cookbook biquads as second-order sections.

The formulas are those of R. Bristow-Johnson's "Cookbook formulae for audio
equalizer biquad filter coefficients", published as the W3C Working Group
Note "Audio EQ Cookbook" (2021) [1]_. Every function returns one section
``[b0, b1, b2, 1, a1, a2]`` normalised so that ``a0 = 1``.

References
----------
.. [1] R. Bristow-Johnson, "Audio EQ Cookbook", W3C Working Group Note,
   8 June 2021, https://www.w3.org/TR/audio-eq-cookbook/
.. [2] U. Zoelzer (ed.), "DAFX: Digital Audio Effects", 2nd ed., Wiley 2011,
   sec. 2.2 (first-order all-pass).
"""

from __future__ import annotations

import numpy as np

from planner.errors import DesignError

__all__ = [
    "peaking",
    "low_shelf",
    "high_shelf",
    "notch",
    "bandpass",
    "allpass",
    "allpass1",
    "lowpass2",
    "highpass2",
]


def _w0(freq_hz: float, fs_hz: float) -> float:
    if not np.isfinite(fs_hz) or fs_hz <= 0:
        raise DesignError(f"must be a positive number of Hz, not {fs_hz!r}", field="sample_rate")
    if not np.isfinite(freq_hz) or freq_hz <= 0:
        raise DesignError(f"{freq_hz!r} Hz must be above 0 Hz", field="freq")
    if freq_hz >= fs_hz / 2:
        raise DesignError(
            f"{freq_hz:g} Hz is at or above Nyquist ({fs_hz / 2:g} Hz) for sample_rate {fs_hz:g}",
            field="freq",
        )
    return 2.0 * np.pi * freq_hz / fs_hz


def _q(q: float) -> float:
    if not np.isfinite(q) or q <= 0:
        raise DesignError(f"Q must be above 0, not {q!r}", field="q")
    return float(q)


def _gain(gain_db: float) -> float:
    if not np.isfinite(gain_db):
        raise DesignError(f"must be a finite number of dB, not {gain_db!r}", field="gain_db")
    return 10.0 ** (gain_db / 40.0)  # "A" of the cookbook, amplitude = sqrt of linear gain


def _section(b0, b1, b2, a0, a1, a2) -> np.ndarray:
    return np.array([[b0 / a0, b1 / a0, b2 / a0, 1.0, a1 / a0, a2 / a0]])


def peaking(freq_hz: float, gain_db: float, q: float, fs_hz: float) -> np.ndarray:
    """Peaking EQ: ``gain_db`` at ``freq_hz``, 0 dB far away ([1]_, "peakingEQ").

    Parameters
    ----------
    freq_hz : float
        Centre frequency in Hz, below Nyquist.
    gain_db : float
        Level at the centre in dB (negative: a cut).
    q : float
        Quality factor, above 0 (the cookbook's Q: bandwidth between the
        points at half the gain in dB).
    fs_hz : float
        Sample rate in Hz.

    Returns
    -------
    ndarray, shape (1, 6)
    """
    w0, a, q = _w0(freq_hz, fs_hz), _gain(gain_db), _q(q)
    alpha, c = np.sin(w0) / (2 * q), np.cos(w0)
    return _section(1 + alpha * a, -2 * c, 1 - alpha * a, 1 + alpha / a, -2 * c, 1 - alpha / a)


def _shelf_alpha(w0: float, a: float, q: float | None, slope: float | None) -> float:
    if (q is None) == (slope is None):
        raise DesignError("give exactly one of q or slope", field="q")
    if q is not None:
        return np.sin(w0) / (2 * _q(q))
    if not np.isfinite(slope) or slope <= 0:
        raise DesignError(f"shelf slope must be above 0, not {slope!r}", field="slope")
    arg = (a + 1 / a) * (1 / slope - 1) + 2
    if arg < 0:
        # Cookbook: S = 1 is the steepest slope that keeps the shelf monotonic;
        # beyond the point where this root turns negative there is no real filter.
        raise DesignError(f"slope {slope:g} is too steep for this gain (keep slope <= 1)",
                          field="slope")
    return np.sin(w0) / 2 * np.sqrt(arg)


def low_shelf(freq_hz: float, gain_db: float, fs_hz: float, q: float | None = None,
              slope: float | None = None) -> np.ndarray:
    """Low shelf: ``gain_db`` below ``freq_hz``, ``gain_db / 2`` at it ([1]_, "lowShelf").

    Parameters
    ----------
    freq_hz : float
        Shelf midpoint in Hz, below Nyquist.
    gain_db : float
        Shelf level in dB.
    fs_hz : float
        Sample rate in Hz.
    q, slope : float, optional
        Exactly one: the shelf's Q, or its slope S (S = 1: the steepest that
        stays monotonic).

    Returns
    -------
    ndarray, shape (1, 6)
    """
    w0, a = _w0(freq_hz, fs_hz), _gain(gain_db)
    alpha, c, sa = _shelf_alpha(w0, a, q, slope), np.cos(w0), np.sqrt(a)
    return _section(
        a * ((a + 1) - (a - 1) * c + 2 * sa * alpha),
        2 * a * ((a - 1) - (a + 1) * c),
        a * ((a + 1) - (a - 1) * c - 2 * sa * alpha),
        (a + 1) + (a - 1) * c + 2 * sa * alpha,
        -2 * ((a - 1) + (a + 1) * c),
        (a + 1) + (a - 1) * c - 2 * sa * alpha,
    )


def high_shelf(freq_hz: float, gain_db: float, fs_hz: float, q: float | None = None,
               slope: float | None = None) -> np.ndarray:
    """High shelf: ``gain_db`` above ``freq_hz``, ``gain_db / 2`` at it ([1]_, "highShelf").

    Parameters and returns as :func:`low_shelf`.
    """
    w0, a = _w0(freq_hz, fs_hz), _gain(gain_db)
    alpha, c, sa = _shelf_alpha(w0, a, q, slope), np.cos(w0), np.sqrt(a)
    return _section(
        a * ((a + 1) + (a - 1) * c + 2 * sa * alpha),
        -2 * a * ((a - 1) + (a + 1) * c),
        a * ((a + 1) + (a - 1) * c - 2 * sa * alpha),
        (a + 1) - (a - 1) * c + 2 * sa * alpha,
        2 * ((a - 1) - (a + 1) * c),
        (a + 1) - (a - 1) * c - 2 * sa * alpha,
    )


def notch(freq_hz: float, q: float, fs_hz: float) -> np.ndarray:
    """Notch: a zero on the unit circle at ``freq_hz``, -3 dB bandwidth freq/Q ([1]_, "notch")."""
    w0, q = _w0(freq_hz, fs_hz), _q(q)
    alpha, c = np.sin(w0) / (2 * q), np.cos(w0)
    return _section(1, -2 * c, 1, 1 + alpha, -2 * c, 1 - alpha)


def bandpass(freq_hz: float, q: float, fs_hz: float) -> np.ndarray:
    """Band-pass with 0 dB peak gain at ``freq_hz`` ([1]_, "BPF, constant 0 dB peak gain")."""
    w0, q = _w0(freq_hz, fs_hz), _q(q)
    alpha, c = np.sin(w0) / (2 * q), np.cos(w0)
    return _section(alpha, 0, -alpha, 1 + alpha, -2 * c, 1 - alpha)


def allpass(freq_hz: float, q: float, fs_hz: float) -> np.ndarray:
    """Second-order all-pass: unity gain, -180 deg at ``freq_hz`` ([1]_, "APF")."""
    w0, q = _w0(freq_hz, fs_hz), _q(q)
    alpha, c = np.sin(w0) / (2 * q), np.cos(w0)
    return _section(1 - alpha, -2 * c, 1 + alpha, 1 + alpha, -2 * c, 1 - alpha)


def allpass1(freq_hz: float, fs_hz: float) -> np.ndarray:
    """First-order all-pass: unity gain, -90 deg at ``freq_hz`` ([2]_).

    ``H(z) = (c + z^-1) / (1 + c z^-1)`` with
    ``c = (tan(pi f / fs) - 1) / (tan(pi f / fs) + 1)``.
    """
    t = np.tan(_w0(freq_hz, fs_hz) / 2)
    c = (t - 1) / (t + 1)
    return _section(c, 1, 0, 1, c, 0)


def lowpass2(freq_hz: float, q: float, fs_hz: float) -> np.ndarray:
    """Second-order lowpass with a chosen Q ([1]_, "LPF"); Q = 1/sqrt(2) is Butterworth."""
    w0, q = _w0(freq_hz, fs_hz), _q(q)
    alpha, c = np.sin(w0) / (2 * q), np.cos(w0)
    # 1 - cos(w0) written as 2 sin^2(w0 / 2): the same value without the cancellation
    # that costs 1 - cos(w0) half its digits at a low cut-off (1e-9 at 10 Hz, 192 kHz).
    one_minus_c = 2.0 * np.sin(w0 / 2) ** 2
    return _section(one_minus_c / 2, one_minus_c, one_minus_c / 2, 1 + alpha, -2 * c, 1 - alpha)


def highpass2(freq_hz: float, q: float, fs_hz: float) -> np.ndarray:
    """Second-order highpass with a chosen Q ([1]_, "HPF"); Q = 1/sqrt(2) is Butterworth."""
    w0, q = _w0(freq_hz, fs_hz), _q(q)
    alpha, c = np.sin(w0) / (2 * q), np.cos(w0)
    return _section((1 + c) / 2, -(1 + c), (1 + c) / 2, 1 + alpha, -2 * c, 1 - alpha)


def analog_section(b, a, fs_hz: float, warp_hz: float) -> np.ndarray:
    """One analog section of first or second order, made digital by the bilinear transform.

    ``b``, ``a``: coefficients in descending powers of ``s`` (``[b2, b1, b0]`` or
    ``[b1, b0]``). The transform ``s = K (1 - z^-1) / (1 + z^-1)`` uses
    ``K = 2 pi f_w / tan(pi f_w / fs)``, so the digital response equals the
    analog one exactly at ``warp_hz`` (prewarping; Oppenheim and Schafer,
    "Discrete-Time Signal Processing", 3rd ed., sec. 7.2.2).

    Returns
    -------
    ndarray, shape (1, 6)
    """
    w = 2.0 * np.pi * float(warp_hz)
    _w0(warp_hz, fs_hz)
    k = w / np.tan(w / (2.0 * fs_hz))

    def poly(c):
        c = np.asarray(c, dtype=float)
        if len(c) == 2:
            c1, c0 = c
            return np.array([c1 * k + c0, c0 - c1 * k, 0.0])
        c2, c1, c0 = c
        kk = k * k
        return np.array([c2 * kk + c1 * k + c0, 2.0 * (c0 - c2 * kk), c2 * kk - c1 * k + c0])

    nb, na = poly(b), poly(a)
    return _section(*nb, *na)
