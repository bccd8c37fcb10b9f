"""Band delays in whole samples and fractions: what runs, and what rounding would cost.

A band's ``delay_ms`` is ``d = delay_ms * fs / 1000`` samples, seldom a whole
number. The check applies it exactly (``e^{-jwd}``, see
:func:`planner.dsp.response.band_responses`). Whatever makes samples
(``render``, the WAV export, the time views) runs it one of two ways:

``apply`` (the default)
    ``d`` is split into the nearest whole number ``r`` and a fraction
    ``f = d - r`` in [-0.5, 0.5); ``r`` is a delay line and ``f`` a
    fractional-delay FIR (:mod:`planner.dsp.fracdelay`), which adds its
    latency ``M = (N - 1) / 2`` samples. So that the bands stay aligned,
    every other band of the same run gets ``M`` whole samples more: every
    band is then ``M`` samples later than its ``delay_ms``, none relative
    to another. A run in which no band has a fraction adds nothing.
``round``
    ``d`` is rounded to the nearest whole number (halves up), which moves
    the band by ``r - d`` samples: a phase change of ``-360 f (r - d) / fs``
    degrees at ``f`` Hz. :func:`rounding_effect` says what that does to the
    checked crossings and to the sum.

A delay within :data:`FRACTION_TOL_SAMPLES` of a whole number counts as whole.

References
----------
.. [1] T. I. Laakso, V. Valimaki, M. Karjalainen and U. K. Laine,
   "Splitting the unit delay", IEEE Signal Processing Magazine 13(1), 1996.
.. [2] A. V. Oppenheim and R. W. Schafer, "Discrete-Time Signal Processing",
   3rd ed., 2010, sec. 2.7 (a delay of ``d`` samples is ``e^{-jwd}``).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Sequence

import numpy as np

from planner.dsp.fracdelay import FracDelayDesign, kaiser_design, nearest_whole
from planner.errors import ExportError

__all__ = ["MODES", "FRACTION_TOL_SAMPLES", "BandDelay", "DelayPlan", "plan_delays",
           "check_mode", "fraction_of", "is_fractional"]


#: The ways of running a fractional delay.
MODES = ("apply", "round")


#: A delay closer than this to a whole number of samples counts as whole
#: (a millionth of a sample: at most 0.00018 deg of phase, at fs/2).
FRACTION_TOL_SAMPLES = 1e-6


def check_mode(mode: str) -> str:
    """``mode`` if it is one of :data:`MODES`, else an ExportError naming it."""
    if mode not in MODES:
        raise ExportError(f"must be one of {', '.join(MODES)}, not {mode!r}",
                          field="fractional_delay")
    return mode


def is_fractional(delay_samples: float) -> bool:
    """True when ``d`` is farther than :data:`FRACTION_TOL_SAMPLES` from a whole number."""
    return abs(float(delay_samples) - nearest_whole(delay_samples)) > FRACTION_TOL_SAMPLES


def fraction_of(delay_samples: float) -> float:
    """The fraction of a sample in ``d``, ``d - floor(d)`` in [0, 1); 0 for a whole ``d``
    (:func:`is_fractional`)."""
    d = float(delay_samples)
    return d - math.floor(d) if is_fractional(d) else 0.0


@dataclass(frozen=True)
class BandDelay:
    """How one band's delay is run.

    Attributes
    ----------
    delay_samples : float
        The band's delay as designed (``delay_ms * fs / 1000``).
    whole_samples : int
        Length of the delay line (leading zeros of an impulse response),
        the run's added latency included.
    fraction_samples : float
        The fraction run by the fractional-delay FIR, in [-0.5, 0.5); 0 when none runs.
    taps : ndarray or None
        That FIR (``None``: none runs).
    added_samples : int
        The run's added latency ``M`` (0 in ``round`` mode, or when no band has a fraction).
    """

    delay_samples: float
    whole_samples: int
    fraction_samples: float
    taps: np.ndarray | None
    added_samples: int

    @property
    def applied_samples(self) -> float:
        """The delay that runs, added latency included."""
        fir = 0.0 if self.taps is None else (len(self.taps) - 1) / 2 + self.fraction_samples
        return self.whole_samples + fir

    @property
    def rounded_by_samples(self) -> float:
        """``applied - added - designed``: what rounding moved the band by (0 in ``apply``)."""
        return self.applied_samples - self.added_samples - self.delay_samples


@dataclass(frozen=True)
class DelayPlan:
    """The delays of every band of one run (one rate).

    Attributes
    ----------
    mode : {"apply", "round"}
    bands : list of BandDelay
        Project order.
    added_latency_samples : int
        Added to every band (``apply`` with a fraction somewhere; else 0).
    design : FracDelayDesign or None
        The fractional-delay filter, when one runs.
    """

    mode: str
    bands: list[BandDelay]
    added_latency_samples: int
    design: FracDelayDesign | None

    @property
    def fractional(self) -> list[int]:
        """Indices of the bands whose delay is not whole."""
        return [i for i, b in enumerate(self.bands) if is_fractional(b.delay_samples)]

    @property
    def rounded_delays(self) -> list[float]:
        """Each band's delay rounded to the nearest whole sample (as ``round`` runs it)."""
        return [float(nearest_whole(b.delay_samples)) if is_fractional(b.delay_samples)
                else b.delay_samples for b in self.bands]

    def to_dict(self, names: Sequence[str], fs_hz: float) -> dict:
        """The manifest's record of this plan (see docs/export.md)."""
        d = self.design
        return {
            "fractional_delay": self.mode,
            "added_latency_samples": self.added_latency_samples,
            "added_latency_ms": 1000.0 * self.added_latency_samples / float(fs_hz),
            "filter": None if d is None else {
                "method": "Kaiser-windowed sinc (Laakso et al. 1996)", "taps": d.taps,
                "beta": d.beta, "edge_fs": d.edge, "max_error": d.max_error,
                "measured_error": d.measured_error,
                "magnitude_within_db": d.magnitude_bound_db,
                "phase_within_deg": d.phase_bound_deg},
            "bands": [{"name": n, "delay_samples": b.delay_samples,
                       "fraction_samples": fraction_of(b.delay_samples),
                       "whole_samples": b.whole_samples,
                       "fraction_applied_samples": b.fraction_samples,
                       "rounded_by_samples": b.rounded_by_samples}
                      for n, b in zip(names, self.bands)],
        }


def plan_delays(delays_samples: Sequence[float], mode: str = "apply",
                design: FracDelayDesign | None = None) -> DelayPlan:
    """How each delay of one run is made (see the module notes).

    Parameters
    ----------
    delays_samples : sequence of float
        Every band of the run (muted ones too: they are written as well).
    mode : {"apply", "round"}
    design : FracDelayDesign, optional
        The fractional-delay filter (default :func:`planner.dsp.fracdelay.kaiser_design`).
    """
    check_mode(mode)
    ds = [float(d) for d in delays_samples]
    frac = [is_fractional(d) for d in ds]
    if mode == "round" or not any(frac):
        return DelayPlan(mode, [BandDelay(d, nearest_whole(d), 0.0, None, 0) for d in ds], 0, None)
    fd = design or kaiser_design()
    m = fd.latency_samples
    bands = []
    for d, f in zip(ds, frac):
        r = nearest_whole(d)
        if f:
            bands.append(BandDelay(d, r, d - r, fd.fir(d - r), m))
        else:
            bands.append(BandDelay(d, r + m, 0.0, None, m))
    return DelayPlan(mode, bands, m, fd)
