"""Impulse-response measurement by exponential sine sweep, and response text.

A recording of an exponential sweep played through a system is deconvolved
into the system's impulse response (Farina [1]_). With the inverse-filter
method the harmonic-distortion responses land *before* the linear one, at
``-L ln N`` for harmonic ``N`` (``L = T / ln(f2/f1)``), so the linear part is
separated cleanly by taking the samples from the sweep's own latency on. A
time gate around the main peak then removes later reflections, at the cost
of frequency resolution: a gate of ``W`` seconds resolves no better than
about ``1 / W`` Hz.

The text format of a response (:mod:`planner.dsp.response_text`; its names are
here as well) is the common plain-text measurement layout: one line per
frequency, ``freq_hz  mag_db  [phase_deg]``, with ``*`` comment lines.

References
----------
.. [1] A. Farina, "Simultaneous measurement of impulse response and
   distortion with a swept-sine technique", 108th AES Convention, Paris,
   2000, preprint 5093.
.. [2] O. Kirkeby, P. A. Nelson, H. Hamada and F. Orduna-Bustamante, "Fast
   deconvolution of multichannel systems using regularization", IEEE Trans.
   Speech and Audio Processing, vol. 6, no. 2, 1998, pp. 189-194.
.. [3] F. J. Harris, "On the use of windows for harmonic analysis with the
   discrete Fourier transform", Proc. IEEE, vol. 66, no. 1, 1978 (Hann
   window).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy import fft as sfft

from planner import config
from planner.dsp.response_text import Response, format_response_text, parse_response_text
from planner.dsp.signals import check_band, half_hann, inverse_of_sweep, sweep_rate
from planner.errors import CrossplanError

__all__ = [
    "check_recording",
    "deconvolve_sweep",
    "harmonic_delay_s",
    "Gated",
    "gate",
    "ir_to_response",
    "Response",
    "format_response_text",
    "parse_response_text",
]

#: Regularisation of the spectral division, relative to max |X|^2 of the
#: sweep: tiny inside [f1, f2] (the division is then exact to ~1e-4 dB at the
#: pink sweep's weakest in-band bin, which is f1/f2 below its strongest) and
#: 1 outside, where the sweep has no energy and division would amplify
#: noise (Kirkeby et al. 1998).
_REG_IN, _REG_OUT = 1e-9, 1.0


def _signal_1d(x, field: str) -> np.ndarray:
    a = np.asarray(x, dtype=float)
    if a.ndim != 1 or len(a) < 2 or not np.all(np.isfinite(a)):
        raise CrossplanError("must be a 1-D array of 2 or more finite samples", field=field)
    return a


def check_recording(recording, sweep, fs_hz: float, pre_ms: float, gate_ms: float) -> list[str]:
    """Refuse a recording or sweep nothing can be measured from; warn of doubtful ones.

    Refused (:class:`~planner.errors.CrossplanError`): a sweep shorter than
    :data:`planner.config.MEASURE_MIN_SWEEP_S`, a recording shorter than the
    sweep (the deconvolution needs the whole sweep), a silent recording (peak
    below :data:`planner.config.MEASURE_SILENT_DBFS`). Warned (the returned
    lines): samples at full scale (clipping adds harmonics and, once they fold
    back, errors in the linear response), a recording ending before the gate
    does (the gate is then shorter than asked), and a gate longer than
    :data:`planner.config.MEASURE_GATE_REFLECTIONS_MS` (reflections kept).

    Parameters
    ----------
    recording, sweep : ndarray
        1-D float samples in [-1, 1].
    fs_hz : float
        Sample rate, Hz.
    pre_ms, gate_ms : float
        The gate: kept before and after the peak, ms.

    Returns
    -------
    list of str
        Warnings, in plain words (empty when there is nothing to say).
    """
    rec = np.asarray(recording, dtype=float)
    x = np.asarray(sweep, dtype=float)
    fs = float(fs_hz)
    min_n = int(np.ceil(config.MEASURE_MIN_SWEEP_S * fs))
    if len(x) < min_n:
        raise CrossplanError(f"{len(x)} samples ({len(x) / fs * 1000:.3g} ms) is too short "
                             f"for a measurement: at least {min_n} samples "
                             f"({config.MEASURE_MIN_SWEEP_S:g} s) at {fs:g} Hz", field="sweep")
    if len(rec) < len(x):
        raise CrossplanError(f"{len(rec)} samples ({len(rec) / fs:.3g} s) is shorter than the "
                             f"sweep ({len(x)} samples, {len(x) / fs:.3g} s): record the whole "
                             "sweep and its tail", field="recording")
    peak = float(np.max(np.abs(rec)))
    peak_db = 20.0 * np.log10(peak) if peak > 0 else -np.inf
    if peak_db < config.MEASURE_SILENT_DBFS:
        shown = "all zero" if peak == 0 else f"peak {peak_db:.1f} dBFS"
        raise CrossplanError(f"silent ({shown}, below {config.MEASURE_SILENT_DBFS:g} dBFS): "
                             "check the microphone and the input gain", field="recording")
    warnings = []
    clipped = int(np.count_nonzero(np.abs(rec) >= 1.0 - config.MEASURE_CLIP_MARGIN))
    if clipped:
        warnings.append(f"recording: {clipped} sample(s) at full scale (clipped?): the "
                        "harmonics it adds spoil the response; record quieter")
    tail_ms = (len(rec) - len(x)) / fs * 1000.0
    if gate_ms > config.MEASURE_GATE_REFLECTIONS_MS:
        warnings.append(f"gate_ms: {gate_ms:g} ms after the peak keeps the room's reflections "
                        f"(above {config.MEASURE_GATE_REFLECTIONS_MS:g} ms); the result is a "
                        "room response, not the speaker's")
    if gate_ms > tail_ms:
        warnings.append(f"gate_ms: {gate_ms:g} ms runs past the end of the recording (it "
                        f"goes on {tail_ms:.0f} ms after the sweep); the gate is cut there")
    return warnings


def harmonic_delay_s(order: int, f1_hz: float, f2_hz: float, duration_s: float) -> float:
    """How far before the linear response harmonic ``order`` appears, in seconds.

    ``dt = L ln(order)`` with ``L = T / ln(f2 / f1)`` ([1]_ eq. 6).

    Parameters
    ----------
    order : int
        Harmonic number, 1 or more (1: the linear response itself, 0 s).
    f1_hz, f2_hz : float
        The sweep's start and end frequencies in Hz.
    duration_s : float
        The sweep's length in seconds.

    References
    ----------
    .. [1] A. Farina, 108th AES Convention, 2000, preprint 5093.
    """
    if isinstance(order, bool) or int(order) != order or order < 1:
        raise CrossplanError(f"must be a whole number >= 1, not {order!r}", field="order")
    return float(sweep_rate(f1_hz, f2_hz, duration_s) * np.log(order))


def deconvolve_sweep(recording, sweep, fs_hz: float, f1_hz: float, f2_hz: float,
                     method: str = "inverse", full: bool = False) -> np.ndarray:
    """Impulse response from a recorded exponential sweep.

    Parameters
    ----------
    recording : ndarray
        What the system produced; sample 0 is when the sweep started
        playing. At least as long as ``sweep`` (longer to capture the tail).
    sweep : ndarray
        The sweep as played (fades included), e.g. from
        :func:`planner.dsp.signals.exp_sweep`.
    fs_hz : float
        Sample rate in Hz.
    f1_hz, f2_hz : float
        The sweep's start and end frequencies in Hz.
    method : {'inverse', 'division'}
        ``'inverse'``: linear convolution with Farina's inverse filter
        (:func:`planner.dsp.signals.inverse_of_sweep`), harmonic responses
        land before the linear one [1]_. ``'division'``: spectral division
        ``R X* / (|X|^2 + eps(f))`` with a regularisation ``eps`` that is
        tiny inside ``[f1, f2]`` and large outside [2]_; the harmonic
        responses then wrap to the end of the circular result.
    full : bool
        ``'inverse'`` only: return the whole convolution (length
        ``len(recording) + len(sweep) - 1``), the linear response starting at
        index ``len(sweep) - 1`` and harmonic ``N`` at
        ``harmonic_delay_s(N, ...)`` before it.

    Returns
    -------
    ir : ndarray
        The linear impulse response, ``len(recording)`` samples, time 0 at
        the start of the sweep (unless ``full``). Its in-band gain is that of
        the system (0 dB for a wire).

    Raises
    ------
    CrossplanError
        Bad arrays, band, method or a recording shorter than the sweep.

    Notes
    -----
    Anything before time 0 is dropped, including the pre-ringing of the
    band-limited pulse: a recording whose response starts at exactly sample
    0 loses that part, so leave a few ms of delay (acoustic propagation
    usually provides it) and gate with ``pre_ms``.

    References
    ----------
    .. [1] A. Farina, "Simultaneous measurement of impulse response and
       distortion with a swept-sine technique", 108th AES Convention, 2000.
    .. [2] O. Kirkeby et al., IEEE Trans. Speech Audio Process., vol. 6,
       1998, pp. 189-194.
    """
    f1, f2, fs = check_band(f1_hz, f2_hz, fs_hz)
    rec, x = _check_deconvolution(recording, sweep, method, full)
    if method == "inverse":
        return _by_inverse_filter(rec, x, f1, f2, fs, full)
    return _by_division(rec, x, f1, f2, fs)


def _check_deconvolution(recording, sweep, method: str, full: bool):
    """The recording and the sweep as arrays, the recording no shorter; a known method."""
    rec = _signal_1d(recording, "recording")
    x = _signal_1d(sweep, "sweep")
    if len(rec) < len(x):
        raise CrossplanError(f"{len(rec)} samples is shorter than the sweep ({len(x)} samples)",
                             field="recording")
    if method not in ("inverse", "division"):
        raise CrossplanError(f"must be 'inverse' or 'division', not {method!r}", field="method")
    if full and method != "inverse":
        raise CrossplanError("full=True needs method 'inverse'", field="full")
    return rec, x


def _by_inverse_filter(rec: np.ndarray, x: np.ndarray, f1: float, f2: float, fs: float,
                       full: bool) -> np.ndarray:
    """Linear convolution of the recording with Farina's inverse filter [1]_, by FFT."""
    n_full = len(rec) + len(x) - 1
    nfft = sfft.next_fast_len(n_full, real=True)
    inv = inverse_of_sweep(x, f1, f2, fs)
    y = sfft.irfft(sfft.rfft(rec, nfft) * sfft.rfft(inv, nfft), nfft)[:n_full]
    return y if full else y[len(x) - 1:len(x) - 1 + len(rec)]


