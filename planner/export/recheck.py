"""The written coefficients of a band against the design ``check`` analysed.

The laid-out sections are rounded to the target number format
(:func:`planner.dsp.fixed.quantize_sos`, with a post-shift per section
where a fixed-point word cannot hold them) and their response is compared
with the very design ``check`` analysed, never with an intermediate of the
export: nothing is written that differs from what was checked by more than
:data:`MAX_DEVIATION_DB` where the response matters
(:func:`planner.dsp.fixed.judge_deviation`).

References
----------
.. [1] A. V. Oppenheim and R. W. Schafer, "Discrete-Time Signal Processing",
   3rd ed., Prentice Hall, 2010, sec. 6.7 (coefficient quantisation), 6.9
   (scaling for overflow).
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from planner import engine
from planner.dsp import fixed as qz
from planner.dsp.response import band_responses
from planner.units import format_hz

__all__ = ["MAX_DEVIATION_DB", "RANGE_DB", "ERROR_FLOOR_DB", "RECHECK_POINTS", "ArithResult",
           "quantize_and_recheck", "shown_against", "peak_internal", "recheck_grid"]


#: Largest magnitude deviation (dB) of the written coefficients from the
#: design ``check`` analysed, judged where the design is within RANGE_DB of
#: the band's peak; deeper down the magnitude error must stay ERROR_FLOOR_DB
#: below the peak (see :func:`planner.dsp.fixed.judge_deviation`). The
#: same values as the defaults of :func:`planner.dsp.fixed.suggest_fixes`;
#: common practice, no published source.
MAX_DEVIATION_DB = 0.1


RANGE_DB = 40.0


ERROR_FLOOR_DB = -80.0


#: Log-spaced points of the arithmetic re-check, beside the analysis grid's own: the
#: verdict must not depend on how coarse a project's analysis.points is.
RECHECK_POINTS = 4096


def recheck_grid(report: engine.Report) -> np.ndarray:
    """The check's grid (its filter and feature frequencies) plus a dense log grid."""
    a = report.project.analysis
    return np.unique(np.concatenate([report.freqs_hz,
                                     np.geomspace(a.f_min, a.f_max, RECHECK_POINTS)]))


@dataclass
class ArithResult:
    """A band as written, compared with the design ``check`` analysed.

    Section numbers are 1-based, in the exported order. ``deviation_db`` is
    judged within ``range_db`` of the band's peak and ``floor_error_db``
    below it (:func:`planner.dsp.fixed.judge_deviation`); both are None
    when a section cannot be held (overflow, saturation or instability make
    a frequency response meaningless), and ``reason`` then says why.
    """

    arith: str
    max_coef_error: float
    deviation_db: float | None
    deviation_at_hz: float | None
    floor_error_db: float | None
    floor_at_hz: float | None
    range_db: float
    floor_db: float
    pole_radius: list
    stability_margin: float
    overflow_sections: list
    saturated_sections: list
    unstable_sections: list
    shifts: list
    fir_saturated: bool
    ok: bool
    failed_section: int | None = None
    reason: str = ""
    suggestions: list = field(default_factory=list)

    def to_dict(self) -> dict:
        return {k: getattr(self, k) for k in (
            "arith", "ok", "max_coef_error", "deviation_db", "deviation_at_hz",
            "floor_error_db", "floor_at_hz", "range_db", "floor_db", "pole_radius",
            "stability_margin", "overflow_sections", "saturated_sections", "unstable_sections",
            "shifts", "fir_saturated", "failed_section", "reason", "suggestions")}


def _quantize_fir(taps: np.ndarray, a: qz.Arith):
    """Round FIR taps, shifting them right by a power of two where they do not fit."""
    shift = 0
    if a.kind == "fixed":
        while not np.all(a.holds(taps / 2.0 ** shift)):
            shift += 1
    q, sat = a.quantize(taps / 2.0 ** shift)
    return q, shift, bool(sat.any())


