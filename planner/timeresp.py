"""Impulse and step responses of a project's bands and of their sum.

Each band is made into a sampled impulse response exactly as a WAV export
holds it and ``render`` runs it (:func:`chain_impulse`):
the sections run by :func:`scipy.signal.sosfilt` until the tail energy is
150 dB below the peak (:func:`planner.dsp.signals.truncate_iir_impulse`; a
response that has not decayed within its 10 s is refused with the reason),
an FIR convolved in exactly, gain and polarity applied, and the band's
delay.

Fractional delays: the views show what ``render`` and the WAV export make by
default, ``apply`` (:mod:`planner.engine.delays`): a delay's fraction of a sample is
a fractional-delay FIR (:mod:`planner.dsp.fracdelay`), and when any band has
one, every band is :attr:`TimeResponse.added_latency_samples` later than its
``delay_ms`` (the filter's ``(N - 1) / 2``), so that the bands stay aligned
as in the check. ``fractional_delay="round"`` shows each delay rounded to
the nearest sample instead. The fraction of each band's delay is kept in
:attr:`TimeResponse.fraction_samples`.

The step response is the running sum of the impulse response
(``s[n] = sum_{k <= n} h[k]``), for the bands and the sum alike.

References
----------
.. [1] A. V. Oppenheim and R. W. Schafer, "Discrete-Time Signal Processing",
   3rd ed., Pearson, 2010, sec. 2.3-2.4 (impulse response, convolution; the
   step response as the running sum of the impulse response).
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Sequence

import numpy as np

from planner import engine
from planner.dsp.signals import fft_convolve, truncate_iir_impulse
from planner.engine import BandDesign
from planner.engine.delays import BandDelay, fraction_of, plan_delays
from planner.model import Project

__all__ = ["TimeResponse", "chain_impulse", "IMPULSE_FLOOR_DB", "impulse_responses", "project_impulse", "project_step",
           "settle_samples", "KINDS"]

#: The two responses.
KINDS = ("impulse", "step")
#: Tail floor of an IIR impulse response, dB below its peak.
IMPULSE_FLOOR_DB = -150.0


def chain_impulse(sos, fir, linear_gain: float, delay_samples: float, fs_hz: float,
                  delay: BandDelay | None = None,
                  floor_db: float = IMPULSE_FLOOR_DB) -> tuple[np.ndarray, BandDelay]:
    """The impulse response of one band's chain, as a WAV export holds it.

    The sections run by :func:`planner.dsp.signals.truncate_iir_impulse`
    until the tail is ``floor_db`` below the peak; FIR taps are convolved in
    exactly; a fraction of a sample of delay is convolved in as the
    fractional-delay FIR of ``delay`` (:mod:`planner.dsp.fracdelay`); the
    gain (polarity included) is applied; the whole samples of the delay line
    are leading zeros.

    Parameters
    ----------
    sos : ndarray, shape (n, 6)
    fir : ndarray or None
    linear_gain : float
        ``10^(gain_db / 20)``, negative for an inverted band.
    delay_samples : float
    fs_hz : float
    delay : planner.engine.delays.BandDelay, optional
        How the delay runs, from a run's
        :func:`planner.engine.delays.plan_delays` (which aligns its bands).
        Default: this band alone, in ``apply`` mode.
    floor_db : float

    Returns
    -------
    h : ndarray
    delay : planner.engine.delays.BandDelay
    """
    if delay is None:
        delay = plan_delays([delay_samples], "apply").bands[0]
    sos = np.asarray(sos, dtype=float).reshape(-1, 6)
    h = truncate_iir_impulse(sos, fs_hz, floor_db) if len(sos) else np.ones(1)
    if fir is not None:
        h = fft_convolve(h, fir) if len(h) > 1 else h[0] * np.asarray(fir, dtype=float)
    if delay.taps is not None:
        h = fft_convolve(h, delay.taps) if len(h) > 1 else h[0] * delay.taps
    return np.concatenate([np.zeros(delay.whole_samples), linear_gain * h]), delay


@dataclass(frozen=True)
class TimeResponse:
    """Impulse (or step) responses of the bands and of the sum, on one time axis.

    Attributes
    ----------
    kind : {"impulse", "step"}
    fs_hz : float
    names : list of str
        Band names, project order.
    active : list of bool
        Which bands are in the sum (mute and solo applied).
    bands : ndarray, shape (n_bands, n)
        One row per band, zero-padded to a common length.
    sum : ndarray, shape (n,)
        Sum of the active bands.
    fraction_samples : list of float
        Per band, the fraction of a sample in its delay, ``d - floor(d)`` in
        [0, 1) (0 for a whole delay; see the module notes).
    lengths : list of int
        Per band, samples up to the end of its own response (leading zeros included).
    fractional_delay : {"apply", "round"}
        How the fractions were made.
    added_latency_samples : int
        Added to every band (``apply`` with a fraction somewhere; else 0).
    """

    kind: str
    fs_hz: float
    names: list[str]
    active: list[bool]
    bands: np.ndarray
    sum: np.ndarray
    fraction_samples: list[float]
    lengths: list[int]
    fractional_delay: str = "apply"
    added_latency_samples: int = 0

    @property
    def samples(self) -> np.ndarray:
        """Sample index of each point, 0 .. n-1."""
        return np.arange(self.sum.shape[-1])

    @property
    def time_ms(self) -> np.ndarray:
        """Time of each point in ms (``n * 1000 / fs``)."""
        return self.samples * (1000.0 / self.fs_hz)

    def step(self) -> "TimeResponse":
        """The step responses: running sums of these impulse responses."""
        if self.kind != "impulse":
            raise ValueError(f"the step response is made from an impulse response, not a {self.kind}")
        return TimeResponse("step", self.fs_hz, self.names, self.active,
                            np.cumsum(self.bands, axis=-1), np.cumsum(self.sum),
                            self.fraction_samples, self.lengths, self.fractional_delay,
                            self.added_latency_samples)

    def to_dict(self) -> dict:
        """JSON form: rate, axes and the series (lists of floats)."""
        return {"kind": self.kind, "sample_rate": self.fs_hz,
                "fractional_delay": self.fractional_delay,
                "added_latency_samples": self.added_latency_samples,
                "time_ms": self.time_ms.tolist(),
                "bands": [{"name": n, "active": a, "fraction_samples": f, "length": k,
                           "values": row.tolist()}
                          for n, a, f, k, row in zip(self.names, self.active,
                                                     self.fraction_samples, self.lengths,
                                                     self.bands)],
                "sum": self.sum.tolist()}


def impulse_responses(designs: Sequence[BandDesign], fs_hz: float, names: Sequence[str],
                      active: Sequence[bool] | None = None,
                      fractional_delay: str = "apply") -> TimeResponse:
    """Impulse responses of designed bands (e.g. :attr:`planner.engine.Report.designs`).

    Parameters
    ----------
    designs : sequence of BandDesign
    fs_hz : float
    names : sequence of str
    active : sequence of bool, optional
        Bands in the sum (default: all).
    fractional_delay : {"apply", "round"}
        How a fraction of a sample of delay is made (:func:`planner.engine.delays.plan_delays`,
        one plan for all the bands).

    Returns
    -------
    TimeResponse
        ``kind="impulse"``.

    Raises
    ------
    ExportError
        A band whose sections do not decay (a pole on or outside the unit
        circle, or a tail still above the floor after
        :func:`~planner.dsp.signals.truncate_iir_impulse`'s 10 s); an
        unknown ``fractional_delay``.
    """
    fs = float(fs_hz)
    act = [True] * len(designs) if active is None else [bool(a) for a in active]
    plan = plan_delays([d.delay_samples for d in designs], fractional_delay)
    rows = []
    for d, bd in zip(designs, plan.bands):
        gain = (-1.0 if d.invert else 1.0) * 10.0 ** (d.gain_db / 20.0)
        h, _ = chain_impulse(d.sos, d.fir, gain, d.delay_samples, fs, bd)
        rows.append(h)
    fracs = [fraction_of(d.delay_samples) for d in designs]
    n = max([len(h) for h in rows] + [1])
    bands = np.zeros((len(rows), n))
    for i, h in enumerate(rows):
        bands[i, :len(h)] = h
    total = bands[np.asarray(act, bool)].sum(axis=0) if len(rows) else np.zeros(n)
    return TimeResponse("impulse", fs, list(names), act, bands, total, fracs,
                        [len(h) for h in rows], plan.mode, plan.added_latency_samples)


def project_impulse(project: Project, fractional_delay: str = "apply") -> TimeResponse:
    """Impulse responses of every band of ``project`` and of the sum, at its sample rate."""
    fs = float(project.sample_rate)
    designs = [engine.design_band(b, fs) for b in project.bands]
    return impulse_responses(designs, fs, [b.name for b in project.bands], project.active(),
                             fractional_delay)


def project_step(project: Project, fractional_delay: str = "apply") -> TimeResponse:
    """Step responses of every band of ``project`` and of the sum (running sums of the impulses)."""
    return project_impulse(project, fractional_delay).step()


def settle_samples(tr: TimeResponse, floor_db: float = -50.0) -> int:
    """Length worth showing: where every impulse response's remaining energy is ``floor_db`` down.

    For each band (and the sum) the remaining energy ``sum_{k >= n} h[k]^2``
    (Schroeder's backward integral) is compared with the band's total; the
    result is the largest first ``n`` where it is below ``floor_db`` dB,
    at least 16 samples. Of a step response, the impulse it came from is
    used (a step settles to a level, not to zero).

    References
    ----------
    .. [1] M. R. Schroeder, J. Acoust. Soc. Am., vol. 37, 1965, pp. 409-412.
    """
    if tr.kind == "step":
        rows = np.diff(np.vstack([tr.bands, tr.sum[None, :]]), axis=-1, prepend=0.0)
    else:
        rows = np.vstack([tr.bands, tr.sum[None, :]])
    e = rows * rows
    tail = np.cumsum(e[:, ::-1], axis=-1)[:, ::-1]
    total = tail[:, :1]
    floor = 10.0 ** (floor_db / 10.0)
    with np.errstate(invalid="ignore", divide="ignore"):
        below = tail <= floor * total
    # First index per row where the tail is below the floor (rows of zeros: 0).
    first = np.where(below.any(axis=-1), np.argmax(below, axis=-1), rows.shape[-1])
    return int(max(16, min(rows.shape[-1], int(first.max()))))
