"""Impulse and step responses of a project's bands and of their sum.

Each band is made into a sampled impulse response exactly as a WAV export
holds it (:func:`planner.export.band_impulse_response`): the sections run
by :func:`scipy.signal.sosfilt` until the tail energy is 150 dB below the
peak (:func:`planner.dsp.signals.truncate_iir_impulse`; a response that has
not decayed within :data:`MAX_SECONDS` is refused with the reason), an FIR
convolved in exactly, gain and polarity applied, and the whole samples of
the band's delay as leading zeros.

Fractional delays: a delay of ``d`` samples with a fractional part cannot
be put into a sampled response without an interpolating filter that would
change it (and add ringing of its own), so only ``floor(d)`` samples are
applied, as in ``render`` and the WAV export; the part left out is kept
per band in :attr:`TimeResponse.fraction_samples` (under one sample:
20.8 us at 48 kHz). The frequency-domain check applies the exact delay.

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
from planner.engine import BandDesign
from planner.model import Project

__all__ = ["TimeResponse", "impulse_responses", "project_impulse", "project_step",
           "settle_samples", "KINDS"]

#: The two responses.
KINDS = ("impulse", "step")


@dataclass(frozen=True)
class _Run:
    """The fields :func:`planner.export.band_impulse_response` reads, for one designed band."""

    run_sos: np.ndarray
    run_fir: np.ndarray | None
    delay_samples: float
    linear_gain: float


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
        Per band, the fractional part of its delay left out (see the module notes).
    lengths : list of int
        Per band, samples up to the end of its own response (leading zeros included).
    """

    kind: str
    fs_hz: float
    names: list[str]
    active: list[bool]
    bands: np.ndarray
    sum: np.ndarray
    fraction_samples: list[float]
    lengths: list[int]

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
                            self.fraction_samples, self.lengths)

    def to_dict(self) -> dict:
        """JSON form: rate, axes and the series (lists of floats)."""
        return {"kind": self.kind, "sample_rate": self.fs_hz,
                "time_ms": self.time_ms.tolist(),
                "bands": [{"name": n, "active": a, "fraction_samples": f, "length": k,
                           "values": row.tolist()}
                          for n, a, f, k, row in zip(self.names, self.active,
                                                     self.fraction_samples, self.lengths,
                                                     self.bands)],
                "sum": self.sum.tolist()}


def impulse_responses(designs: Sequence[BandDesign], fs_hz: float, names: Sequence[str],
                      active: Sequence[bool] | None = None) -> TimeResponse:
    """Impulse responses of designed bands (e.g. :attr:`planner.engine.Report.designs`).

    Parameters
    ----------
    designs : sequence of BandDesign
    fs_hz : float
    names : sequence of str
    active : sequence of bool, optional
        Bands in the sum (default: all).

    Returns
    -------
    TimeResponse
        ``kind="impulse"``.

    Raises
    ------
    ExportError
        A band whose sections do not decay (a pole on or outside the unit
        circle, or a tail still above the floor after
        :func:`~planner.dsp.signals.truncate_iir_impulse`'s 10 s).
    """
    from planner.export import band_impulse_response

    fs = float(fs_hz)
    act = [True] * len(designs) if active is None else [bool(a) for a in active]
    rows, fracs = [], []
    for d in designs:
        gain = (-1.0 if d.invert else 1.0) * 10.0 ** (d.gain_db / 20.0)
        h, _, frac = band_impulse_response(_Run(d.sos, d.fir, d.delay_samples, gain), fs)
        rows.append(h)
        fracs.append(frac)
    n = max([len(h) for h in rows] + [1])
    bands = np.zeros((len(rows), n))
    for i, h in enumerate(rows):
        bands[i, :len(h)] = h
    total = bands[np.asarray(act, bool)].sum(axis=0) if len(rows) else np.zeros(n)
    return TimeResponse("impulse", fs, list(names), act, bands, total, fracs,
                        [len(h) for h in rows])


def project_impulse(project: Project) -> TimeResponse:
    """Impulse responses of every band of ``project`` and of the sum, at its sample rate."""
    fs = float(project.sample_rate)
    designs = [engine.design_band(b, fs) for b in project.bands]
    return impulse_responses(designs, fs, [b.name for b in project.bands], project.active())


def project_step(project: Project) -> TimeResponse:
    """Step responses of every band of ``project`` and of the sum (running sums of the impulses)."""
    return project_impulse(project).step()


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
