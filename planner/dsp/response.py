"""Complex responses of many bands at once, vectorised over sections and frequency.

All bands' second-order sections are stacked into one array (short chains
padded with identity sections), so every numerator and denominator on the
grid is computed in a few numpy operations, multiplied along the chain, and
divided once per band. The derivative with respect to normalised angular
frequency is computed analytically alongside, so that group delay is exact
rather than a finite difference of unwrapped phase.

For ``H(w) = prod_i N_i(w) / D_i(w)`` with ``N(w) = sum_k b_k e^{-jwk}``:
``H'/H = sum_i (N_i'/N_i - D_i'/D_i)`` and ``N'(w) = -j sum_k k b_k e^{-jwk}``;
the group delay in samples is ``-Im(H'/H)`` (Oppenheim and Schafer,
"Discrete-Time Signal Processing", 3rd ed., sec. 5.1.2).
"""

from __future__ import annotations

from typing import Sequence

import numpy as np

__all__ = ["stack_sos", "sos_response", "band_responses", "poly_response", "BandResponses"]

_IDENTITY = np.array([1.0, 0.0, 0.0, 1.0, 0.0, 0.0])


def stack_sos(sos_list: Sequence[np.ndarray]) -> np.ndarray:
    """Stack chains of sections into shape (n_bands, max_sections, 6), padding with identity."""
    n = max([len(s) for s in sos_list] + [1])
    out = np.tile(_IDENTITY, (len(sos_list), n, 1))
    for i, s in enumerate(sos_list):
        if len(s):
            out[i, : len(s)] = s
    return out


def _omega(freqs_hz: np.ndarray, fs_hz: float) -> np.ndarray:
    return 2.0 * np.pi * np.asarray(freqs_hz, dtype=float) / fs_hz


def sos_response(stacked: np.ndarray, w: np.ndarray, derivative: bool = False):
    """Response of stacked chains at normalised angular frequencies ``w`` (rad/sample).

    Parameters
    ----------
    stacked : ndarray, shape (n_bands, n_sections, 6)
    w : ndarray, shape (n_freqs,)
    derivative : bool
        Also return ``H'/H``, the logarithmic derivative d(ln H)/dw.

    Returns
    -------
    h : ndarray, shape (n_bands, n_freqs), complex
    dlog : ndarray, shape (n_bands, n_freqs), complex (only with ``derivative``)
    """
    z1 = np.exp(-1j * w)                      # z^-1 on the unit circle
    z2 = z1 * z1
    b0, b1, b2 = (stacked[..., k, None] for k in (0, 1, 2))
    a0, a1, a2 = (stacked[..., k, None] for k in (3, 4, 5))
    num = b0 + b1 * z1 + b2 * z2              # (bands, sections, freqs)
    den = a0 + a1 * z1 + a2 * z2
    h = np.prod(num, axis=1) / np.prod(den, axis=1)
    if not derivative:
        return h
    dnum = -1j * (b1 * z1 + 2.0 * b2 * z2)
    dden = -1j * (a1 * z1 + 2.0 * a2 * z2)
    with np.errstate(divide="ignore", invalid="ignore"):
        dlog = np.sum(dnum / num - dden / den, axis=1)
    return h, dlog


def poly_response(taps: np.ndarray, w: np.ndarray, derivative: bool = False):
    """Response of an FIR (polynomial in z^-1) at ``w`` rad/sample, with optional ``H'/H``."""
    taps = np.asarray(taps, dtype=float)
    n = np.arange(len(taps))
    e = np.exp(-1j * np.outer(w, n))          # (freqs, taps)
    h = e @ taps
    if not derivative:
        return h
    dh = e @ (-1j * n * taps)
    with np.errstate(divide="ignore", invalid="ignore"):
        return h, dh / h


class BandResponses:
    """Responses of every band on one grid, and their complex sum.

    Attributes
    ----------
    freqs_hz : ndarray, shape (n_freqs,)
    h : ndarray, shape (n_bands, n_freqs), complex
        Each band's response, gain, polarity and delay included.
    dlog : ndarray, shape (n_bands, n_freqs), complex
        d(ln h)/dw per band (w in rad/sample).
    """

    def __init__(self, freqs_hz, h, dlog, fs_hz):
        self.freqs_hz = freqs_hz
        self.h = h
        self.dlog = dlog
        self.fs_hz = fs_hz

    def sum(self, active: Sequence[bool] | None = None) -> np.ndarray:
        """Complex sum of the active bands."""
        m = self._mask(active)
        return self.h[m].sum(axis=0)

    def _mask(self, active):
        if active is None:
            return np.ones(len(self.h), dtype=bool)
        return np.asarray(active, dtype=bool)

    def group_delay_samples(self) -> np.ndarray:
        """Each band's group delay in samples, shape (n_bands, n_freqs)."""
        return -np.imag(self.dlog)

    def sum_group_delay_samples(self, active: Sequence[bool] | None = None) -> np.ndarray:
        """Group delay of the sum in samples: ``-Im(S'/S)`` with ``S' = sum_b h_b (h_b'/h_b)``."""
        m = self._mask(active)
        hb, lb = self.h[m], self.dlog[m]
        with np.errstate(invalid="ignore"):
            prod = hb * lb
        prod = np.where(np.isfinite(prod), prod, 0.0)
        s = hb.sum(axis=0)
        with np.errstate(divide="ignore", invalid="ignore"):
            return -np.imag(prod.sum(axis=0) / s)


def band_responses(sos_list: Sequence[np.ndarray], freqs_hz: np.ndarray, fs_hz: float,
                   gains_db: Sequence[float] | None = None,
                   delays_samples: Sequence[float] | None = None,
                   invert: Sequence[bool] | None = None,
                   firs: Sequence[np.ndarray | None] | None = None) -> BandResponses:
    """Evaluate every band's chain on ``freqs_hz`` in one pass.

    Parameters
    ----------
    sos_list : sequence of ndarray, each (n_i, 6)
        Each band's sections.
    freqs_hz : ndarray
        Grid in Hz.
    fs_hz : float
        Sample rate in Hz.
    gains_db, delays_samples, invert : sequences, optional
        Band gain in dB, delay in samples (fractional allowed: ``e^{-jwd}`` is
        exact), polarity.
    firs : sequence of ndarray or None, optional
        FIR taps applied after the sections, per band.

    Returns
    -------
    BandResponses
    """
    freqs_hz = np.asarray(freqs_hz, dtype=float)
    nb = len(sos_list)
    w = _omega(freqs_hz, fs_hz)
    h, dlog = sos_response(stack_sos(sos_list), w, derivative=True)
    g = 10.0 ** (np.asarray(gains_db if gains_db is not None else np.zeros(nb), float) / 20.0)
    if invert is not None:
        g = g * np.where(np.asarray(invert, bool), -1.0, 1.0)
    d = np.asarray(delays_samples if delays_samples is not None else np.zeros(nb), float)
    h = h * g[:, None] * np.exp(-1j * np.outer(d, w))
    dlog = dlog - 1j * d[:, None]
    if firs is not None:
        for i, taps in enumerate(firs):
            if taps is not None:
                hf, lf = poly_response(taps, w, derivative=True)
                h[i] *= hf
                dlog[i] += lf
    return BandResponses(freqs_hz, h, dlog, fs_hz)
