"""Render: run audio through each band with the exported coefficients, and WAV files.

Each band is run exactly as a DSP would run its export (see
:mod:`planner.export`): the stored sections by :func:`scipy.signal.sosfilt`
in float64 (the filter state carried from block to block), an FIR by
overlap-add fast convolution (the taps' spectrum computed once, one block at
a time), then gain, polarity and the delay (:class:`BandRun`). Files stream
(:func:`render_to_files`): one block of the input is read, run through every
band and written, then the next. A delay with a
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
from typing import Callable, Iterable, Iterator

import numpy as np
from scipy import fft as sfft
from scipy import signal

from planner.audio.wav import WavWriter
from planner.engine.delays import BandDelay, DelayPlan, plan_delays
from planner.errors import ExportError
from planner.export import BandExport, RateExport
from planner.jsonio import make_folder, os_error_text

__all__ = ["render_band", "render", "render_to_files", "Rendered", "BandRun", "BLOCK_SAMPLES",
           "same_rate_or_refuse", "out_path"]


#: Samples per block: the unit of streaming (every band runs one block, then the next) and
#: of progress reports.
BLOCK_SAMPLES = 1 << 16


Progress = Callable[[int, int], None]


class BandRun:
    """One exported band run block by block, its state carried from one block to the next.

    Sections by :func:`scipy.signal.sosfilt` with the state ``zi`` carried; an FIR
    (the band's taps convolved with the fractional-delay filter of ``delay``, if
    any) by overlap-add with the taps' spectrum computed once: each block is
    convolved by FFT and the last ``len(fir) - 1`` samples of the result are
    added into the next block's start [1]_; then gain, polarity and a delay line
    of ``delay.whole_samples`` samples. Feeding the blocks of a signal in order
    gives, to float rounding, its one-shot filtering (``sosfilt`` over the whole
    signal, ``numpy.convolve`` cut to the input's length, then the delay).

    Parameters
    ----------
    band : BandExport
    delay : BandDelay
        From the run's :func:`planner.engine.delays.plan_delays`.
    block : int
        The longest block :meth:`process` will be given (sizes the FFT).
    """

    def __init__(self, band: BandExport, delay: BandDelay, block: int = BLOCK_SAMPLES):
        self.sos = band.run_sos if len(band.run_sos) else None
        fir = band.run_fir
        if delay.taps is not None:
            fir = delay.taps if fir is None else np.convolve(fir, delay.taps)
        self.fir = None if fir is None else np.asarray(fir, dtype=np.float64)
        self.gain = float(band.linear_gain)
        self.whole = int(delay.whole_samples)
        self.block = max(1, int(block))
        self._zi = None
        self._tail = None
        self._line = None
        self._spectrum = None
        if self.fir is not None:
            self._nfft = sfft.next_fast_len(self.block + len(self.fir) - 1, real=True)
            self._spectrum = sfft.rfft(self.fir, self._nfft)

    def process(self, blk: np.ndarray) -> np.ndarray:
        """The band's output for the next block (``(n,)`` or ``(n, channels)``, n <= block)."""
        y = np.asarray(blk, dtype=np.float64)
        n = y.shape[0]
        if n > self.block:
            raise ValueError(f"a block of {n} samples is longer than {self.block}")
        if self.sos is not None:
            if self._zi is None:
                self._zi = np.zeros((len(self.sos), 2) + y.shape[1:])
            y, self._zi = signal.sosfilt(self.sos, y, axis=0, zi=self._zi)
        if self.fir is not None:
            spec = self._spectrum if y.ndim == 1 else self._spectrum[:, None]
            full = sfft.irfft(sfft.rfft(y, self._nfft, axis=0) * spec, self._nfft,
                              axis=0)[:n + len(self.fir) - 1]
            if self._tail is not None:
                full[:len(self._tail)] += self._tail
            y, self._tail = full[:n], full[n:]
        if self.gain != 1.0:
            # In place where y is this block's own result (sosfilt or the convolution);
            # a copy where it is still the caller's block.
            y = y * self.gain if y is blk or y.base is blk else np.multiply(y, self.gain, out=y)
        elif y is blk:
            y = y.copy()
        if self.whole:
            if self._line is None:
                self._line = np.zeros((self.whole,) + y.shape[1:])
            z = np.concatenate([self._line, y])
            y, self._line = z[:n], z[n:]
        return y


def render_band(x: np.ndarray, band: BandExport, progress: Progress | None = None,
                delay: BandDelay | None = None) -> np.ndarray:
    """Run ``x`` (shape ``(n,)`` or ``(n, channels)``) through one exported band.

    :class:`BandRun` over blocks of :data:`BLOCK_SAMPLES`; the output has the
    input's length. ``progress(done, total)`` is called after each block.

    ``delay`` comes from the run's :func:`planner.engine.delays.plan_delays`
    (default: the band alone, in ``apply`` mode).
    """
    if delay is None:
        delay = plan_delays([band.delay_samples], "apply").bands[0]
    x = np.asarray(x, dtype=np.float64)
    n = x.shape[0]
    run = BandRun(band, delay)
    y = np.empty_like(x)
    for start in range(0, n, BLOCK_SAMPLES):
        y[start:start + BLOCK_SAMPLES] = run.process(x[start:start + BLOCK_SAMPLES])
        if progress is not None:
            progress(min(start + BLOCK_SAMPLES, n), n)
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


def _blocks(x: np.ndarray, block: int) -> Iterator[np.ndarray]:
    for start in range(0, x.shape[0], block):
        yield x[start:start + block]


def _run_blocks(blocks: Iterable[np.ndarray], n: int, rx: RateExport, plan: DelayPlan,
                emit: Callable[[int, int, np.ndarray], None], progress: Progress | None,
                block: int) -> None:
    """Every band of ``rx`` over ``blocks`` in order; ``emit(k, start, y)`` per band and block.

    ``k`` is the band's index, or ``-1`` for the sum of the active bands.
    """
    runs = [BandRun(b, bd, block) for b, bd in zip(rx.bands, plan.bands)]
    nb = len(runs)
    start = 0
    for blk in blocks:
        blk = np.asarray(blk, dtype=np.float64)
        live = []
        for k, (b, run) in enumerate(zip(rx.bands, runs)):
            y = run.process(blk)
            emit(k, start, y)
            if b.active:
                live.append(y)
            if progress is not None:
                progress(start * nb + (k + 1) * len(blk), n * nb)
        if not live:
            s = np.zeros_like(blk)
        elif len(live) == 1:
            s = live[0].copy()
        else:
            s = live[0] + live[1]       # a new array: the bands' own blocks stay as emitted
            for y in live[2:]:
                s += y
        emit(-1, start, s)
        start += len(blk)


def render(x: np.ndarray, rx: RateExport, progress: Progress | None = None,
           fractional_delay: str = "apply") -> Rendered:
    """Run ``x`` through every band of an export; the sum takes the active (mute/solo) bands.

    ``fractional_delay`` (``"apply"`` or ``"round"``) says how delays with a
    fraction of a sample are made (:func:`planner.engine.delays.plan_delays`, one
    plan for all the bands, so that they stay aligned).
    ``progress(done, total)`` counts samples over all bands together. Every
    output is held in memory: :func:`render_to_files` streams instead.
    """
    x = np.asarray(x, dtype=np.float64)
    n = x.shape[0]
    plan = plan_delays([b.delay_samples for b in rx.bands], fractional_delay)
    if n and not any(b.run_fir is not None or d.taps is not None
                     for b, d in zip(rx.bands, plan.bands)):
        # Sections only: every output is held anyway, so the signal is one block, each
        # band's result is its output as it is (no copy into a buffer) and sosfilt runs
        # over it in one call. (An FIR is convolved block by block, overlap-add: one FFT
        # of the whole signal would cost more.)
        whole = {}
        _run_blocks([x], n, rx, plan, lambda k, start, y: whole.__setitem__(k, y), progress, n)
        return Rendered({b.name: whole[k] for k, b in enumerate(rx.bands)}, whole[-1], plan)

    outs = [np.zeros_like(x) for _ in rx.bands]
    total = np.zeros_like(x)

    def emit(k, start, y):
        (total if k < 0 else outs[k])[start:start + len(y)] = y

    _run_blocks(_blocks(x, BLOCK_SAMPLES), n, rx, plan, emit, progress, BLOCK_SAMPLES)
    return Rendered({b.name: y for b, y in zip(rx.bands, outs)}, total, plan)


def render_to_files(blocks: Iterable[np.ndarray], n: int, channels: int, rx: RateExport,
                    band_paths, sum_path, progress: Progress | None = None,
                    fractional_delay: str = "apply",
                    block: int = BLOCK_SAMPLES) -> DelayPlan:
    """Stream blocks of audio through every band into one 32-bit float WAV per band and the sum.

    Only one block of the input and of each output is held at a time. Each
    file is written to a temporary file in its folder and renamed over its
    path once every file is complete, so an error or Ctrl-C leaves no
    truncated WAV (the temporary files are removed) and no old file is
    replaced by a part of a new one.

    Parameters
    ----------
    blocks : iterable of ndarray
        The input in order, each block at most ``block`` samples
        (``(m,)`` mono or ``(m, channels)``), ``n`` samples in all.
    n, channels : int
    rx : RateExport
    band_paths : sequence of path
        One output file per band of ``rx``.
    sum_path : path
        The sum of the active bands.
    progress : callable, optional
        ``progress(done, total)``, samples over all bands together.
    fractional_delay : {"apply", "round"}
    block : int

    Returns
    -------
    DelayPlan
        How the band delays were made.

    Raises
    ------
    ExportError
        ``field='wav'``: outputs too long for a WAV file (4 GiB); ``field='out'``:
        a file that cannot be written, with the reason.
    """
    if n * channels * 4 + 44 > 0xFFFFFFFF:
        raise ExportError(f"{n} samples x {channels} channel(s) of 32-bit float is more than "
                          "a WAV file can hold (4 GiB); cut the input into parts", field="wav")
    plan = plan_delays([b.delay_samples for b in rx.bands], fractional_delay)
    paths = [Path(p) for p in band_paths] + [Path(sum_path)]
    writers = []
    try:
        for p in paths:
            writers.append(WavWriter(p, rx.fs_hz, channels))

        def emit(k, start, y):
            writers[k].write(y)

        _run_blocks(blocks, n, rx, plan, emit, progress, block)
        for w in writers:
            w.finish()
        for w in writers:
            w.commit()
    except OSError as e:
        for w in writers:
            w.abort()
        raise ExportError(f"cannot write {os_error_text(e)}", field="out") from None
    except BaseException:
        for w in writers:
            w.abort()
        raise
    return plan


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
