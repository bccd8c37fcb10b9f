"""What rounding a band's fractional delay to whole samples costs, in the plain words of a note.

See :mod:`planner.engine.delays` for how runs make fractional delays; here
the effect of rounding instead, measured by evaluating the bands again with
the delays rounded (vectorised): the change of the phase difference at each
checked crossing and the largest change of the sum's level.

References
----------
.. [1] A. V. Oppenheim and R. W. Schafer, "Discrete-Time Signal Processing",
   3rd ed., 2010, sec. 2.7 (a delay of ``d`` samples is ``e^{-jwd}``).
"""

from __future__ import annotations

from dataclasses import dataclass, replace
from typing import Sequence

import numpy as np

from planner.dsp import analysis as an
from planner.dsp.fracdelay import nearest_whole
from planner.engine.delays import DelayPlan, fraction_of, is_fractional, plan_delays
from planner.engine.design import evaluate
from planner.engine.result import Report, Warning_
from planner.units import format_hz

__all__ = ["LEVEL_FLOOR_DB", "CrossingShift", "RoundingEffect", "rounding_effect",
           "effect_text", "fraction_warnings", "run_notes", "exact_notes"]


#: Levels of the sum below this (dB) count as this when a level change is
#: measured, so that a null of the sum does not read as hundreds of dB.
LEVEL_FLOOR_DB = -100.0


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
    (:func:`planner.engine.evaluate` with the new delays, times the drivers
    in an acoustic report) and the phase difference taken again. All of it vectorised over frequency.
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
        if report.drivers is not None:          # the acoustic responses: drivers too
            hv = hv * report.drivers.all_bands(fc)
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
