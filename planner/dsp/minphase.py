"""The minimum phase that goes with a magnitude response (Bode's gain-phase integral).

A measured magnitude is taken as piecewise linear in log frequency between
its points and extended beyond them along the slopes of its ends
(:func:`edge_slopes_db_per_octave`, :func:`extended_db`); the phase is then
one convolution on a uniform log grid (:func:`minimum_phase_deg`).

References
----------
.. [3] A. V. Oppenheim and R. W. Schafer, "Discrete-Time Signal Processing",
   3rd ed., 2010, sec. 13.5 (minimum-phase reconstruction from the real
   cepstrum); H. W. Bode, "Network Analysis and Feedback Amplifier Design",
   1945 (gain-phase relation).
"""

from __future__ import annotations

import numpy as np

from planner.errors import DesignError

__all__ = ["LOW_SLOPE_DB_OCT", "HIGH_SLOPE_DB_OCT", "edge_slopes_db_per_octave", "extended_db",
           "minimum_phase_deg"]


def edge_slopes_db_per_octave(freqs_hz, mag_db, octaves: float = 1 / 3):
    """Slopes (dB/octave) of a magnitude over its lowest and highest ``octaves``.

    Least-squares lines of ``mag_db`` against ``log2 f`` over each end
    (:func:`numpy.polyfit` of degree 1); used to extend a measured magnitude
    beyond its range.

    Parameters
    ----------
    freqs_hz, mag_db : array_like, shape (n,)
        Increasing frequencies in Hz and the magnitude in dB.
    octaves : float
        Width of each end's span in octaves (the two outer points when fewer
        than two lie in it).

    Returns
    -------
    low_slope, high_slope : float
        dB per octave.
    """
    f = np.asarray(freqs_hz, dtype=float)
    m = np.asarray(mag_db, dtype=float)
    lf = np.log2(f)
    out = []
    for k, mask in enumerate((lf <= lf[0] + octaves, lf >= lf[-1] - octaves)):
        if mask.sum() < 2:          # fewer than two points in the span: the two outer ones
            mask = np.zeros(len(f), dtype=bool)
            mask[[0, 1] if k == 0 else [-2, -1]] = True
        out.append(float(np.polyfit(lf[mask], m[mask], 1)[0]))
    return out[0], out[1]


def extended_db(freqs_hz, mag_db, to_hz: np.ndarray, low_slope: float, high_slope: float):
    """``mag_db`` on ``to_hz``: interpolated in log frequency inside, sloped lines outside.

    Parameters
    ----------
    freqs_hz, mag_db : array_like, shape (n,)
        The data: increasing frequencies in Hz, magnitude in dB.
    to_hz : ndarray
        Where the magnitude is wanted, in Hz.
    low_slope, high_slope : float
        dB per octave of the lines below and above the data.
    """
    f = np.asarray(freqs_hz, dtype=float)
    m = np.asarray(mag_db, dtype=float)
    t = np.asarray(to_hz, dtype=float)
    lt = np.log2(np.maximum(t, 1e-12))
    out = np.interp(lt, np.log2(f), m)
    lo, hi = t < f[0], t > f[-1]
    out[lo] = m[0] + low_slope * (lt[lo] - np.log2(f[0]))
    out[hi] = m[-1] + high_slope * (lt[hi] - np.log2(f[-1]))
    return out


#: Bounds of the slopes (dB/octave) used to extend a magnitude beyond the data: a
#: driver's own roll-offs are at most about fifth order (30 dB/octave) in this model;
#: steeper measured edges (a gate, a noise floor) are clipped to them, and a magnitude
#: never rises beyond its ends. Common practice, no published source.
LOW_SLOPE_DB_OCT = (0.0, 30.0)
HIGH_SLOPE_DB_OCT = (-30.0, 0.0)


#: Log-frequency resolution of the gain-phase integral, points per decade.
_BODE_PER_DECADE = 240
#: How far (decades) the magnitude is extended beyond the data each side: the
#: integral's kernel falls as exp(-|u|), so what lies further adds below 1e-9 rad.
_BODE_EXTEND_DECADES = 9.0


