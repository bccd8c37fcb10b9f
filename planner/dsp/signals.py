"""Test signals as plain arrays: sweeps and their inverse filters, impulses, noise.

Everything here is pure numpy/scipy: arrays in, arrays out, no files. An IIR
chain's impulse response and fast convolution are in :mod:`planner.dsp.impulse`
(their names are here as well).

References
----------
.. [1] A. Farina, "Simultaneous measurement of impulse response and
   distortion with a swept-sine technique", 108th AES Convention, Paris,
   2000, preprint 5093 (exponential sweep and its inverse filter).
.. [3] N. J. Kasdin, "Discrete simulation of colored noise and stochastic
   processes and 1/f^alpha power law noise generation", Proc. IEEE, vol. 83,
   no. 5, 1995, pp. 802-827 (1/f noise by frequency-domain shaping).
.. [4] F. J. Harris, "On the use of windows for harmonic analysis with the
   discrete Fourier transform", Proc. IEEE, vol. 66, no. 1, 1978, pp. 51-83
   (Hann window).
"""

from __future__ import annotations

import numpy as np

from planner.dsp.impulse import fft_convolve, truncate_iir_impulse
from planner.errors import CrossplanError

__all__ = [
    "exp_sweep",
    "inverse_sweep",
    "inverse_of_sweep",
    "sweep_rate",
    "impulse",
    "white_noise",
    "pink_noise",
    "truncate_iir_impulse",
    "fft_convolve",
]


def _positive(value, field: str, unit: str) -> float:
    v = float(value)
    if not np.isfinite(v) or v <= 0:
        raise CrossplanError(f"must be a positive number of {unit}, not {value!r}", field=field)
    return v


def check_band(f1_hz, f2_hz, fs_hz):
    """``(f1, f2, fs)`` in Hz: all positive, ``f1 < f2 <= fs / 2`` (fields f1_hz, f2_hz, fs_hz)."""
    fs = _positive(fs_hz, "fs_hz", "Hz")
    f1 = _positive(f1_hz, "f1_hz", "Hz")
    f2 = _positive(f2_hz, "f2_hz", "Hz")
    if f2 <= f1:
        raise CrossplanError(f"{f2:g} Hz must be above f1_hz ({f1:g} Hz)", field="f2_hz")
    if f2 > fs / 2:
        raise CrossplanError(f"{f2:g} Hz is above Nyquist ({fs / 2:g} Hz) for fs_hz {fs:g}",
                             field="f2_hz")
    return f1, f2, fs


def half_hann(n: int) -> np.ndarray:
    """Rising half of a Hann window, ``n`` samples from 0 towards 1 (exclusive).

    ``0.5 - 0.5 cos(pi k / n)`` for ``k = 0 .. n-1``: the first half of the
    Hann window of ``2n`` points (Harris [4]_).
    """
    return 0.5 - 0.5 * np.cos(np.pi * np.arange(n) / max(n, 1))


def sweep_rate(f1_hz: float, f2_hz: float, duration_s: float) -> float:
    """Time constant ``L = T / ln(f2 / f1)`` of an exponential sweep, in seconds.

    The instantaneous frequency is ``f1 exp(t / L)``; one octave takes
    ``L ln 2`` seconds ([1]_ eq. 3).

    References
    ----------
    .. [1] A. Farina, AES 108th Convention, 2000, preprint 5093.
    """
    return duration_s / np.log(f2_hz / f1_hz)