def _by_division(rec: np.ndarray, x: np.ndarray, f1: float, f2: float, fs: float) -> np.ndarray:
    """Regularised spectral division ``R X* / (|X|^2 + eps(f))`` (Kirkeby et al. [2]_)."""
    nfft = sfft.next_fast_len(len(rec) + len(x) - 1, real=True)
    xs = sfft.rfft(x, nfft)
    p = np.abs(xs) ** 2
    f = sfft.rfftfreq(nfft, 1.0 / fs)
    eps = np.where((f >= f1) & (f <= f2), _REG_IN, _REG_OUT) * p.max()
    h = sfft.rfft(rec, nfft) * np.conj(xs) / (p + eps)
    return sfft.irfft(h, nfft)[:len(rec)]


@dataclass
class Gated:
    """A gated impulse response.

    Attributes
    ----------
    ir : ndarray
        The windowed segment.
    start : int
        Index of ``ir[0]`` in the input response (samples).
    peak : int
        Index of the main peak in the input response (samples).
    """

    ir: np.ndarray
    start: int
    peak: int


def gate(ir, fs_hz: float, pre_ms: float, window_ms: float, fade_ms: float) -> Gated:
    """Cut a window around the main peak of an impulse response.

    The window runs from ``pre_ms`` before the largest ``|ir|`` sample to
    ``window_ms`` after it (clipped to the response). A half-Hann [3]_ fade
    rises over the first ``min(fade_ms, pre)`` of it and another falls over
    its last ``fade_ms``, so the cut adds no step. Frequency resolution is
    then about ``1 / (pre_ms + window_ms)``: below a few times that, the
    gated response is smoothed.

    Parameters
    ----------
    ir : ndarray
    fs_hz : float
        Sample rate in Hz.
    pre_ms : float
        Kept before the peak, ms (>= 0).
    window_ms : float
        Kept after the peak, ms (> 0); end it before the first reflection.
    fade_ms : float
        Fade length in ms (>= 0), at most ``window_ms``.

    Returns
    -------
    Gated

    References
    ----------
    .. [1] A. Farina, 108th AES Convention, 2000, sec. 5 (windowing the
       deconvolved response).
    .. [3] F. J. Harris, Proc. IEEE, vol. 66, 1978 (Hann window).
    """
    h = _signal_1d(ir, "ir")
    fs = float(fs_hz)
    if not np.isfinite(fs) or fs <= 0:
        raise CrossplanError(f"must be a positive number of Hz, not {fs_hz!r}", field="fs_hz")
    for name, v, low_ok in (("pre_ms", pre_ms, True), ("window_ms", window_ms, False),
                            ("fade_ms", fade_ms, True)):
        v = float(v)
        if not np.isfinite(v) or v < 0 or (v == 0 and not low_ok):
            rule = "0 or more" if low_ok else "more than 0"
            raise CrossplanError(f"must be {rule} ms, not {v!r}", field=name)
    if fade_ms > window_ms:
        raise CrossplanError(f"{fade_ms:g} ms is longer than window_ms ({window_ms:g} ms)",
                             field="fade_ms")
    peak = int(np.argmax(np.abs(h)))
    start = max(0, peak - int(round(pre_ms * fs / 1000.0)))
    end = min(len(h), peak + int(round(window_ms * fs / 1000.0)) + 1)
    seg = h[start:end].copy()
    n_fade = int(round(fade_ms * fs / 1000.0))
    n_in = min(n_fade, peak - start)
    n_out = min(n_fade, end - peak - 1)
    if n_in:
        seg[:n_in] *= half_hann(n_in)
    if n_out:
        seg[len(seg) - n_out:] *= half_hann(n_out)[::-1]
    return Gated(seg, start, peak)