def _bode_weights(h: float, n: int) -> np.ndarray:
    """``W[k] = int_{k h}^{(k+1) h} ln coth(|u| / 2) du`` for ``k = -n .. n-1``.

    Three-point Gauss-Legendre per cell; the two cells that touch the
    kernel's logarithmic singularity at ``u = 0`` use its expansion
    ``ln coth(u/2) = ln(2/u) + u^2/12 + O(u^4)``, whose integral from 0 to h
    is ``h (ln(2/h) + 1) + h^3 / 36``.
    """
    k = np.arange(-n, n)
    nodes = np.array([-np.sqrt(0.6), 0.0, np.sqrt(0.6)])
    wts = np.array([5.0, 8.0, 5.0]) / 18.0
    u = (k[:, None] + 0.5 + 0.5 * nodes[None, :]) * h
    with np.errstate(divide="ignore"):
        kern = np.log(1.0 / np.tanh(np.abs(u) / 2.0))
    out = h * (kern * wts).sum(axis=1)
    near = h * (np.log(2.0 / h) + 1.0) + h ** 3 / 36.0
    out[n] = out[n - 1] = near                  # cells [0, h] and [-h, 0]
    return out


def minimum_phase_deg(freqs_hz, mag_db) -> np.ndarray:
    """The minimum phase (deg) that goes with a magnitude response: Bode's gain-phase integral.

    For a minimum-phase system the phase at ``f0`` follows from the slope of
    the log magnitude ``A = ln |H|`` (nepers) against ``u = ln(f / f0)``
    ([3]_; the Hilbert transform of the log magnitude, written in log
    frequency)::

        phi(f0) = (1 / pi) * integral of (dA/du) ln coth(|u| / 2) du

    The magnitude is taken as piecewise linear in log frequency between the
    given points and extended beyond them with the slopes of its lowest and
    highest third of an octave, clipped to :data:`LOW_SLOPE_DB_OCT` and
    :data:`HIGH_SLOPE_DB_OCT` (a measurement's edge often shows its gate or
    noise floor, not the driver). The integral is one convolution on a uniform
    log grid (:data:`_BODE_PER_DECADE` points per decade), vectorised.

    Parameters
    ----------
    freqs_hz : array_like, increasing, > 0
    mag_db : array_like

    Returns
    -------
    phase_deg : ndarray
        At ``freqs_hz``, continuous (unwrapped); 0 deg where the response is
        flat far from any slope.

    Notes
    -----
    Only the magnitude inside the measured range is data; the phase near the
    range's ends depends on the extension, so it is most trustworthy away
    from them (about an octave in).
    """
    f = np.asarray(freqs_hz, dtype=float)
    m = np.asarray(mag_db, dtype=float)
    if f.ndim != 1 or len(f) < 2 or m.shape != f.shape or np.any(np.diff(f) <= 0) or f[0] <= 0:
        raise DesignError("needs increasing positive frequencies and one magnitude each",
                          field="freqs_hz")
    lo, hi = edge_slopes_db_per_octave(f, m)
    lo, hi = float(np.clip(lo, *LOW_SLOPE_DB_OCT)), float(np.clip(hi, *HIGH_SLOPE_DB_OCT))
    h = np.log(10.0) / _BODE_PER_DECADE
    x0 = np.log(f[0]) - _BODE_EXTEND_DECADES * np.log(10.0)
    x1 = np.log(f[-1]) + _BODE_EXTEND_DECADES * np.log(10.0)
    x = x0 + h * np.arange(int(np.ceil((x1 - x0) / h)) + 1)
    a_np = extended_db(f, m, np.exp(x), lo, hi) * (np.log(10.0) / 20.0)
    slope = np.diff(a_np) / h                              # dA/du on each cell
    n = len(slope)
    w = _bode_weights(h, n)
    # phi at grid point i: sum_j slope_j W[j - i], the cell j spanning [x_j, x_j + h].
    phi = np.convolve(slope, w[::-1], mode="full")[n - 1: 2 * n] / np.pi
    phi = phi[: len(x)]
    return np.degrees(np.interp(np.log(f), x, phi))
