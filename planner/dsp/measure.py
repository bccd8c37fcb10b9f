"""Impulse-response measurement by exponential sine sweep, and response text.

A recording of an exponential sweep played through a system is deconvolved
into the system's impulse response (Farina [1]_). With the inverse-filter
method the harmonic-distortion responses land *before* the linear one, at
``-L ln N`` for harmonic ``N`` (``L = T / ln(f2/f1)``), so the linear part is
separated cleanly by taking the samples from the sweep's own latency on. A
time gate around the main peak then removes later reflections, at the cost
of frequency resolution: a gate of ``W`` seconds resolves no better than
about ``1 / W`` Hz.

The text format is the common plain-text measurement layout: one line per
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

import re
from dataclasses import dataclass

import numpy as np
from scipy import fft as sfft

from planner.dsp.signals import _check_band, _half_hann, inverse_of_sweep, sweep_rate
from planner.errors import CrossplanError

__all__ = [
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


def harmonic_delay_s(order: int, f1_hz: float, f2_hz: float, duration_s: float) -> float:
    """How far before the linear response harmonic ``order`` appears, in seconds.

    ``dt = L ln(order)`` with ``L = T / ln(f2 / f1)`` ([1]_ eq. 6).

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
    f1, f2, fs = _check_band(f1_hz, f2_hz, fs_hz)
    rec = _signal_1d(recording, "recording")
    x = _signal_1d(sweep, "sweep")
    if len(rec) < len(x):
        raise CrossplanError(f"{len(rec)} samples is shorter than the sweep ({len(x)} samples)",
                             field="recording")
    if method not in ("inverse", "division"):
        raise CrossplanError(f"must be 'inverse' or 'division', not {method!r}", field="method")
    if full and method != "inverse":
        raise CrossplanError("full=True needs method 'inverse'", field="full")
    n_full = len(rec) + len(x) - 1
    nfft = sfft.next_fast_len(n_full, real=True)
    if method == "inverse":
        inv = inverse_of_sweep(x, f1, f2, fs)
        y = sfft.irfft(sfft.rfft(rec, nfft) * sfft.rfft(inv, nfft), nfft)[:n_full]
        return y if full else y[len(x) - 1:len(x) - 1 + len(rec)]
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
        seg[:n_in] *= _half_hann(n_in)
    if n_out:
        seg[len(seg) - n_out:] *= _half_hann(n_out)[::-1]
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
    # Two-level DTFT: with n = k B + m, H(w) = sum_k e^{-jwkB} sum_m h[kB+m] e^{-jwm}.
    # The inner sums of all K blocks are one matrix product with a (B, F)
    # table of e^{-jwm}; only (B + K) F complex exponentials are evaluated
    # instead of N F, with B ~ sqrt(N). Frequencies are taken in blocks to
    # bound memory; within a block everything is vectorised.
    n_taps = len(h)
    b_len = int(np.ceil(np.sqrt(n_taps)))
    k_len = -(-n_taps // b_len)
    blocks = np.zeros(k_len * b_len)
    blocks[:n_taps] = h
    blocks = blocks.reshape(k_len, b_len)
    m = np.arange(b_len)
    k = np.arange(k_len) * b_len
    out = np.empty(len(f), dtype=complex)
    step = max(1, (1 << 20) // (b_len + k_len))
    for i in range(0, len(f), step):
        wb = w[i:i + step]
        inner = blocks @ np.exp(-1j * np.outer(m, wb))          # (K, F)
        out[i:i + step] = np.einsum("kf,kf->f", inner, np.exp(-1j * np.outer(k, wb)))
    out *= np.exp(-1j * w * t0_samples)
    mag = 20.0 * np.log10(np.maximum(np.abs(out), 1e-300))
    ph = np.degrees(np.angle(out))
    return mag, np.where(ph == -180.0, 180.0, ph)


@dataclass
class Response:
    """A frequency response read from text.

    Attributes
    ----------
    freqs_hz, mag_db : ndarray
    phase_deg : ndarray or None
        None when the text had no phase column.
    header : list of str
        Comment lines, without the comment mark.
    """

    freqs_hz: np.ndarray
    mag_db: np.ndarray
    phase_deg: np.ndarray | None
    header: list


def format_response_text(freqs_hz, mag_db, phase_deg=None, header_lines=()) -> str:
    """Write a response as plain text, one frequency per line.

    Header lines come first, each as ``* text``; then lines
    ``freq_hz  mag_db  phase_deg`` (phase omitted if None), frequency with
    8 significant digits, magnitude to 0.0001 dB, phase to 0.001 deg.

    Parameters
    ----------
    freqs_hz, mag_db : array_like, same length
    phase_deg : array_like, optional
    header_lines : sequence of str
        Comment lines (a line with a newline is split into several).

    Returns
    -------
    str
        Ending with a newline.

    References
    ----------
    .. [1] The common plain-text frequency-response layout (frequency,
       magnitude, phase columns; comment lines) used for measurement
       exchange: common practice, no published standard.
    """
    f = np.asarray(freqs_hz, dtype=float)
    m = np.asarray(mag_db, dtype=float)
    p = None if phase_deg is None else np.asarray(phase_deg, dtype=float)
    if f.ndim != 1 or m.shape != f.shape or (p is not None and p.shape != f.shape):
        raise CrossplanError(
            f"freqs_hz, mag_db and phase_deg must be 1-D of one length, not {f.shape}, "
            f"{m.shape}, {None if p is None else p.shape}", field="mag_db")
    cols = [f, m] if p is None else [f, m, p]
    if not all(np.all(np.isfinite(c)) for c in cols):
        raise CrossplanError("values must be finite numbers, found nan or inf", field="mag_db")
    lines = [f"* {s}".rstrip() for h in header_lines for s in str(h).splitlines() or [""]]
    # Column-wise (vectorised) formatting, joined into rows.
    rows = np.char.add(np.char.mod("%.8g", f), np.char.add("  ", np.char.mod("%.4f", m)))
    if p is not None:
        rows = np.char.add(rows, np.char.add("  ", np.char.mod("%.3f", p)))
    return "\n".join(lines + rows.tolist()) + "\n"


_SPLIT = re.compile(r"[,;\t ]+")
_COMMENT = ("*", "#", ";", "//")


def parse_response_text(text: str) -> Response:
    """Read a response written as text, tolerantly.

    Accepted: comment lines starting with ``*``, ``#``, ``;`` or ``//``;
    blank lines; one column-title line (non-numeric) before the data;
    columns split by commas, semicolons, tabs or spaces; 2 columns
    (frequency, magnitude) or 3 or more (frequency, magnitude, phase;
    further columns ignored), the same count on every line. Frequencies must
    be positive and strictly increasing.

    Parameters
    ----------
    text : str

    Returns
    -------
    Response

    Raises
    ------
    CrossplanError
        ``field='line N'`` naming the line, the rule and the bad text.

    References
    ----------
    .. [1] The common plain-text frequency-response layout: common practice,
       no published standard.
    """
    if not isinstance(text, str):
        raise CrossplanError(f"must be text, not {type(text).__name__}", field="text")
    header, rows, ncol, title_seen = [], [], None, False
    for no, raw in enumerate(text.splitlines(), start=1):
        line = raw.strip().lstrip("\ufeff")
        if not line:
            continue
        mark = next((c for c in _COMMENT if line.startswith(c)), None)
        if mark:
            header.append(line[len(mark):].strip())
            continue
        tokens = [t for t in _SPLIT.split(line) if t]
        try:
            vals = [float(t) for t in tokens[:3]]
        except ValueError:
            if not rows and not title_seen:
                title_seen = True
                header.append(line)
                continue
            raise CrossplanError(f"expected numbers 'freq_hz mag_db [phase_deg]', got {raw!r}",
                                 field=f"line {no}") from None
        n = min(len(tokens), 3)
        if n < 2:
            raise CrossplanError(f"needs at least 2 columns (freq_hz mag_db), got {raw!r}",
                                 field=f"line {no}")
        if ncol is None:
            ncol = n
        elif n != ncol:
            raise CrossplanError(f"has {n} columns where earlier lines have {ncol}: {raw!r}",
                                 field=f"line {no}")
        if not all(np.isfinite(vals)):
            raise CrossplanError(f"values must be finite, got {raw!r}", field=f"line {no}")
        if vals[0] <= 0:
            raise CrossplanError(f"frequency {vals[0]:g} Hz must be above 0", field=f"line {no}")
        if rows and vals[0] <= rows[-1][0]:
            raise CrossplanError(
                f"frequency {vals[0]:g} Hz must be above the previous line's {rows[-1][0]:g} Hz",
                field=f"line {no}")
        rows.append(vals)
    if not rows:
        raise CrossplanError("no data lines 'freq_hz mag_db [phase_deg]' found", field="text")
    a = np.array(rows, dtype=float)
    return Response(a[:, 0], a[:, 1], a[:, 2] if ncol == 3 else None, header)