def ir_to_response(ir, fs_hz: float, freqs_hz, t0_samples: float = 0.0):
    """Magnitude (dB) and phase (deg) of an impulse response at given frequencies.

    ``H(f) = sum_n h[n] exp(-j 2 pi f (n + t0) / fs)``: the discrete-time
    Fourier transform evaluated exactly at each frequency (no FFT-bin
    interpolation), with ``ir[0]`` taken to be at time ``t0_samples`` (pass
    ``Gated.start`` to keep the delay from the start of the sweep, or
    ``Gated.start - Gated.peak`` to refer the phase to the peak).

    Parameters
    ----------
    ir : ndarray
    fs_hz : float
        Sample rate in Hz.
    freqs_hz : ndarray
        Frequencies in Hz, in [0, fs/2].
    t0_samples : float
        Time of ``ir[0]`` in samples (fractional allowed).

    Returns
    -------
    mag_db : ndarray
    phase_deg : ndarray
        Wrapped to (-180, 180].

    References
    ----------
    .. [1] A. V. Oppenheim and R. W. Schafer, "Discrete-Time Signal
       Processing", 3rd ed., sec. 2.7 (DTFT).
    """
    h = _signal_1d(ir, "ir")
    fs = float(fs_hz)
    if not np.isfinite(fs) or fs <= 0:
        raise CrossplanError(f"must be a positive number of Hz, not {fs_hz!r}", field="fs_hz")
    f = np.atleast_1d(np.asarray(freqs_hz, dtype=float))
    if f.ndim != 1 or not np.all(np.isfinite(f)) or np.any(f < 0) or np.any(f > fs / 2):
        raise CrossplanError(f"must be finite frequencies in [0, {fs / 2:g}] Hz (Nyquist)",
                             field="freqs_hz")
    w = 2.0 * np.pi * f / fs
    out = _dtft(h, w) * np.exp(-1j * w * t0_samples)
    mag = 20.0 * np.log10(np.maximum(np.abs(out), 1e-300))
    ph = np.degrees(np.angle(out))
    return mag, np.where(ph == -180.0, 180.0, ph)


