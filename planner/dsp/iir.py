"""Analog-prototype IIR crossover filters as second-order sections.

Each design is a chain of small steps, as in scipy.signal: an analog lowpass
prototype (zeros, poles, gain), a frequency transform to the prewarped
cut-off, the bilinear transform, and pairing into second-order sections. The
steps are those of :mod:`planner.dsp.zpk` (numpy only, the same numbers as
scipy.signal's); the Bessel prototype alone comes from scipy.signal, imported
when one is first designed.
Because the cut-off is prewarped, the digital magnitude at ``freq_hz`` equals
the analog prototype's magnitude at its cut-off. The one exception is the
Bessel ``delay`` normalisation, defined by the group delay at DC rather than
by a magnitude at the cut-off: it is scaled to ``2 pi freq_hz`` unwarped, since
the bilinear transform keeps the group delay at DC (in seconds) as it is.

References
----------
.. [1] S. Butterworth, "On the Theory of Filter Amplifiers", Wireless
   Engineer, vol. 7, 1930.
.. [2] S. H. Linkwitz, "Active Crossover Networks for Noncoincident
   Drivers", J. Audio Eng. Soc., vol. 24, no. 1, 1976.
.. [3] W. E. Thomson, "Delay Networks having Maximally Flat Frequency
   Characteristics", Proc. IEE, vol. 96, 1949 (Bessel filters).
.. [4] A. V. Oppenheim and R. W. Schafer, "Discrete-Time Signal Processing",
   3rd ed., sec. 7.2.2 (bilinear transform and prewarping).
"""

from __future__ import annotations

import numpy as np

from planner.dsp import zpk
from planner.errors import DesignError
from planner.lazyimport import scipy_module

__all__ = [
    "FAMILIES",
    "BESSEL_NORMS",
    "prewarp",
    "butterworth_sos",
    "linkwitz_riley_sos",
    "bessel_sos",
    "crossover_sos",
]

#: Allowed orders per family.
FAMILIES = {
    "butterworth": tuple(range(1, 9)),
    "linkwitz-riley": (2, 4, 6, 8),
    "bessel": tuple(range(1, 9)),
}

#: Bessel normalisations (scipy.signal.besselap ``norm``):
#: ``phase``: the phase response meets the Butterworth asymptote at the
#: cut-off (default, the usual choice for crossovers); ``delay``: the group
#: delay of the lowpass at DC is exactly 1/(2 pi f) seconds, fs/(2 pi f)
#: samples (the prototype is not prewarped); ``mag``: -3.01 dB at the cut-off.
BESSEL_NORMS = ("phase", "delay", "mag")


def _check_common(kind: str, freq_hz: float, fs_hz: float) -> None:
    if kind not in ("lowpass", "highpass"):
        raise DesignError(f"must be 'lowpass' or 'highpass', not {kind!r}", field="type")
    if not np.isfinite(fs_hz) or fs_hz <= 0:
        raise DesignError(f"must be a positive number of Hz, not {fs_hz!r}", field="sample_rate")
    nyq = fs_hz / 2
    if not np.isfinite(freq_hz) or freq_hz <= 0:
        raise DesignError(f"{freq_hz!r} Hz must be above 0 Hz", field="freq")
    if freq_hz >= nyq:
        raise DesignError(
            f"{freq_hz:g} Hz is at or above Nyquist ({nyq:g} Hz) for sample_rate {fs_hz:g}",
            field="freq",
        )


def _check_order(family: str, order: int) -> None:
    allowed = FAMILIES[family]
    if isinstance(order, bool) or int(order) != order or order not in allowed:
        raise DesignError(
            f"{order!r} is not an allowed {family} order ({allowed[0]}..{allowed[-1]}"
            + (", even only)" if family == "linkwitz-riley" else ")"),
            field="order",
        )


def prewarp(freq_hz: float, fs_hz: float) -> float:
    """Analog angular frequency (rad/s) that the bilinear transform maps to ``freq_hz``.

    ``wa = 2 fs tan(pi f / fs)``, eq. 7.26 of [4]_.
    """
    return 2.0 * fs_hz * np.tan(np.pi * freq_hz / fs_hz)


def _digital_sos(z, p, k, kind: str, freq_hz: float, fs_hz: float,
                 warp: bool = True) -> np.ndarray:
    """Analog lowpass prototype (cut-off 1 rad/s) -> digital sections.

    ``warp=False`` scales the prototype to ``2 pi freq_hz`` itself instead of
    the prewarped cut-off (the Bessel ``delay`` normalisation).
    """
    wa = prewarp(freq_hz, fs_hz) if warp else 2.0 * np.pi * freq_hz
    # Frequency transform: the prototype's 1 rad/s moves to the (prewarped) cut-off.
    if kind == "lowpass":
        z, p, k = zpk.lp2lp_zpk(z, p, k, wo=wa)
    else:
        z, p, k = zpk.lp2hp_zpk(z, p, k, wo=wa)
    # Bilinear transform: zeros at infinity move to Nyquist (lowpass) or stay at DC (highpass).
    z, p, k = zpk.bilinear_zpk(z, p, k, fs=fs_hz)
    # Pair poles with the nearest zeros into second-order sections.
    return zpk.zpk2sos(z, p, k)


