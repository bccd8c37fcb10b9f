"""Render: run audio through each band with the exported coefficients, and WAV files.

Each band is run exactly as a DSP would run its export (see
:mod:`planner.export`): the stored sections by :func:`scipy.signal.sosfilt`
in float64 (the filter state carried from block to block), an FIR by
overlap-add fast convolution (:func:`planner.dsp.signals.fft_convolve`, one
block at a time), then gain, polarity and the delay. A delay with a
fraction of a sample runs as :mod:`planner.engine.delays` says: by default
(``apply``) the fraction is a fractional-delay FIR
(:mod:`planner.dsp.fracdelay`, convolved in like the band's own taps) and
every band of the run gets that filter's latency ``(N - 1) / 2`` samples, so
that the bands stay aligned; ``round`` rounds each delay to the nearest
sample instead. The exported WAV impulse responses are made the same way.
Outputs keep the input's length and channels (what the delays push past
the end is cut).

WAV files are in :mod:`planner.audio.wav`.

References
----------
.. [1] A. V. Oppenheim and R. W. Schafer, "Discrete-Time Signal Processing",
   3rd ed., sec. 6.3 (cascade form), 8.7.3 (block convolution, overlap-add).
.. [2] Microsoft / IBM, "Multimedia Programming Interface and Data
   Specifications 1.0", 1991 (RIFF WAVE; WAVE_FORMAT_IEEE_FLOAT = 3).
.. [3] T. I. Laakso, V. Valimaki, M. Karjalainen and U. K. Laine,
   "Splitting the unit delay", IEEE Signal Processing Magazine 13(1), 1996.
"""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path
from typing import Callable

import numpy as np
from scipy import signal

from planner.dsp.signals import fft_convolve
from planner.engine.delays import BandDelay, DelayPlan, plan_delays
from planner.errors import ExportError
from planner.export import BandExport, RateExport
from planner.jsonio import make_folder, os_error_text

__all__ = ["render_band", "render", "Rendered", "BLOCK_SAMPLES", "same_rate_or_refuse",
           "out_path"]


#: Samples per block between progress reports.
BLOCK_SAMPLES = 1 << 16


Progress = Callable[[int, int], None]


def render_band(x: np.ndarray, band: BandExport, progress: Progress | None = None,
                delay: BandDelay | None = None) -> np.ndarray:
    """Run ``x`` (shape ``(n,)`` or ``(n, channels)``) through one exported band.

    Sections by :func:`scipy.signal.sosfilt` in blocks of
    :data:`BLOCK_SAMPLES` with the state carried, an FIR (the band's taps
    convolved with the fractional-delay filter of ``delay``, if any) by
    overlap-add (each block convolved by
    :func:`planner.dsp.signals.fft_convolve` and its tail added into the
    next), then gain, polarity and ``delay.whole_samples`` samples of delay
    line. The output has the input's length. ``progress(done, total)`` is
    called after each block.

    ``delay`` comes from the run's :func:`planner.engine.delays.plan_delays`
    (default: the band alone, in ``apply`` mode).
    """
    if delay is None:
        delay = plan_delays([band.delay_samples], "apply").bands[0]
    x = np.asarray(x, dtype=np.float64)
    n = x.shape[0]
    sos, fir = band.run_sos, band.run_fir
    if delay.taps is not None:
        fir = delay.taps if fir is None else np.convolve(fir, delay.taps)
    y = np.empty_like(x)
    zi = None
    if len(sos):
        zi = np.zeros((len(sos), 2) + x.shape[1:])
    tail = None
    for start in range(0, n, BLOCK_SAMPLES):
        blk = x[start:start + BLOCK_SAMPLES]
        if zi is not None:
            blk, zi = signal.sosfilt(sos, blk, axis=0, zi=zi)
        if fir is not None:
            if blk.ndim == 1:
                full = fft_convolve(blk, fir)
            else:
                full = np.column_stack([fft_convolve(blk[:, c], fir) for c in range(blk.shape[1])])
            if tail is not None:
                k = min(len(tail), len(full))
                full[:k] += tail[:k]
                if len(tail) > k:
                    full = np.concatenate([full, tail[k:]])
            blk, tail = full[:len(blk)], full[len(blk):]
        y[start:start + len(blk)] = blk
        if progress is not None:
            progress(min(start + BLOCK_SAMPLES, n), n)
    y *= band.linear_gain
    whole = delay.whole_samples
    if whole:
        y = np.concatenate([np.zeros((min(whole, n),) + x.shape[1:]), y[:max(n - whole, 0)]])
    return y


@dataclass
class Rendered:
    """Outputs of :func:`render`.

    Attributes
    ----------
    bands : dict
        Band name -> output array, project order.
    sum : ndarray
        The sum of the active (mute/solo) bands.
    delays : DelayPlan
        How the band delays were made (mode, per band, the added latency).
    """

    bands: dict
    sum: np.ndarray
    delays: DelayPlan


def render(x: np.ndarray, rx: RateExport, progress: Progress | None = None,
           fractional_delay: str = "apply") -> Rendered:
    """Run ``x`` through every band of an export; the sum takes the active (mute/solo) bands.

    ``fractional_delay`` (``"apply"`` or ``"round"``) says how delays with a
    fraction of a sample are made (:func:`planner.engine.delays.plan_delays`, one
    plan for all the bands, so that they stay aligned).
    ``progress(done, total)`` counts samples over all bands together.
    """
    n = np.asarray(x).shape[0]
    total = n * len(rx.bands)
    plan = plan_delays([b.delay_samples for b in rx.bands], fractional_delay)
    outs = {}
    for i, (b, bd) in enumerate(zip(rx.bands, plan.bands)):
        cb = None if progress is None else (lambda d, t, i=i: progress(i * n + d, total))
        outs[b.name] = render_band(x, b, cb, bd)
    s = np.zeros_like(np.asarray(x, dtype=np.float64))
    for b in rx.bands:
        if b.active:
            s = s + outs[b.name]
    return Rendered(outs, s, plan)


def same_rate_or_refuse(fs_hz: float, rates) -> float:
    """``fs_hz`` if it is one of ``rates``, else an ExportError naming both."""
    if any(float(fs_hz) == float(r) for r in rates):
        return float(fs_hz)
    listed = ", ".join(f"{float(r):g}" for r in rates)
    raise ExportError(f"the input is at {fs_hz:g} Hz but the design is made for {listed} Hz; "
                      f"resample the input, or add --rate {fs_hz:g}", field="rate")


def out_path(out_dir, name: str) -> Path:
    """``out_dir/name``, making the folder."""
    try:
        p = make_folder(out_dir)
    except OSError as e:
        raise ExportError(f"cannot make the folder {os_error_text(e)}", field="out") from None
    return p / name
