"""The coefficient files (JSON, CSV, text), a band's impulse response for WAV, and the
arithmetic lines of each rate.

The coefficient convention of every file: each section is
``[b0, b1, b2, a1, a2]`` with ``a0 = 1`` and the transfer function
``(b0 + b1 z^-1 + b2 z^-2) / (1 + a1 z^-1 + a2 z^-2)``, i.e. the recursion
``y[n] = b0 x[n] + b1 x[n-1] + b2 x[n-2] - a1 y[n-1] - a2 y[n-2]``. With
``negate_feedback`` the files hold ``-a1, -a2`` instead (for engines that
add the feedback terms) and say so. A section with a post-shift ``k`` holds
its coefficients divided by ``2**k``; the DSP shifts the section's
accumulator left by ``k`` bits. A band's output is
``gain * scale * polarity * chain(x)`` delayed by ``delay_samples``.
"""

from __future__ import annotations

import csv
import io
import math

import numpy as np

from planner.defaults import EXPORT_FORMATS
from planner.dsp import fixed as qz
from planner.engine.delays import BandDelay
from planner.export.rate import BandExport, RateExport, rate_value
from planner.export.recheck import MAX_DEVIATION_DB, ArithResult, shown_against
from planner.timeresp import IMPULSE_FLOOR_DB, chain_impulse
from planner.units import format_hz

__all__ = ["FORMAT", "VERSION", "FORMATS", "WAV_FLOOR_DB", "to_json_dict", "to_csv_text",
           "to_text", "band_impulse_response", "arith_text", "arith_dict", "five_coefficients",
           "denominator_text", "coefficient_repr"]


FORMAT = "crossplan-coefficients"


VERSION = 1


FORMATS = EXPORT_FORMATS


#: Tail floor of the WAV impulse responses, dB below the peak (the issue's -150 dB).
WAV_FLOOR_DB = IMPULSE_FLOOR_DB


def five_coefficients(sos: np.ndarray, negate: bool) -> np.ndarray:
    """Rows ``[b0, b1, b2, a1, a2]`` (a1, a2 negated when asked)."""
    five = sos[:, [0, 1, 2, 4, 5]].copy()
    if negate:
        five[:, 3:] *= -1.0
    return five


def denominator_text(negate: bool) -> str:
    return "1 - a1 z^-1 - a2 z^-2" if negate else "1 + a1 z^-1 + a2 z^-2"


def to_json_dict(rx: RateExport, negate_feedback: bool = False) -> dict:
    """The JSON contract at one rate (``crossplan-coefficients``, version 1).

    ``biquads`` hold ``[b0, b1, b2, a1, a2]`` as stored; the extra keys are
    ``arith``, ``sections``, ``denominator``, ``negated_feedback`` and, per
    band, ``scale``, ``post_shifts``, ``section_filters``, ``filters``,
    ``numerator_shifts`` (always zeros: superseded by ``post_shifts``),
    ``pre_attenuation_db`` and ``peak_internal_gain_db``.
    """
    bands = []
    for b in rx.bands:
        bands.append({
            "name": b.name, "gain_db": b.gain_db, "delay_samples": b.delay_samples,
            "invert": b.invert,
            "biquads": five_coefficients(b.stored_sos, negate_feedback).tolist(),
            "fir": None if b.stored_fir is None else b.stored_fir.tolist(),
            "scale": b.scale, "post_shifts": list(b.shifts),
            "section_filters": b.section_filters,
            "filters": [{"index": j, "label": t} for j, t in sorted(b.filter_labels.items())],
            "numerator_shifts": [0] * len(b.stored_sos),
            "pre_attenuation_db": b.pre_attenuation_db,
            "peak_internal_gain_db": b.peak_internal_gain_db,
        })
    return {"format": FORMAT, "version": VERSION, "sample_rate": rate_value(rx.fs_hz),
            "bands": bands, "arith": rx.arith.name, "sections": rx.sections,
            "negated_feedback": bool(negate_feedback),
            "denominator": denominator_text(negate_feedback), "project": rx.project.name}


def coefficient_repr(x: float, arith: qz.Arith | None = None) -> str:
    """A coefficient as text: exact for float64 and fixed point, 9 digits for float32.

    float64 and ``qM.N`` values are written in the shortest form that reads
    back as the same float64 (every ``qM.N`` value with ``M + N <= 53`` is one
    exactly); a float32 value in the shortest form that reads back as the
    same float32 (at most 9 significant digits, IEEE 754), so typing it by
    hand is practical.
    """
    if arith is not None and arith.kind == "float32":
        return repr(float(np.float32(x))) if not np.isfinite(x) else str(np.float32(x))
    return repr(float(x))


def fixed_integer(x: float, arith: qz.Arith) -> int | None:
    """The integer a ``qM.N`` word holds for the value ``x`` (``x * 2^N``), or None.

    None for floating point, or when ``x`` is not a whole number of steps
    ``2^-N`` (it always is for a value the export rounded to that format).
    """
    if arith is None or arith.kind != "fixed" or not np.isfinite(x):
        return None
    n = float(x) * 2.0 ** arith.frac_bits
    return int(n) if n.is_integer() else None


