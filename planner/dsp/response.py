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

from planner.dsp.fir.response import fir_response, fir_response_and_derivative

__all__ = ["stack_sos", "sos_response", "band_responses", "poly_response", "BandResponses",
           "PointEvaluator", "log_derivative"]

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


def _basis(w: np.ndarray) -> np.ndarray:
    """Powers ``[1, z^-1, z^-2]`` on the unit circle as interleaved real/imag rows, shape (3, 2n).

    With this layout a real matrix product of coefficients ``(m, 3) @ basis``
    is directly the complex value of ``m`` quadratics, seen as a complex view:
    one BLAS call evaluates every section of every band.
    """
    basis = np.empty((3, len(w), 2))
    basis[0, :, 0], basis[0, :, 1] = 1.0, 0.0
    basis[1, :, 0], basis[1, :, 1] = np.cos(w), -np.sin(w)
    basis[2, :, 0], basis[2, :, 1] = np.cos(2 * w), -np.sin(2 * w)
    return basis.reshape(3, 2 * len(w))


def _quadratics(coef: np.ndarray, basis: np.ndarray) -> np.ndarray:
    """``c0 + c1 z^-1 + c2 z^-2`` for each row of ``coef`` (m, 3): complex, shape (m, n)."""
    return np.ascontiguousarray(coef @ basis).view(complex)