def _dtft(h: np.ndarray, w: np.ndarray) -> np.ndarray:
    """``sum_n h[n] e^{-j w n}`` at each ``w`` (rad/sample), in two levels.

    With ``n = k B + m``, ``H(w) = sum_k e^{-jwkB} sum_m h[kB+m] e^{-jwm}`` (the
    sum regrouped: exact). The inner sums of all K blocks are one matrix
    product with a (B, F) table of ``e^{-jwm}``; only (B + K) F complex
    exponentials are evaluated instead of N F, with B ~ sqrt(N). Frequencies
    are taken in blocks to bound memory; within a block everything is
    vectorised.
    """
    n_taps = len(h)
    b_len = int(np.ceil(np.sqrt(n_taps)))
    k_len = -(-n_taps // b_len)
    blocks = np.zeros(k_len * b_len)
    blocks[:n_taps] = h
    blocks = blocks.reshape(k_len, b_len)
    m = np.arange(b_len)
    k = np.arange(k_len) * b_len
    out = np.empty(len(w), dtype=complex)
    step = max(1, (1 << 20) // (b_len + k_len))
    for i in range(0, len(w), step):
        wb = w[i:i + step]
        inner = blocks @ np.exp(-1j * np.outer(m, wb))          # (K, F)
        out[i:i + step] = np.einsum("kf,kf->f", inner, np.exp(-1j * np.outer(k, wb)))
    return out
