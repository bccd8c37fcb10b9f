"""Fractional-delay FIR filters: a Kaiser-windowed sinc shifted by the fraction.

A delay of ``D`` samples is ``H(w) = e^{-jwD}``; for a ``D`` that is not a
whole number its impulse response ``sinc(n - D)`` is infinitely long and not
causal. The windowing method (Laakso et al. 1996, sec. "Windowing the
sinc") keeps ``N = 2M + 1`` taps centred on ``D = M + f``:

    h[n] = sinc(n - M - f) * w(n - M - f),   n = 0 .. N - 1,

where ``w`` is the continuous Kaiser window (Kaiser 1974)

    w(t) = I0(beta * sqrt(1 - (t / T)^2)) / I0(beta),   T = N / 2,

shifted by the same fraction, so the filter is ``e^{-jw(M + f)}`` with a
small error that grows towards Nyquist. Its latency is ``M = (N - 1) / 2``
whole samples plus ``f``. The fraction is kept in ``[-0.5, 0.5]`` (the rest
of a delay is a delay line), where the windowed sinc is most accurate.

The truncated sinc behaves like a full-band lowpass whose edge lies at
Nyquist: the ideal response jumps there by ``|2 sin(pi f)|`` (at most 2, at
``f = +/-0.5``). Kaiser's formulas (Oppenheim and Schafer eq. 7.62-7.63)
give ``beta`` and the length for a ripple ``delta`` per unit jump with the
transition band ``[edge, 1 - edge] * fs``; asking ``delta = max_error / 2``
covers the largest jump. :func:`kaiser_design` then measures the complex
error ``max |H(w) - e^{-jw(M + f)}|`` on a dense grid for fractions across
``[-0.5, 0.5]`` and lengthens the filter until it holds. A complex error
``e`` bounds the magnitude within ``20 log10(1 + e)`` dB of flat and the
phase within ``asin(e)`` of the exact delay: with the defaults
(:data:`EDGE_FS` 0.45, :data:`MAX_ERROR` 1e-4) 0.00087 dB and 0.0057 deg up
to 0.45 fs.

References
----------
.. [1] T. I. Laakso, V. Valimaki, M. Karjalainen and U. K. Laine,
   "Splitting the unit delay: tools for fractional delay filter design",
   IEEE Signal Processing Magazine, vol. 13, no. 1, 1996, pp. 30-60
   (windowed sinc, eq. 15-16 and fig. 9).
.. [2] J. F. Kaiser, "Nonrecursive digital filter design using the I0-sinh
   window function", Proc. IEEE Int. Symp. Circuits and Systems, 1974,
   pp. 20-23.
.. [3] A. V. Oppenheim and R. W. Schafer, "Discrete-Time Signal
   Processing", 3rd ed., Pearson, 2010, sec. 7.5.3 (Kaiser window design
   formulas, eq. 7.62-7.63).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from functools import lru_cache

import numpy as np
from planner.lazyimport import scipy_module

from planner.errors import DesignError

__all__ = ["EDGE_FS", "MAX_ERROR", "FracDelayDesign", "kaiser_design", "fractional_delay_fir",
           "delay_error", "nearest_whole"]

#: Upper edge of the band where the spec holds, as a fraction of the sample rate.
EDGE_FS = 0.45
#: Largest complex error |H - e^{-jwD}| up to the edge: 0.00087 dB, 0.0057 deg.
MAX_ERROR = 1e-4
#: Grid points per measurement of the error (0 .. edge), and fractions tried.
_POINTS = 2048
_FRACTIONS = np.linspace(-0.5, 0.5, 21)


def nearest_whole(delay_samples: float) -> int:
    """The nearest whole number of samples, halves rounded up (``floor(d + 0.5)``)."""
    return int(math.floor(float(delay_samples) + 0.5))


def _check_fraction(fraction) -> float:
    try:
        f = float(fraction)
    except (TypeError, ValueError):
        raise DesignError(f"must be a number of samples, not {fraction!r}",
                          field="fraction") from None
    if not math.isfinite(f) or abs(f) > 0.5:
        raise DesignError(f"must lie in [-0.5, 0.5] samples (the rest of a delay is a delay "
                          f"line), not {fraction!r}", field="fraction")
    return f


def fractional_delay_fir(fraction: float, taps: int, beta: float) -> np.ndarray:
    """Taps of the Kaiser-windowed sinc delaying by ``(taps - 1) / 2 + fraction`` samples.

    Parameters
    ----------
    fraction : float
        In [-0.5, 0.5] samples.
    taps : int
        Odd, at least 3.
    beta : float
        Kaiser window shape, >= 0.

    Returns
    -------
    ndarray, shape (taps,)
        ``h[n] = sinc(n - M - f) * I0(beta sqrt(1 - ((n - M - f) / (N/2))^2)) / I0(beta)``
        (Laakso et al. 1996, windowed sinc; Kaiser 1974).

    Raises
    ------
    DesignError
        ``fraction`` outside [-0.5, 0.5], an even or too small ``taps``, a negative ``beta``.
    """
    f = _check_fraction(fraction)
    if isinstance(taps, bool) or not isinstance(taps, (int, np.integer)) or taps < 3 \
            or taps % 2 == 0:
        raise DesignError(f"must be an odd whole number of taps >= 3, not {taps!r}", field="taps")
    if not (isinstance(beta, (int, float, np.floating)) and math.isfinite(beta) and beta >= 0):
        raise DesignError(f"must be a number >= 0, not {beta!r}", field="beta")
    n = int(taps)
    t = np.arange(n) - (n - 1) / 2 - f
    arg = np.clip(1.0 - (t / (n / 2.0)) ** 2, 0.0, None)
    return np.sinc(t) * np.i0(beta * np.sqrt(arg)) / np.i0(beta)


def delay_error(h: np.ndarray, delay_samples: float, edge: float = EDGE_FS,
                points: int = _POINTS) -> float:
    """Largest ``|H(w) - e^{-jwD}|`` for ``0 <= w <= 2 pi edge`` (``H`` by a DTFT matrix product).

    ``H(w) = sum_n h[n] e^{-jwn}`` on ``points`` evenly spaced ``w``; the ideal
    delay of ``D`` samples is ``e^{-jwD}`` (Laakso et al. [1]_).

    Parameters
    ----------
    h : ndarray, shape (N,) or (n_filters, N)
        One filter, or one per row.
    delay_samples : float or ndarray, shape (n_filters,)
        The delay each should have, in samples.
    edge : float
        Upper end of the band, as a fraction of the sample rate.
    points : int
        Grid points from 0 to the edge.

    Returns
    -------
    float or ndarray, shape (n_filters,)
        The largest error (of each row, for a 2-D ``h``).
    """
    h = np.atleast_2d(np.asarray(h, float))
    d = np.atleast_1d(np.asarray(delay_samples, float))
    w = np.linspace(0.0, 2.0 * np.pi * edge, int(points))
    e = np.exp(-1j * np.outer(w, np.arange(h.shape[1])))
    H = h @ e.T
    err = np.max(np.abs(H - np.exp(-1j * np.outer(d, w))), axis=-1)
    return float(err[0]) if np.ndim(delay_samples) == 0 else err


@dataclass(frozen=True)
class FracDelayDesign:
    """The fractional-delay filter's shape, for every fraction alike.

    Attributes
    ----------
    taps : int
        Odd length ``N``.
    beta : float
        Kaiser window shape.
    edge : float
        Fraction of the sample rate up to which the spec holds.
    max_error : float
        The asked complex error bound.
    measured_error : float
        The largest error measured over fractions in [-0.5, 0.5].
    """

    taps: int
    beta: float
    edge: float
    max_error: float
    measured_error: float

    @property
    def latency_samples(self) -> int:
        """``(N - 1) / 2``: the whole samples the filter adds."""
        return (self.taps - 1) // 2

    @property
    def magnitude_bound_db(self) -> float:
        """``20 log10(1 + e)``: the magnitude's largest distance from flat, dB.

        ``|H| <= |e^{-jwD}| + |H - e^{-jwD}| <= 1 + e`` (triangle inequality).
        """
        return 20.0 * math.log10(1.0 + self.measured_error)

    @property
    def phase_bound_deg(self) -> float:
        """``asin(e)``: the phase's largest distance from the exact delay, deg.

        ``H`` lies in the disc of radius ``e`` around the unit phasor
        ``e^{-jwD}``; the largest angle a point of that disc makes with it is
        ``asin(e)`` (plane geometry: the tangent from the origin).
        """
        return math.degrees(math.asin(min(1.0, self.measured_error)))

    def fir(self, fraction: float) -> np.ndarray:
        """The taps for ``fraction`` (see :func:`fractional_delay_fir`)."""
        return fractional_delay_fir(fraction, self.taps, self.beta)


@lru_cache(maxsize=16)
def kaiser_design(edge: float = EDGE_FS, max_error: float = MAX_ERROR) -> FracDelayDesign:
    """The shortest Kaiser-windowed sinc meeting ``max_error`` up to ``edge * fs``.

    Starting from Kaiser's formulas (:func:`scipy.signal.kaiserord` with
    the attenuation ``-20 log10(max_error / 2)`` and the transition width
    ``2 (0.5 - edge)`` of the sample rate; Oppenheim and Schafer eq.
    7.62-7.63), the attenuation asked is raised 1 dB at a time until the
    error measured by :func:`delay_error` for 21 fractions across
    [-0.5, 0.5] is at most ``max_error``.

    Raises
    ------
    DesignError
        ``edge`` not in (0, 0.5) or ``max_error`` not in (0, 0.5).
    """
    if not 0.0 < edge < 0.5:
        raise DesignError(f"must lie in (0, 0.5) of the sample rate, not {edge!r}", field="edge")
    if not 0.0 < max_error < 0.5:
        raise DesignError(f"must lie in (0, 0.5), not {max_error!r}", field="max_error")
    atten = -20.0 * math.log10(max_error / 2.0)
    width = 2.0 * (0.5 - edge) * 2.0      # in units of Nyquist, as kaiserord takes it
    for _ in range(60):
        numtaps, beta = scipy_module("signal").kaiserord(atten, width)
        n = max(3, int(numtaps) | 1)
        rows = np.stack([fractional_delay_fir(f, n, float(beta)) for f in _FRACTIONS])
        err = float(np.max(delay_error(rows, (n - 1) / 2 + _FRACTIONS, edge)))
        if err <= max_error:
            return FracDelayDesign(n, float(beta), float(edge), float(max_error), err)
        atten += 1.0
    raise DesignError(f"no Kaiser-windowed sinc reaches an error of {max_error:g} up to "
                      f"{edge:g} fs", field="max_error")