def exp_sweep(f1_hz: float, f2_hz: float, duration_s: float, fs_hz: float,
              fade_in_s: float = 0.0, fade_out_s: float = 0.0,
              amplitude: float = 1.0) -> np.ndarray:
    """Exponential (logarithmic) sine sweep from ``f1_hz`` to ``f2_hz``.

    ``x(t) = A sin(2 pi f1 L (exp(t / L) - 1))`` with ``L = T / ln(f2/f1)``
    (Farina [1]_ eq. 3), sampled at ``t = n / fs`` for
    ``n = 0 .. round(T fs) - 1``. Its energy per octave is constant, so its
    power spectrum falls as 1/f (pink, -3 dB/octave).

    Parameters
    ----------
    f1_hz, f2_hz : float
        Start and end frequencies in Hz, ``0 < f1 < f2 <= fs / 2``.
    duration_s : float
        Length ``T`` in seconds.
    fs_hz : float
        Sample rate in Hz.
    fade_in_s, fade_out_s : float
        Half-Hann fades at the start and end, in seconds (0 for none).
    amplitude : float
        Peak amplitude (full scale = 1).

    Returns
    -------
    x : ndarray, shape (round(duration_s * fs_hz),)

    Raises
    ------
    CrossplanError
        Bad frequencies, duration or fades (field named).

    References
    ----------
    .. [1] A. Farina, "Simultaneous measurement of impulse response and
       distortion with a swept-sine technique", 108th AES Convention, 2000.

    Examples
    --------
    >>> exp_sweep(20, 20000, 1.0, 48000).shape
    (48000,)
    """
    f1, f2, fs = check_band(f1_hz, f2_hz, fs_hz)
    t_len = _positive(duration_s, "duration_s", "seconds")
    n = int(round(t_len * fs))
    if n < 2:
        raise CrossplanError(f"{t_len:g} s is shorter than 2 samples at {fs:g} Hz",
                             field="duration_s")
    n_in, n_out = _fade_samples(fade_in_s, fade_out_s, fs, n, t_len)
    big_l = sweep_rate(f1, f2, t_len)
    t = np.arange(n) / fs
    x = amplitude * np.sin(2.0 * np.pi * f1 * big_l * np.expm1(t / big_l))
    if n_in:
        x[:n_in] *= half_hann(n_in)
    if n_out:
        x[n - n_out:] *= half_hann(n_out)[::-1]
    return x


def _fade_samples(fade_in_s, fade_out_s, fs: float, n: int, t_len: float) -> tuple[int, int]:
    """Fade lengths in samples: each 0 or more seconds, together no longer than the sweep."""
    n_in, n_out = (int(round(float(v) * fs)) for v in (fade_in_s, fade_out_s))
    for name, v in (("fade_in_s", fade_in_s), ("fade_out_s", fade_out_s)):
        if not np.isfinite(float(v)) or float(v) < 0:
            raise CrossplanError(f"must be 0 or more seconds, not {v!r}", field=name)
    if n_in + n_out > n:
        raise CrossplanError(
            f"fades of {fade_in_s:g} s + {fade_out_s:g} s are longer than the sweep "
            f"({t_len:g} s)", field="fade_out_s")
    return n_in, n_out


def inverse_of_sweep(sweep: np.ndarray, f1_hz: float, f2_hz: float, fs_hz: float) -> np.ndarray:
    """Inverse filter of an exponential sweep, normalised for unit gain in the band.

    The sweep is time-reversed and multiplied by ``exp(-t / L)``: the reversed
    sweep starts at ``f2`` and the envelope falls by 6 dB per octave of
    frequency descent, which turns the sweep's 1/f (pink) power spectrum into
    a flat one after convolution (Farina [1]_ sec. 3). The result is scaled
    so that ``sweep * inverse`` has gain 1 (0 dB) at ``sqrt(f1 f2)``: the
    linear impulse response then comes out at its true level.

    Parameters
    ----------
    sweep : ndarray
        The sweep as played (fades included).
    f1_hz, f2_hz : float
        Its start and end frequencies in Hz.
    fs_hz : float
        Sample rate in Hz.

    Returns
    -------
    inverse : ndarray, same length as ``sweep``

    References
    ----------
    .. [1] A. Farina, 108th AES Convention, 2000, preprint 5093, sec. 3.
    """
    f1, f2, fs = check_band(f1_hz, f2_hz, fs_hz)
    x = np.asarray(sweep, dtype=float)
    if x.ndim != 1 or len(x) < 2 or not np.all(np.isfinite(x)):
        raise CrossplanError("must be a 1-D array of finite samples, 2 or more",
                             field="sweep")
    n = len(x)
    big_l = sweep_rate(f1, f2, n / fs)
    inv = x[::-1] * np.exp(-np.arange(n) / fs / big_l)
    # Gain of sweep * inverse at the geometric centre: one DFT bin each.
    f0 = np.sqrt(f1 * f2)
    e = np.exp(-2j * np.pi * f0 * np.arange(n) / fs)
    g = abs(np.dot(x, e) * np.dot(inv, e))
    return inv / g


