"""Responses of FIR taps at arbitrary frequencies, their derivative and group delay.

Taps are 1-D float arrays ``h[n]`` with ``H(z) = sum_n h[n] z^-n``; frequencies
are in Hz at the sample rate ``fs_hz`` and ``omega = 2 pi f / fs`` is in
rad/sample.

References
----------
.. [1] A. V. Oppenheim and R. W. Schafer, "Discrete-Time Signal Processing",
   3rd ed., Pearson, 2010, sec. 5.1.2 (group delay).
"""

from __future__ import annotations

import math

import numpy as np

from planner.dsp.fir.checks import check_fs

__all__ = ["fir_response", "fir_response_and_derivative", "fir_group_delay_samples"]

#: Complex values of the inner block sums held at once per chunk of frequencies.
_CHUNK_VALUES = 32768


def _omega(freqs_hz, fs_hz: float) -> np.ndarray:
    """``omega = 2 pi f / fs`` in rad/sample."""
    return 2.0 * np.pi * np.asarray(freqs_hz, dtype=float) / check_fs(fs_hz)


def _block_response(rows: np.ndarray, w: np.ndarray) -> np.ndarray:
    """``sum_n rows[:, n] e^{-j w n}`` for every row: complex (n_rows, n_freqs).

    The taps are cut into ``B`` blocks of length ``L`` (``B L >= N``, both
    about ``sqrt(N)``): ``H(w) = sum_b e^{-j w b L} sum_m h[bL + m] e^{-j w m}``
    (the sum over ``n = bL + m`` regrouped: an identity, no approximation).
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
    """Exact group delay ``-Im(H'/H)`` in samples (NaN where ``H`` is 0).

    ``tau = -d arg H / d omega = -Im(H'(omega) / H(omega))`` (Oppenheim and
    Schafer [1]_ sec. 5.1.2), with ``H'`` from :func:`fir_response_and_derivative`.

    References
    ----------
    .. [1] Oppenheim and Schafer, 3rd ed., sec. 5.1.2.
    """
    hh, dh = fir_response_and_derivative(taps, freqs_hz, fs_hz)
    with np.errstate(divide="ignore", invalid="ignore"):
        return -np.imag(dh / hh)