#: Complex values held at once per block (about 1.5 MB) when the derivative
#: is wanted: its several large temporaries cost more in fresh memory pages
#: than in arithmetic, so long grids are then evaluated in blocks.
_BLOCK_VALUES = 98304


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
    w = np.asarray(w, dtype=float)
    nb, ns, _ = stacked.shape
    block = max(256, _BLOCK_VALUES // max(1, 2 * nb * ns))
    if not derivative or len(w) <= block:
        # Without the derivative one pass over the whole grid is fastest.
        return _sos_block(stacked, w, derivative)
    parts = [_sos_block(stacked, w[i:i + block], derivative) for i in range(0, len(w), block)]
    return (np.concatenate([q[0] for q in parts], axis=1),
            np.concatenate([q[1] for q in parts], axis=1))


def _sos_block(stacked: np.ndarray, w: np.ndarray, derivative: bool):
    """:func:`sos_response` on one block of frequencies."""
    nb, ns, _ = stacked.shape
    nf = len(w)
    basis = _basis(np.asarray(w, dtype=float))
    # Numerator and denominator coefficients of section k of every band: (ns, 2 nb, 3).
    coef = np.concatenate([stacked[:, :, 0:3], stacked[:, :, 3:6]]).transpose(1, 0, 2)
    # The chain is multiplied section by section: a loop over sections,
    # never over frequencies.
    # Every numerator and denominator of every band in one matrix product.
    z = _quadratics(coef.reshape(-1, 3), basis).reshape(ns, 2 * nb, nf)
    p = z[0].copy()
    if not derivative:
        for k in range(1, ns):
            p *= z[k]
        return p[:nb] / p[nb:]
    # With the derivative, the product rule is carried along the chain
    # (P' <- P' z_k + P z_k'), so no per-section division is needed.
    # d/dw (c0 + c1 e^-jw + c2 e^-2jw) = -j (c1 e^-jw + 2 c2 e^-2jw)
    dz = _quadratics((coef * np.array([0.0, 1.0, 2.0])).reshape(-1, 3), basis)
    dz = dz.reshape(ns, 2 * nb, nf)
    dp = dz[0].copy()
    for k in range(1, ns):
        dp *= z[k]
        t = dz[k] * p
        dp += t
        p *= z[k]
    dp *= -1j
    h = p[:nb] / p[nb:]
    with np.errstate(divide="ignore", invalid="ignore"):
        dlog = dp[:nb] / p[:nb] - dp[nb:] / p[nb:]
    return h, dlog


def poly_response(taps: np.ndarray, w: np.ndarray, derivative: bool = False):
    """Response of an FIR (polynomial in z^-1) at ``w`` rad/sample, with optional ``H'/H``.

    Kept for callers that work in rad/sample; it evaluates by the block method
    of :func:`planner.dsp.fir.fir_response` (``fs = 2 pi`` makes Hz rad/sample).
    """
    w = np.asarray(w, dtype=float)
    if not derivative:
        return fir_response(taps, w, 2.0 * np.pi)
    h, dh = fir_response_and_derivative(taps, w, 2.0 * np.pi)
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

    def __init__(self, freqs_hz, h, fs_hz, dlog_fn):
        self.freqs_hz = freqs_hz
        self.h = h
        self.fs_hz = fs_hz
        self._dlog_fn = dlog_fn
        self._dlog = None

    @property
    def dlog(self) -> np.ndarray:
        """d(ln h)/dw per band, computed on first use (only group delay needs it)."""
        if self._dlog is None:
            self._dlog = self._dlog_fn()
        return self._dlog

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
        """Group delay of the sum in samples: ``-Im(S'/S)`` with ``S' = sum_b h_b (h_b'/h_b)``.

        The derivative of a sum is the sum of the derivatives, each ``h_b' = h_b
        (h_b'/h_b)``; ``-Im(S'/S)`` is the group delay (module notes).
        """
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
                   firs: Sequence[np.ndarray | None] | None = None,
                   derivative: bool = False) -> BandResponses:
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
    derivative : bool
        Also evaluate the logarithmic derivative (for group delay) in the same
        pass over the sections, instead of a second pass when it is first
        asked for. The responses are the same either way (the chain is
        multiplied in the same order).

    Returns
    -------
    BandResponses
    """
    freqs_hz = np.asarray(freqs_hz, dtype=float)
    nb = len(sos_list)
    w = _omega(freqs_hz, fs_hz)
    stacked = stack_sos(sos_list)
    if derivative:
        h, dsos = sos_response(stacked, w, derivative=True)
    else:
        h = sos_response(stacked, w)
    g = 10.0 ** (np.asarray(gains_db if gains_db is not None else np.zeros(nb), float) / 20.0)
    if invert is not None:
        g = g * np.where(np.asarray(invert, bool), -1.0, 1.0)
    d = np.asarray(delays_samples if delays_samples is not None else np.zeros(nb), float)
    h *= g[:, None]               # h is this call's own array
    delayed = np.flatnonzero(d)   # only their rows: e^{-j w 0} is 1 exactly
    if len(delayed):
        h[delayed] *= np.exp(-1j * np.outer(d[delayed], w))
    # FIR taps: bands with taps of the same length are evaluated together by
    # the block method of planner.dsp.fir (one matrix product per length).
    groups = _fir_groups(firs)
    if derivative:
        dl = dsos - 1j * d[:, None]
        for idx in groups.values():
            hf, dh = fir_response_and_derivative(np.stack([firs[i] for i in idx]), freqs_hz,
                                                 fs_hz)
            h[idx] *= hf
            with np.errstate(divide="ignore", invalid="ignore"):
                dl[idx] += dh / hf
        return BandResponses(freqs_hz, h, fs_hz, lambda: dl)
    for idx in groups.values():
        h[idx] *= fir_response(np.stack([firs[i] for i in idx]), freqs_hz, fs_hz)

    def dlog():
        return _log_derivative(stacked, w, d, groups, firs, freqs_hz, fs_hz)

    return BandResponses(freqs_hz, h, fs_hz, dlog)


def _fir_groups(firs) -> dict[int, list[int]]:
    """Bands with FIR taps, grouped by tap count (evaluated together)."""
    groups: dict[int, list[int]] = {}
    for i, taps in enumerate(firs or ()):
        if taps is not None:
            groups.setdefault(len(taps), []).append(i)
    return groups


def _log_derivative(stacked, w, d, groups, firs, freqs_hz, fs_hz):
    out = sos_response(stacked, w, derivative=True)[1] - 1j * d[:, None]
    for idx in groups.values():
        hf, dh = fir_response_and_derivative(np.stack([firs[i] for i in idx]), freqs_hz, fs_hz)
        with np.errstate(divide="ignore", invalid="ignore"):
            out[idx] += dh / hf
    return out


def log_derivative(sos_list: Sequence[np.ndarray], freqs_hz: np.ndarray, fs_hz: float,
                   delays_samples: Sequence[float] | None = None,
                   firs: Sequence[np.ndarray | None] | None = None) -> np.ndarray:
    """``d(ln h)/dw`` of every band on ``freqs_hz`` (w in rad/sample), shape (n_bands, n).

    What :attr:`BandResponses.dlog` holds, for responses already evaluated
    (gain and polarity do not change it; a delay of d samples adds ``-j d``).
    ``d(ln h)/dw = h'/h``, the sum over the chain of each factor's own
    logarithmic derivative (module notes).

    Parameters
    ----------
    sos_list : sequence of ndarray, each (n_i, 6)
        Each band's sections.
    freqs_hz : ndarray, shape (n,)
        Grid in Hz.
    fs_hz : float
        Sample rate in Hz.
    delays_samples : sequence of float, optional
        Band delays in samples.
    firs : sequence of ndarray or None, optional
        FIR taps applied after the sections, per band.
    """
    freqs_hz = np.asarray(freqs_hz, dtype=float)
    d = np.asarray(delays_samples if delays_samples is not None else np.zeros(len(sos_list)),
                   float)
    return _log_derivative(stack_sos(sos_list), _omega(freqs_hz, fs_hz), d, _fir_groups(firs),
                           firs, freqs_hz, fs_hz)


class PointEvaluator:
    """Responses of chosen bands at chosen frequencies: entry ``k`` is band ``bands[k]`` at
    ``freqs_hz[k]``.

    What a root search needs: each crossing is refined on its own two bands
    only, at its own trial frequency, so ``m`` queries cost ``m`` chains
    (not every band at every query). All queries are evaluated together:
    the sections of each query's band are gathered from the stacked chains
    and evaluated at that query's frequency in a few array operations; FIR
    taps (if any) by :func:`planner.dsp.fir.fir_response`, one call per FIR
    band. Gain, polarity and delay are applied as in :func:`band_responses`,
    so the values equal its ``h[bands[k], k]``.

    Parameters
    ----------
    sos_list : sequence of ndarray, each (n_i, 6)
    fs_hz : float
    gains_db, delays_samples, invert, firs : sequences, optional
        As in :func:`band_responses`.
    """

    def __init__(self, sos_list: Sequence[np.ndarray], fs_hz: float,
                 gains_db: Sequence[float] | None = None,
                 delays_samples: Sequence[float] | None = None,
                 invert: Sequence[bool] | None = None,
                 firs: Sequence[np.ndarray | None] | None = None):
        nb = len(sos_list)
        self.fs_hz = float(fs_hz)
        self._stacked = stack_sos(sos_list)
        g = 10.0 ** (np.asarray(gains_db if gains_db is not None else np.zeros(nb), float) / 20)
        if invert is not None:
            g = g * np.where(np.asarray(invert, bool), -1.0, 1.0)
        self._gain = g
        self._delay = np.asarray(delays_samples if delays_samples is not None else np.zeros(nb),
                                 float)
        self._firs = [] if firs is None else [(i, np.asarray(t, float))
                                              for i, t in enumerate(firs) if t is not None]

    def __call__(self, bands, freqs_hz) -> np.ndarray:
        """Complex responses, shape (m,), of ``bands`` (m,) at ``freqs_hz`` (m,) in Hz."""
        b = np.asarray(bands, dtype=np.intp)
        f = np.asarray(freqs_hz, dtype=float)
        w = _omega(f, self.fs_hz)
        e1 = np.exp(-1j * w)[:, None]
        e2 = e1 * e1
        c = self._stacked[b]                                   # (m, n_sections, 6)
        num = c[..., 0] + c[..., 1] * e1 + c[..., 2] * e2
        den = c[..., 3] + c[..., 4] * e1 + c[..., 5] * e2
        h = num.prod(axis=1) / den.prod(axis=1) * self._gain[b]
        d = self._delay[b]
        if np.any(d):
            h = h * np.exp(-1j * d * w)
        for i, taps in self._firs:       # a loop over FIR bands, never over frequencies
            sel = b == i
            if np.any(sel):
                h[sel] = h[sel] * fir_response(taps, f[sel], self.fs_hz)
        return h

    def all_bands(self, freqs_hz) -> np.ndarray:
        """Every band at every frequency, shape (n_bands, n): ``band_responses(...).h``, by
        its matrix-product path, without stacking the chains again."""
        f = np.asarray(freqs_hz, dtype=float)
        w = _omega(f, self.fs_hz)
        h = sos_response(self._stacked, w) * self._gain[:, None]
        if np.any(self._delay):
            h = h * np.exp(-1j * np.outer(self._delay, w))
        for i, taps in self._firs:
            h[i] *= fir_response(taps, f, self.fs_hz)
        return h