def _coefficient_text(x: float, arith: qz.Arith | None) -> str:
    """``coefficient_repr``, and for ``qM.N`` the stored integer: ``0.25  (268435456 / 2^30)``."""
    t = coefficient_repr(x, arith)
    k = fixed_integer(x, arith)
    return t if k is None else f"{t}  ({k} / 2^{arith.frac_bits})"


def _section_label(b: BandExport, k: int) -> str:
    """``"filter 2: LR4 lowpass 2.2 kHz"`` for section ``k`` (0-based) in per-filter mode."""
    if b.section_filters is None:
        return ""
    j = b.section_filters[k]
    return f"filter {j + 1}: {b.filter_labels.get(j, '')}"


def to_csv_text(rx: RateExport, negate_feedback: bool = False) -> str:
    """CSV: header ``band,item,index,b0,b1,b2,a1,a2,value,post_shift,filter``.

    One ``section`` row per biquad (index from 0; its post-shift, and in
    per-filter mode the 1-based filter number and label of the band's chain
    in ``filter``), one ``fir`` row per tap (tap in ``value``), and per band
    the rows ``gain_db``, ``delay_samples``, ``invert`` (0/1) and ``scale``
    with the value in ``value``. Rows with an empty band give
    ``sample_rate``, ``arith``, ``sections`` and ``negated_feedback``.
    """
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
    w.writerow(["band", "item", "index", "b0", "b1", "b2", "a1", "a2", "value", "post_shift",
                "filter"])
    blank = [""] * 5
    w.writerow(["", "sample_rate", ""] + blank + [coefficient_repr(rx.fs_hz)])
    w.writerow(["", "arith", ""] + blank + [rx.arith.name])
    w.writerow(["", "sections", ""] + blank + [rx.sections])
    w.writerow(["", "negated_feedback", ""] + blank + [int(bool(negate_feedback))])
    for b in rx.bands:
        w.writerow([b.name, "gain_db", ""] + blank + [coefficient_repr(b.gain_db)])
        w.writerow([b.name, "delay_samples", ""] + blank + [coefficient_repr(b.delay_samples)])
        w.writerow([b.name, "invert", ""] + blank + [int(b.invert)])
        w.writerow([b.name, "scale", ""] + blank + [coefficient_repr(b.scale)])
        for k, row in enumerate(five_coefficients(b.stored_sos, negate_feedback)):
            w.writerow([b.name, "section", k] + [coefficient_repr(v, rx.arith) for v in row]
                       + ["", b.shifts[k] if b.shifts else 0, _section_label(b, k)])
        if b.stored_fir is not None:
            for k, t in enumerate(b.stored_fir):
                w.writerow([b.name, "fir", k] + blank + [coefficient_repr(t, rx.arith)])
    return buf.getvalue()


def to_text(rx: RateExport, negate_feedback: bool = False) -> str:
    """A readable block per band, for entering coefficients into a DSP by hand."""
    lines = [f"# crossplan coefficients: {rx.project.name}",
             f"# sample rate {rx.fs_hz:g} Hz, coefficients in {rx.arith.name}, "
             f"sections {rx.sections}",
             f"# each section: (b0 + b1 z^-1 + b2 z^-2) / ({denominator_text(negate_feedback)})",
             "# a section with a post-shift k holds its coefficients / 2^k: shift its "
             "accumulator left by k bits",
             "# band output = gain * scale * polarity * sections (in order) [* fir], "
             "delayed by delay_samples"]
    if rx.arith.kind == "fixed":
        lines.append(f"# each coefficient: its exact value, then (the integer word / 2^"
                     f"{rx.arith.frac_bits}) as a {rx.arith.name} DSP stores it")
    elif rx.arith.kind == "float32":
        lines.append("# each coefficient: the shortest decimal that reads back as the same "
                     "float32 (at most 9 significant digits)")
    else:
        lines.append("# each coefficient: the shortest decimal that reads back as the same "
                     "float64 (at most 17 significant digits)")
    lines.append("")
    for b in rx.bands:
        lines.append(f"band {b.name}")
        lines.append(f"  gain_db        {coefficient_repr(b.gain_db)}"
                     + (f"  (includes {b.pre_attenuation_db:.2f} dB pre-attenuation)"
                        if b.pre_attenuation_db else ""))
        lines.append(f"  delay_samples  {coefficient_repr(b.delay_samples)}")
        lines.append(f"  polarity       {'inverted' if b.invert else 'normal'}")
        lines.append(f"  scale          {coefficient_repr(b.scale)}")
        for k, row in enumerate(five_coefficients(b.stored_sos, negate_feedback)):
            label = _section_label(b, k)
            shift = b.shifts[k] if b.shifts else 0
            lines.append(f"  section {k + 1}" + (f"  ({label})" if label else "")
                         + (f"  post-shift {shift}" if shift else ""))
            lines.extend(f"    {name} = {_coefficient_text(v, rx.arith)}" for name, v in zip(
                ("b0", "b1", "b2", "a1", "a2"), row))
        if b.stored_fir is None:
            lines.append("  fir            none")
        else:
            lines.append(f"  fir            {len(b.stored_fir)} taps")
            lines.extend(f"    {_coefficient_text(t, rx.arith)}" for t in b.stored_fir)
        lines.append("")
    return "\n".join(lines)


