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
from dataclasses import dataclass, replace
from typing import Sequence

import numpy as np

from planner.dsp import analysis as an
from planner.dsp.fracdelay import FracDelayDesign, kaiser_design, nearest_whole
from planner.engine import Report, Warning_, evaluate
from planner.errors import ExportError
from planner.units import format_hz

__all__ = ["MODES", "FRACTION_TOL_SAMPLES", "LEVEL_FLOOR_DB", "BandDelay", "DelayPlan",
           "plan_delays", "check_mode", "fraction_of", "is_fractional", "CrossingShift",
           "RoundingEffect", "rounding_effect", "fraction_warnings", "run_notes",
           "exact_notes"]

#: The ways of running a fractional delay.
MODES = ("apply", "round")
#: A delay closer than this to a whole number of samples counts as whole
#: (a millionth of a sample: at most 0.00018 deg of phase, at fs/2).
FRACTION_TOL_SAMPLES = 1e-6
#: Levels of the sum below this (dB) count as this when a level change is
#: measured, so that a null of the sum does not read as hundreds of dB.
LEVEL_FLOOR_DB = -100.0


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


# ---------------------------------------------------------------------------
# What rounding costs
# ---------------------------------------------------------------------------

@dataclass(frozen=True)
class CrossingShift:
    """A checked crossing, with its phase difference before and after rounding."""

    bands: tuple[str, str]
    freq_hz: float
    phase_diff_deg: float
    rounded_phase_diff_deg: float

    @property
    def change_deg(self) -> float:
        """The change, wrapped to (-180, 180]."""
        return float(an.wrap_deg(self.rounded_phase_diff_deg - self.phase_diff_deg))

    def to_dict(self) -> dict:
        return {"bands": list(self.bands), "freq_hz": self.freq_hz,
                "phase_diff_deg": self.phase_diff_deg,
                "rounded_phase_diff_deg": self.rounded_phase_diff_deg,
                "change_deg": self.change_deg}


@dataclass(frozen=True)
class RoundingEffect:
    """What running some delays rounded does, against the exact check.

    Attributes
    ----------
    shifts_samples : tuple of float
        Per band, rounded minus exact delay.
    crossings : tuple of CrossingShift
        The checked crossings of a band that moved.
    sum_change_db : float
        The signed change of the sum's level with the largest magnitude
        over the analysis grid, dB (levels floored at :data:`LEVEL_FLOOR_DB`).
    at_hz : float
        Where.
    rounded_max_dev_db : float
        The sum's largest deviation from 0 dB with the rounded delays.
    """

    shifts_samples: tuple
    crossings: tuple
    sum_change_db: float
    at_hz: float
    rounded_max_dev_db: float

    def to_dict(self) -> dict:
        return {"shifts_samples": list(self.shifts_samples),
                "crossings": [c.to_dict() for c in self.crossings],
                "sum_change_db": self.sum_change_db, "sum_change_at_hz": self.at_hz,
                "rounded_max_dev_db": self.rounded_max_dev_db}


def rounding_effect(report: Report, delays_samples: Sequence[float]) -> RoundingEffect:
    """Re-evaluate a checked project with the band delays ``delays_samples``.

    On the report's grid each band's response is its response times
    ``e^{-jw(d' - d)}`` (the delay is a factor of it, Oppenheim and Schafer
    sec. 2.7): the sum of the active bands is formed again and compared in
    dB with the checked sum. At each checked crossing of a band that moved,
    the responses of the bands are evaluated afresh
    (:func:`planner.engine.evaluate` with the new delays) and the phase
    difference taken again. All of it vectorised over frequency.
    """
    fs = float(report.project.sample_rate)
    old = np.array([d.delay_samples for d in report.designs], float)
    new = np.asarray(delays_samples, float)
    shift = new - old
    freqs = report.freqs_hz
    w = 2.0 * np.pi * freqs / fs
    act = np.asarray(report.active, bool)
    if act.any():
        h = report.responses.h[act] * np.exp(-1j * np.outer(shift[act], w))
        s_new = h.sum(axis=0)
        lv_old = np.maximum(an.db(report.sum_h), LEVEL_FLOOR_DB)
        lv_new = np.maximum(an.db(s_new), LEVEL_FLOOR_DB)
        ch = lv_new - lv_old
        k = int(np.argmax(np.abs(ch)))
        change, at = float(ch[k]), float(freqs[k])
        dev = float(an.flatness(freqs, s_new)[0])
    else:
        change, at, dev = 0.0, float(freqs[0]), float("-inf")
    moved = [c for c in report.checked_crossings
             if shift[c.band_index[0]] != 0.0 or shift[c.band_index[1]] != 0.0]
    shifts = []
    if moved:
        designs = [replace(d, delay_samples=float(x)) for d, x in zip(report.designs, new)]
        fc = np.array([c.freq_hz for c in moved])
        hv = evaluate(designs, fc, fs).h
        k = np.arange(len(moved))
        ia = np.array([c.band_index[0] for c in moved])
        ib = np.array([c.band_index[1] for c in moved])
        diff = an.wrap_deg(np.degrees(np.angle(hv[ia, k]) - np.angle(hv[ib, k])))
        shifts = [CrossingShift(c.bands, c.freq_hz, c.phase_diff_deg, float(p))
                  for c, p in zip(moved, diff)]
    return RoundingEffect(tuple(float(x) for x in shift), tuple(shifts), change, at, dev)