def inverse_sweep(f1_hz: float, f2_hz: float, duration_s: float, fs_hz: float,
                  fade_in_s: float = 0.0, fade_out_s: float = 0.0) -> np.ndarray:
    """Inverse filter of :func:`exp_sweep` with the same arguments.

    See :func:`inverse_of_sweep` (Farina [1]_): the time-reversed sweep with
    the exponential envelope ``exp(-t / L)`` (+6 dB/octave correction of the
    sweep's pink spectrum), normalised for 0 dB in the band.

    Parameters
    ----------
    f1_hz, f2_hz, duration_s, fs_hz, fade_in_s, fade_out_s
        As :func:`exp_sweep`.

    Returns
    -------
    inverse : ndarray, same length as the sweep

    References
    ----------
    .. [1] A. Farina, 108th AES Convention, 2000, preprint 5093.
    """
    x = exp_sweep(f1_hz, f2_hz, duration_s, fs_hz, fade_in_s, fade_out_s)
    return inverse_of_sweep(x, f1_hz, f2_hz, fs_hz)


def impulse(n_samples: int, fs_hz: float, delay_ms: float = 0.0,
            amplitude: float = 1.0) -> np.ndarray:
    """Unit (Kronecker) impulse of ``n_samples``, at ``delay_ms`` rounded to a sample.

    Parameters
    ----------
    n_samples : int
    fs_hz : float
        Sample rate in Hz (only for the delay).
    delay_ms : float
        Position of the impulse in ms.
    amplitude : float

    Returns
    -------
    x : ndarray, shape (n_samples,)

    References
    ----------
    .. [1] A. V. Oppenheim and R. W. Schafer, "Discrete-Time Signal
       Processing", 3rd ed., sec. 2.1 (unit sample sequence).
    """
    fs = _positive(fs_hz, "fs_hz", "Hz")
    if isinstance(n_samples, bool) or int(n_samples) != n_samples or n_samples < 1:
        raise CrossplanError(f"must be a whole number of samples >= 1, not {n_samples!r}",
                             field="n_samples")
    k = int(round(float(delay_ms) * fs / 1000.0))
    if not 0 <= k < n_samples:
        raise CrossplanError(f"{delay_ms!r} ms (sample {k}) is outside 0..{n_samples - 1}",
                             field="delay_ms")
    x = np.zeros(int(n_samples))
    x[k] = amplitude
    return x


def _n_and_rng(n_samples, seed):
    if isinstance(n_samples, bool) or int(n_samples) != n_samples or n_samples < 1:
        raise CrossplanError(f"must be a whole number of samples >= 1, not {n_samples!r}",
                             field="n_samples")
    return int(n_samples), np.random.default_rng(seed)


def white_noise(n_samples: int, fs_hz: float, seed=None, rms: float = 0.1) -> np.ndarray:
    """Gaussian white noise with the given RMS (exactly, after scaling).

    Parameters
    ----------
    n_samples : int
    fs_hz : float
        Sample rate in Hz (checked; a white spectrum does not depend on it).
    seed : int or numpy.random.Generator, optional
    rms : float
        RMS level (full scale = 1); 0.1 is -20 dBFS.

    Returns
    -------
    x : ndarray, shape (n_samples,)

    References
    ----------
    .. [1] A. Papoulis, "Probability, Random Variables, and Stochastic
       Processes", 3rd ed., 1991, sec. 10-2 (white noise).
    """
    _positive(fs_hz, "fs_hz", "Hz")
    n, rng = _n_and_rng(n_samples, seed)
    x = rng.standard_normal(n)
    return x * (rms / np.sqrt(np.mean(x * x)))


def pink_noise(n_samples: int, fs_hz: float, seed=None, rms: float = 0.1) -> np.ndarray:
    """Pink (1/f power spectrum, -3.01 dB/octave) noise.

    White Gaussian noise is shaped in the frequency domain: its real FFT is
    multiplied by ``1 / sqrt(f)`` (DC set to 0) and transformed back
    (Kasdin [1]_ sec. IV). The result is circular (it loops without a
    click) and is scaled to the given RMS.

    Parameters
    ----------
    n_samples : int
    fs_hz : float
        Sample rate in Hz.
    seed : int or numpy.random.Generator, optional
    rms : float
        RMS level (full scale = 1).

    Returns
    -------
    x : ndarray, shape (n_samples,)

    References
    ----------
    .. [1] N. J. Kasdin, Proc. IEEE, vol. 83, no. 5, 1995, pp. 802-827.
    """
    fs = _positive(fs_hz, "fs_hz", "Hz")
    n, rng = _n_and_rng(n_samples, seed)
    spec = np.fft.rfft(rng.standard_normal(n))
    f = np.fft.rfftfreq(n, 1.0 / fs)
    shape = np.zeros_like(f)
    shape[1:] = 1.0 / np.sqrt(f[1:])
    x = np.fft.irfft(spec * shape, n)
    return x * (rms / np.sqrt(np.mean(x * x)))