def band_impulse_response(b: BandExport, fs_hz: float,
                          delay: BandDelay | None = None) -> tuple[np.ndarray, BandDelay]:
    """A band's impulse response as written to its WAV (and rendered).

    :func:`planner.timeresp.chain_impulse` of the band's sections as they run
    (``scale`` folded in), its FIR taps, gain and polarity, with the tail
    cut below :data:`WAV_FLOOR_DB`.

    Parameters
    ----------
    b : BandExport
    fs_hz : float
    delay : planner.engine.delays.BandDelay, optional
        How the delay runs, from the run's
        :func:`planner.engine.delays.plan_delays` (which aligns the bands of
        one run). Default: the band alone, in ``apply`` mode.

    Returns
    -------
    h : ndarray
    delay : planner.engine.delays.BandDelay
        The delay as made: ``whole_samples`` leading zeros, then the filter
        with ``taps`` (if any) for ``fraction_samples``.
    """
    return chain_impulse(b.run_sos, b.run_fir, b.linear_gain, b.delay_samples, fs_hz, delay,
                         WAV_FLOOR_DB)


def _stage_text(b: BandExport) -> str:
    n = len(b.stored_sos)
    k = b.peak_internal_after
    if not k:
        return ""
    what = f"section {k}" if k <= n else "the FIR" if k == n + 1 else "scale"
    return f" after {what} near {format_hz(b.peak_internal_at_hz)}"


def _deviation_text(r: ArithResult) -> str:
    if r.deviation_db is None:
        return "deviation not evaluated"
    at = f" at {format_hz(r.deviation_at_hz)}" if math.isfinite(r.deviation_at_hz) else ""
    if r.deviation_db == 0:          # the rounded band is the design: no place to name
        text = f"no deviation within {r.range_db:g} dB of the peak"
    else:
        text = (f"deviation {shown_against(r.deviation_db, MAX_DEVIATION_DB)} dB{at} within "
                f"{r.range_db:g} dB of the peak")
    if r.floor_error_db is not None and math.isfinite(r.floor_error_db):
        if r.floor_error_db <= _NO_ERROR_DB:
            text += ", no error below it"
        else:
            text += f", error {shown_against(r.floor_error_db, r.floor_db)} dB re peak below it"
    return text


#: An error this far below the peak (dB) is none at all: below the resolution of float64
#: (2^-52, about -313 dB); a band that rounds to itself reads the floor of the dB function.
_NO_ERROR_DB = -400.0


def arith_text(rx: RateExport) -> list[str]:
    """Lines per band: the rounding result for the target, and the peak internal gain.

    The figures are those of :func:`arith_dict` (and the manifest), shown with
    enough digits that a figure never reads as equal to a limit it fails.
    """
    out = [f"arithmetic {rx.arith.name} at {rx.fs_hz:g} Hz, sections {rx.sections}"]
    for b in rx.bands:
        r = b.arith
        state = "ok  " if r.ok else "FAIL"
        shifted = [f"{i + 1}:<<{s}" for i, s in enumerate(r.shifts) if s]
        out.append(
            f"  {state} {b.name}: max coefficient error {r.max_coef_error:.3g}, "
            f"{_deviation_text(r)}, min stability margin {r.stability_margin:.3g} "
            f"(largest pole radius {1 - r.stability_margin:.9g})")
        out.append(
            f"       overflow: {', '.join(map(str, r.overflow_sections)) or 'none'}; "
            f"post-shifts: {', '.join(shifted) or 'none'}"
            + (f"; scale x{b.scale:.6g}" if b.scale != 1 else "")
            + f"; peak internal gain {round(b.peak_internal_gain_db, 2) + 0.0:+.2f} dB"
            + _stage_text(b)
            + (f"; pre-attenuated {b.pre_attenuation_db:.2f} dB" if b.pre_attenuation_db else ""))
        if not r.ok:
            where = f"section {r.failed_section}" if r.failed_section else "its FIR"
            out.append(f"       band {b.name!r}, {where}: {rx.arith.name} cannot hold the design "
                       f"at {rx.fs_hz:g} Hz: {r.reason}")
            out.extend(f"       try: {s}" for s in r.suggestions)
    return out


def arith_dict(rx: RateExport) -> dict:
    """The JSON form of :func:`arith_text` (``crossplan check --arith --json``)."""
    return {"format": rx.arith.name, "sample_rate": rate_value(rx.fs_hz), "ok": rx.arith_ok,
            "sections": rx.sections,
            "bands": [{"name": b.name, "peak_internal_gain_db": b.peak_internal_gain_db,
                       "peak_internal_at_hz": b.peak_internal_at_hz, "scale": b.scale,
                       **b.arith.to_dict()} for b in rx.bands]}