def butterworth_sos(kind: str, order: int, freq_hz: float, fs_hz: float) -> np.ndarray:
    """Butterworth lowpass or highpass [1]_, -3.01 dB at ``freq_hz``.

    Parameters
    ----------
    kind : {'lowpass', 'highpass'}
    order : int
        1 to 8 (6 dB/octave per order).
    freq_hz : float
        Cut-off in Hz, 0 < freq_hz < fs_hz / 2.
    fs_hz : float
        Sample rate in Hz.

    Returns
    -------
    sos : ndarray, shape (ceil(order / 2), 6)
        Second-order sections ``[b0, b1, b2, 1, a1, a2]``.

    Examples
    --------
    >>> sos = butterworth_sos("lowpass", 4, 2200.0, 48000.0)
    >>> sos.shape
    (2, 6)
    """
    _check_common(kind, freq_hz, fs_hz)
    _check_order("butterworth", order)
    z, p, k = zpk.buttap(int(order))
    return _digital_sos(z, p, k, kind, freq_hz, fs_hz)


def linkwitz_riley_sos(kind: str, order: int, freq_hz: float, fs_hz: float) -> np.ndarray:
    """Linkwitz-Riley lowpass or highpass [2]_: a Butterworth of half the order, squared.

    Each output is -6.02 dB at ``freq_hz``; the low and high outputs are in
    phase there, and for orders 4 and 8 they sum to an all-pass (orders 2 and
    6 need one output inverted).

    Parameters
    ----------
    kind : {'lowpass', 'highpass'}
    order : {2, 4, 6, 8}
    freq_hz, fs_hz : float
        Cut-off and sample rate in Hz.

    Returns
    -------
    sos : ndarray, shape (n, 6)
    """
    _check_common(kind, freq_hz, fs_hz)
    _check_order("linkwitz-riley", order)
    half = butterworth_sos(kind, int(order) // 2, freq_hz, fs_hz)
    return np.vstack([half, half])


def bessel_sos(kind: str, order: int, freq_hz: float, fs_hz: float, norm: str = "phase") -> np.ndarray:
    """Bessel (Thomson) lowpass or highpass [3]_, maximally flat group delay.

    Parameters
    ----------
    kind : {'lowpass', 'highpass'}
    order : int
        1 to 8.
    freq_hz, fs_hz : float
        Cut-off and sample rate in Hz.
    norm : {'phase', 'delay', 'mag'}
        How the cut-off is defined; see :data:`BESSEL_NORMS`. Default 'phase'.

    Returns
    -------
    sos : ndarray, shape (ceil(order / 2), 6)

    Notes
    -----
    ``phase`` and ``mag`` are prewarped like the other families, so the
    digital response at ``freq_hz`` is the prototype's at its cut-off.
    ``delay`` is defined by the group delay at DC instead, and the bilinear
    transform ``s = 2 fs (1 - z^-1) / (1 + z^-1)`` keeps that delay in
    seconds: with ``Omega = 2 fs tan(omega / 2)``, ``dOmega/domega = fs`` at
    ``omega = 0``, so a group delay of ``tau`` s becomes ``tau fs`` samples
    (Oppenheim and Schafer [4]_, sec. 7.2.2). The prototype is therefore
    scaled to ``2 pi freq_hz`` unwarped, and the lowpass's group delay at DC
    is exactly ``fs / (2 pi freq_hz)`` samples (prewarping it would give that
    of ``2 fs tan(pi freq_hz / fs)``: 0.6 % short at 2 kHz and 15 % at 10 kHz
    at 48 kHz). The highpass uses the same unwarped ``2 pi freq_hz``, so that
    a lowpass and highpass pair stays the bilinear image of one analog pair.
    """
    _check_common(kind, freq_hz, fs_hz)
    _check_order("bessel", order)
    if norm not in BESSEL_NORMS:
        raise DesignError(f"must be one of {', '.join(BESSEL_NORMS)}, not {norm!r}", field="norm")
    z, p, k = scipy_module("signal").besselap(int(order), norm=norm)
    return _digital_sos(z, p, k, kind, freq_hz, fs_hz, warp=norm != "delay")


def crossover_sos(family: str, kind: str, order: int, freq_hz: float, fs_hz: float,
                  norm: str = "phase") -> np.ndarray:
    """Dispatch to :func:`butterworth_sos`, :func:`linkwitz_riley_sos` or :func:`bessel_sos`.

    Parameters
    ----------
    family : {'butterworth', 'linkwitz-riley', 'bessel'}
    kind : {'lowpass', 'highpass'}
    order : int
        One of the family's orders (:data:`FAMILIES`).
    freq_hz, fs_hz : float
        Cut-off and sample rate in Hz.
    norm : {'phase', 'delay', 'mag'}
        Bessel only (:data:`BESSEL_NORMS`).

    Returns
    -------
    sos : ndarray, shape (n, 6)
    """
    if family == "butterworth":
        return butterworth_sos(kind, order, freq_hz, fs_hz)
    if family == "linkwitz-riley":
        return linkwitz_riley_sos(kind, order, freq_hz, fs_hz)
    if family == "bessel":
        return bessel_sos(kind, order, freq_hz, fs_hz, norm=norm)
    raise DesignError(f"must be one of {', '.join(FAMILIES)}, not {family!r}", field="family")