def quantize_and_recheck(d: engine.BandDesign, laid: np.ndarray, scale: float, a: qz.Arith,
           freqs: np.ndarray, fs: float):
    """Round a band's laid-out sections to ``a`` and compare them with the design ``d``.

    Returns (ArithResult, stored_sos, shifts, stored_fir, scale).
    """
    n = len(laid)
    stored, shifts = laid.copy(), np.zeros(n, dtype=int)
    radius = np.zeros(n)
    overflow, saturated = np.zeros(n, bool), np.zeros(n, bool)
    err = 0.0
    eff = laid.copy()
    if n:
        q = qz.quantize_sos(laid, a)
        stored, shifts, eff = q.sos, q.shifts, q.effective_sos
        radius, overflow, saturated = q.pole_radius, q.overflow, q.saturated
        err = q.max_coef_error
    stored_fir, fir_sat, eff_fir = None, False, None
    if d.fir is not None:
        fir = np.asarray(d.fir, float)
        qf, fshift, fir_sat = _quantize_fir(fir, a)
        stored_fir = qf
        scale *= 2.0 ** fshift
        eff_fir = qf * 2.0 ** fshift
        err = max(err, float(np.max(np.abs(eff_fir - fir))))
    unstable = radius >= 1.0
    bad = overflow | saturated | unstable
    dev = None
    if not bad.any():
        # The reference is the very design check analysed (its sections and taps).
        ref = band_responses([d.sos], freqs, fs, firs=[d.fir]).h[0]
        got = band_responses([eff], freqs, fs, firs=[eff_fir]).h[0] * scale
        dev = qz.judge_deviation(ref, got, freqs, RANGE_DB, ERROR_FLOOR_DB)
    res = ArithResult(
        arith=a.name, max_coef_error=float(err),
        deviation_db=None if dev is None else dev.in_range_db,
        deviation_at_hz=None if dev is None else dev.in_range_at_hz,
        floor_error_db=None if dev is None else dev.floor_error_db,
        floor_at_hz=None if dev is None else dev.floor_at_hz,
        range_db=RANGE_DB, floor_db=ERROR_FLOOR_DB,
        pole_radius=[float(r) for r in radius],
        stability_margin=float(1.0 - radius.max()) if n else 1.0,
        overflow_sections=[int(i) + 1 for i in np.flatnonzero(overflow)],
        saturated_sections=[int(i) + 1 for i in np.flatnonzero(saturated & ~overflow)],
        unstable_sections=[int(i) + 1 for i in np.flatnonzero(unstable)],
        shifts=[int(s) for s in shifts], fir_saturated=fir_sat,
        ok=bool(dev is not None and not fir_sat and dev.ok(MAX_DEVIATION_DB)))
    if res.ok:
        return res, stored, shifts, stored_fir, scale
    if bad.any():
        i = int(np.flatnonzero(bad)[0])
        c = laid[i, [0, 1, 2, 4, 5]]
        big = c[np.argmax(np.abs(c))]
        why = (f"a coefficient ({big:.6g}) needs a post-shift of more than "
               f"{a.word_bits - 1} bits" if overflow[i]
               else f"a coefficient ({big:.6g}) saturated at the format's range "
                    f"[{a.min_value:g}, {a.max_value:.6g}]" if saturated[i]
               else f"rounding moved a pole to radius {radius[i]:.9g}, on or outside the "
                    "unit circle: the section is unstable")
        res.failed_section, res.reason = i + 1, why + " (the response was not evaluated)"
    elif fir_sat:
        res.reason = "an FIR tap saturated at the format's range"
    else:
        res.failed_section = _worst_section(laid, eff, freqs, fs)
        if dev.in_range_db > MAX_DEVIATION_DB:
            res.reason = (f"the response deviates by {shown_against(dev.in_range_db, MAX_DEVIATION_DB)}"
                          f" dB at {format_hz(dev.in_range_at_hz)} (limit {MAX_DEVIATION_DB:g}"
                          f" dB within {RANGE_DB:g} dB of the band's peak)")
        else:
            res.reason = (f"the error reaches {shown_against(dev.floor_error_db, ERROR_FLOOR_DB)} dB "
                          f"re the band's peak at {format_hz(dev.floor_at_hz)} (limit "
                          f"{ERROR_FLOOR_DB:g} dB more than {RANGE_DB:g} dB below the peak)")
    if n:
        res.suggestions = qz.suggest_fixes(laid, a, fs, freqs, MAX_DEVIATION_DB, RANGE_DB,
                                           ERROR_FLOOR_DB)
    return res, stored, shifts, stored_fir, scale


def _worst_section(laid: np.ndarray, eff: np.ndarray, freqs: np.ndarray, fs: float):
    """1-based index of the section whose own rounding moves the response most (None if none)."""
    if not len(laid):
        return None
    per = [qz.response_deviation_db(laid[i:i + 1], eff[i:i + 1], freqs, fs,
                                    floor_db=-RANGE_DB)[0] for i in range(len(laid))]
    return int(np.argmax(per)) + 1


def shown_against(value: float, limit: float, digits: int = 3) -> str:
    """``value`` with enough digits that it reads on the same side of ``limit`` as it is.

    ``0.1004`` against a limit of 0.1 is shown as ``0.1004``, not ``0.1``, so a
    figure never reads as equal to the limit it fails (or passes).
    """
    for k in range(digits, 12):
        text = f"{value:.{k}g}"
        shown = float(text)
        if (shown > limit) == (value > limit) and (shown == limit) == (value == limit):
            return text
    return repr(float(value))


def peak_internal(b_eff: np.ndarray, stored_fir, scale: float, freqs: np.ndarray, fs: float):
    """Highest level inside the band before its gain: (dB, Hz, stage).

    The stages are the output of each section (1..n, as the DSP runs them),
    then of the FIR (n + 1) and of ``scale`` (n + 2), where the band has them.
    """
    stages: list[tuple[float, float, int]] = []
    n = len(b_eff)
    if n:
        p = qz.peak_internal_gain_db(b_eff, freqs, fs)
        stages += [(float(g), float(f), k + 1) for k, (g, f) in enumerate(zip(p.gain_db, p.at_hz))]
    if stored_fir is not None or (scale != 1.0 and n):
        h = np.abs(band_responses([b_eff], freqs, fs, firs=[stored_fir]).h[0])
        if stored_fir is not None:
            k = int(np.argmax(h))
            stages.append((20 * np.log10(max(h[k], 1e-300)), float(freqs[k]), n + 1))
        if scale != 1.0:
            k = int(np.argmax(h))
            stages.append((20 * np.log10(max(h[k] * abs(scale), 1e-300)), float(freqs[k]), n + 2))
    if not stages:
        return 0.0, float("nan"), 0
    # The first stage that reaches the peak (a scale of 1 + 1e-15 adds no stage of its own).
    return max(stages, key=lambda s: round(s[0], 9))