def _num(x: float) -> str:
    return f"{x:.6g}"


def effect_text(e: RoundingEffect) -> str:
    """``"the phase difference low - high at 3 kHz changes by +10.4 deg; the sum's level by
    up to -2.31 dB (at 2.95 kHz)"``."""
    parts = [f"the phase difference {c.bands[0]} - {c.bands[1]} at {format_hz(c.freq_hz)} "
             f"changes by {c.change_deg:+.1f} deg" for c in e.crossings]
    lead = "; ".join(parts)
    level = (f"the sum's level by up to {e.sum_change_db:+.2f} dB "
             f"(at {format_hz(e.at_hz)})")
    return f"{lead}; {level}" if lead else f"it changes {level}"


def fraction_warnings(report: Report) -> list[Warning_]:
    """A warning per active band whose delay is not a whole number of samples.

    Each says what rounding that band's delay alone to the nearest sample
    would cost (:func:`rounding_effect`): the change of the phase difference
    at each checked crossing it takes part in, and the largest change of the
    sum's level over the analysis range.
    """
    p = report.project
    fs = float(p.sample_rate)
    out = []
    for i, (d, on) in enumerate(zip(report.designs, report.active)):
        if not on or not is_fractional(d.delay_samples):
            continue
        delays = [x.delay_samples for x in report.designs]
        delays[i] = float(nearest_whole(d.delay_samples))
        e = rounding_effect(report, delays)
        out.append(Warning_(
            f"band {p.bands[i].name}: its delay, {_num(d.delay_samples)} samples at {fs:g} Hz, "
            f"is not a whole number of samples; rounded to {nearest_whole(d.delay_samples)}, "
            f"{effect_text(e)}: the DSP must apply the fraction (render and the WAV export do)",
            band=i, code="fractional-delay"))
    return out


def run_notes(report: Report, plan: DelayPlan) -> list[str]:
    """Lines saying how a run (render, WAV export) made its fractional delays, at one rate."""
    fs = float(report.project.sample_rate)
    names = [b.name for b in report.project.bands]
    idx = plan.fractional
    if not idx:
        return []
    if plan.mode == "apply":
        d = plan.design
        which = ", ".join(f"{names[i]} {_num(fraction_of(plan.bands[i].delay_samples))}"
                          for i in idx)
        m = plan.added_latency_samples
        return [f"at {fs:g} Hz fractional delays are applied by a {d.taps}-tap "
                f"Kaiser-windowed sinc (fraction in samples: {which}); every band is "
                f"{m} samples ({1000.0 * m / fs:.4g} ms) later than its delay_ms"]
    which = ", ".join(f"{names[i]} {_num(plan.bands[i].delay_samples)} -> "
                      f"{plan.bands[i].whole_samples}" for i in idx)
    e = rounding_effect(report, plan.rounded_delays)
    return [f"at {fs:g} Hz delays are rounded to the nearest sample ({which} samples): "
            f"{effect_text(e)}"]


def exact_notes(report: Report) -> list[str]:
    """Lines for coefficient files, which hold the exact ``delay_samples``, at one rate."""
    fs = float(report.project.sample_rate)
    plan = plan_delays([d.delay_samples for d in report.designs], "round")
    idx = plan.fractional
    if not idx:
        return []
    which = ", ".join(f"{report.project.bands[i].name} {_num(plan.bands[i].delay_samples)}"
                      for i in idx)
    e = rounding_effect(report, plan.rounded_delays)
    return [f"at {fs:g} Hz delay_samples is written exactly ({which}): the DSP must apply "
            f"the fraction; rounded to the nearest sample, {effect_text(e)}"]
