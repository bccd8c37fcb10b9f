"""Impulse responses: an IIR chain's, cut where its tail has died away; fast convolution.

Everything here is pure numpy/scipy: arrays in, arrays out, no files.

References
----------
.. [1] M. R. Schroeder, "New method of measuring reverberation time",
   J. Acoust. Soc. Am., vol. 37, 1965, pp. 409-412 (backward-integrated
   energy of an impulse response).
.. [2] A. V. Oppenheim and R. W. Schafer, "Discrete-Time Signal
   Processing", 3rd ed., Prentice Hall, 2010, sec. 8.7.3 (block convolution,
   overlap-add).
"""

from __future__ import annotations

import numpy as np
from planner.lazyimport import scipy_module

from planner.dsp.fixed.quantize import check_sos, pole_radius
from planner.errors import CrossplanError, ExportError

__all__ = ["truncate_iir_impulse", "fft_convolve"]

#: First block of the blockwise impulse response (samples); each next one is twice as long.
_FIRST_BLOCK = 1024


def truncate_iir_impulse(sos, fs_hz: float, floor_db: float = -150.0,
                         max_seconds: float = 10.0) -> np.ndarray:
    """Impulse response of an IIR chain, cut where its tail falls below ``floor_db``.

    The response is computed by :func:`scipy.signal.sosfilt` in blocks of
    doubling length (the filter state carried across) until the last block's
    energy is 10 dB below the floor relative to the peak sample's energy;
    since a stable tail decays at least geometrically, what follows is then
    negligible (a 10 dB margin: common practice, no published source). The
    cut is at the first sample ``n`` where the remaining tail energy
    ``sum_{k >= n} h[k]^2`` (Schroeder's backward integral [1]_) is below
    ``floor_db`` relative to ``max h^2``: the energy envelope of the tail,
    not a single sample, so a zero crossing never cuts early.

    Parameters
    ----------
    sos : ndarray, shape (n, 6)
        Second-order sections ``[b0, b1, b2, 1, a1, a2]``.
    fs_hz : float
        Sample rate in Hz.
    floor_db : float
        Tail energy floor relative to the peak, dB (negative).
    max_seconds : float
        Longest response computed, in seconds.

    Returns
    -------
    h : ndarray
        The truncated impulse response (at least 1 sample).

    Raises
    ------
    ExportError
        ``field='sos'`` if a pole lies on or outside the unit circle;
        ``field='max_seconds'`` if the tail has not decayed within
        ``max_seconds``; ``field='floor_db'`` if the floor is not negative.

    References
    ----------
    .. [1] M. R. Schroeder, J. Acoust. Soc. Am., vol. 37, 1965, pp. 409-412.
    """
    s, fs = _check_chain(sos, fs_hz, floor_db, max_seconds)
    floor = 10.0 ** (floor_db / 10.0)
    blocks, done = _decaying_blocks(s, max(1, int(np.ceil(max_seconds * fs))), floor)
    h = np.concatenate(blocks)
    peak = np.max(h * h)
    if not done:
        tail_db = 10 * np.log10(np.sum(blocks[-1] ** 2) / peak)
        raise ExportError(
            f"{max_seconds:g} s is too short: the impulse response's last block is still at "
            f"{tail_db:.1f} dB, above floor_db {floor_db:g} dB; raise max_seconds or floor_db",
            field="max_seconds")
    if peak == 0:
        return h[:1]
    # Schroeder's backward integral [1]_: the energy from each sample to the end.
    tail = np.cumsum((h * h)[::-1])[::-1]
    below = np.flatnonzero(tail < floor * peak)
    cut = int(below[0]) if len(below) else len(h)
    return h[:max(cut, 1)]


def _check_chain(sos, fs_hz, floor_db, max_seconds) -> tuple[np.ndarray, float]:
    """The arguments of :func:`truncate_iir_impulse` checked: the sections and the rate."""
    s = check_sos(sos)
    fs = float(fs_hz)
    if not np.isfinite(fs) or fs <= 0:
        raise ExportError(f"must be a positive number of Hz, not {fs_hz!r}", field="fs_hz")
    if not np.isfinite(floor_db) or floor_db >= 0:
        raise ExportError(f"must be a negative number of dB, not {floor_db!r}",
                          field="floor_db")
    if not np.isfinite(max_seconds) or max_seconds <= 0:
        raise ExportError(f"must be a positive number of seconds, not {max_seconds!r}",
                          field="max_seconds")
    r = pole_radius(s)
    if np.any(r >= 1.0):
        i = int(np.argmax(r))
        raise ExportError(f"section {i + 1} has a pole at radius {r[i]:.9g} >= 1: the impulse "
                          f"response never decays", field="sos")
    return s, fs


def _decaying_blocks(s: np.ndarray, n_max: int, floor: float) -> tuple[list, bool]:
    """The impulse response of ``s`` in blocks of doubling length, the state carried across.

    Stops once a block's energy is 10 dB below ``floor`` (a power ratio) times the
    peak sample's energy, or the response is all zero (done: True), or at
    ``n_max`` samples (done: False).
    """
    signal = scipy_module("signal")
    zi = signal.sosfilt_zi(s) * 0.0
    blocks, n, size = [], 0, _FIRST_BLOCK
    while n < n_max:
        size = min(size, n_max - n)
        x = np.zeros(size)
        if n == 0:
            x[0] = 1.0
        y, zi = signal.sosfilt(s, x, zi=zi)
        blocks.append(y)
        n += size
        peak = max(np.max(np.abs(b)) for b in blocks) ** 2
        if peak > 0 and np.sum(y * y) <= floor * peak * 0.1:
            return blocks, True
        if peak == 0:
            return blocks, True
        size *= 2
    return blocks, False


def fft_convolve(x, h, mode: str = "full") -> np.ndarray:
    """Linear convolution of long signals by overlap-add FFT.

    A thin wrapper of :func:`scipy.signal.oaconvolve`, which picks the block
    size; for a long signal and a long FIR it costs ``O(N log M)``.

    Parameters
    ----------
    x, h : ndarray, 1-D
    mode : {'full', 'same', 'valid'}

    Returns
    -------
    y : ndarray

    References
    ----------
    .. [1] A. V. Oppenheim and R. W. Schafer, "Discrete-Time Signal
       Processing", 3rd ed., sec. 8.7.3 (block convolution, overlap-add).
    """
    x, h = np.asarray(x, dtype=float), np.asarray(h, dtype=float)
    for name, v in (("x", x), ("h", h)):
        if v.ndim != 1 or len(v) == 0:
            raise CrossplanError(f"must be a non-empty 1-D array, not shape {v.shape}",
                                 field=name)
    if mode not in ("full", "same", "valid"):
        raise CrossplanError(f"must be 'full', 'same' or 'valid', not {mode!r}", field="mode")
    return scipy_module("signal").oaconvolve(x, h, mode=mode)
