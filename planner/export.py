"""Export: each band's coefficients at each sample rate, proved in the target arithmetic.

For every requested rate the project is redesigned at that rate (each
filter's parameters are checked there first, so a filter at or above the
rate's Nyquist frequency is refused by name), the sections of each band are
re-paired and re-ordered as :func:`scipy.signal.zpk2sos` does
(:func:`planner.dsp.quantize.order_sections`), rounded to the target number
format (:func:`planner.dsp.quantize.quantize_sos`) and analysed again with the
rounded values. Files are written per rate (JSON, CSV, text or one WAV
impulse response per band) and one manifest per export ties them to the
project's content hash and to the check results at each rate.

The coefficient convention of every file: each section is
``[b0, b1, b2, a1, a2]`` with ``a0 = 1`` and the transfer function
``(b0 + b1 z^-1 + b2 z^-2) / (1 + a1 z^-1 + a2 z^-2)``, i.e. the recursion
``y[n] = b0 x[n] + b1 x[n-1] + b2 x[n-2] - a1 y[n-1] - a2 y[n-2]``. With
``negate_feedback`` the files hold ``-a1, -a2`` instead (for engines that
add the feedback terms) and say so. A band's output is
``gain * scale * polarity * chain(x)`` delayed by ``delay_samples``, where
``scale`` (a power of two, 1 unless numerators were shifted to fit a
fixed-point format) undoes the numerator shifts.

References
----------
.. [1] A. V. Oppenheim and R. W. Schafer, "Discrete-Time Signal Processing",
   3rd ed., Prentice Hall, 2010, sec. 6.3 (cascade form), 6.7 (coefficient
   quantisation), 6.9 (scaling for overflow).
.. [2] L. B. Jackson, "Digital Filters and Signal Processing", 3rd ed.,
   Kluwer, 1996, sec. 11.3-11.4 (scaling, pairing and ordering of sections).
.. [3] FIPS PUB 180-4, "Secure Hash Standard", NIST, 2015 (SHA-256).
"""

from __future__ import annotations

import csv
import hashlib
import io
import json
import math
import re
from dataclasses import dataclass, field, replace
from datetime import datetime, timezone
from pathlib import Path
from typing import Sequence

import numpy as np

from planner import __version__, engine, filters as fk, project as pj
from planner.cli.check import _finite
from planner.defaults import EXPORT_FORMATS
from planner.dsp import quantize as qz
from planner.dsp.response import band_responses
from planner.dsp.signals import fft_convolve, truncate_iir_impulse
from planner.errors import CrossplanError, ExportError, ProjectError
from planner.model import Project

__all__ = [
    "FORMAT", "VERSION", "MANIFEST_FORMAT", "FORMATS", "MAX_DEVIATION_DB", "FLOOR_DB",
    "WAV_FLOOR_DB", "ArithResult", "BandExport", "RateExport", "ExportResult",
    "content_hash", "slug", "rate_text", "project_at_rate", "export_rate", "to_json_dict",
    "to_csv_text", "to_text", "band_impulse_response", "arith_text", "arith_dict",
    "write_export",
]

FORMAT = "crossplan-coefficients"
VERSION = 1
MANIFEST_FORMAT = "crossplan-export-manifest"
FORMATS = EXPORT_FORMATS

#: Largest magnitude deviation (dB) of the rounded design from the float64
#: design that still counts as holding it, above FLOOR_DB. The same values
#: as the defaults of :func:`planner.dsp.quantize.suggest_fixes`; 0.1 dB is
#: common practice, no published source.
MAX_DEVIATION_DB = 0.1
FLOOR_DB = -100.0
#: Tail floor of the WAV impulse responses, dB below the peak (the issue's -150 dB).
WAV_FLOOR_DB = -150.0


def slug(text: str) -> str:
    """Lower-case ASCII letters, digits and dashes, for file names (``'project'`` if empty)."""
    s = re.sub(r"[^a-z0-9]+", "-", text.lower()).strip("-")
    return s or "project"


def rate_text(fs_hz: float) -> str:
    """A rate as written in file names: ``48000``, ``44100``, ``22050.5`` as ``22050p5``."""
    return str(int(fs_hz)) if float(fs_hz).is_integer() else repr(float(fs_hz)).replace(".", "p")


def _rate_value(fs_hz: float):
    return int(fs_hz) if float(fs_hz).is_integer() else float(fs_hz)


def content_hash(project: Project) -> str:
    """``'sha256:<hex>'`` of the project's canonical JSON (sorted keys, no blanks, UTF-8).

    The canonical JSON is :func:`planner.project.to_dict` written with
    ``sort_keys=True`` and separators ``(',', ':')``, so formatting and key
    order of the file on disk do not change it; any value that changes the
    design does (SHA-256, FIPS 180-4).
    """
    text = json.dumps(pj.to_dict(project), sort_keys=True, separators=(",", ":"),
                      ensure_ascii=False, default=list)
    return "sha256:" + hashlib.sha256(text.encode("utf-8")).hexdigest()


def _check_rate(fs_hz) -> float:
    if isinstance(fs_hz, bool) or not isinstance(fs_hz, (int, float)) \
            or not math.isfinite(fs_hz) or not 1000 <= fs_hz <= 1_536_000:
        raise ExportError(f"{fs_hz!r} Hz is not a sample rate crossplan exports "
                          "(1000 .. 1536000 Hz)", field="rate")
    return float(fs_hz)


def project_at_rate(project: Project, fs_hz: float) -> Project:
    """The project redesigned at ``fs_hz``: every live filter checked and designed there.

    Raises
    ------
    ProjectError
        Naming the band and the filter, e.g. a filter at or above Nyquist at
        this rate, or raw biquads made for another rate.
    ExportError
        A rate outside 1000 .. 1536000 Hz, or one whose Nyquist frequency
        is at or below the analysis range's ``f_min``.
    """
    fs = _check_rate(fs_hz)
    for i, b in enumerate(project.bands):
        for j, f in enumerate(b.filters):
            if f.bypass:
                continue
            try:
                fk.check_params(f.kind, dict(f.params), fs)
                engine.design_filter(f, fs)
            except CrossplanError as e:
                sub = f".{e.field}" if e.field else ""
                raise ProjectError(f"band {b.name!r}, filter {j + 1} ({f.label()}) at {fs:g} Hz: "
                                   f"{e.message}", field=f"bands[{i}].filters[{j}]{sub}") from None
    a = project.analysis
    f_max = min(a.f_max, fs / 2)
    if f_max <= a.f_min:
        raise ExportError(f"{fs:g} Hz has its Nyquist frequency ({fs / 2:g} Hz) at or below "
                          f"analysis.f_min ({a.f_min:g} Hz)", field="rate")
    return replace(project, sample_rate=_rate_value(fs),
                   analysis=replace(a, f_max=float(f_max)))


@dataclass
class ArithResult:
    """A band re-analysed with its coefficients rounded to the target format.

    Section numbers are 1-based, in the exported order.
    """

    arith: str
    max_coef_error: float
    deviation_db: float
    deviation_at_hz: float
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
            "arith", "ok", "max_coef_error", "deviation_db", "deviation_at_hz", "pole_radius",
            "stability_margin", "overflow_sections", "saturated_sections", "unstable_sections",
            "shifts", "fir_saturated", "failed_section", "reason", "suggestions")}


@dataclass
class BandExport:
    """One band as exported at one rate.

    Attributes
    ----------
    sos : ndarray, shape (n, 6)
        The float64 design, re-paired and re-ordered (the reference).
    stored_sos : ndarray, shape (n, 6)
        What the files hold: rounded to the format, numerators shifted.
    scale : float
        Linear factor after the chain that undoes the shifts (power of two).
    fir, stored_fir : ndarray or None
        FIR taps of the design, and as stored (rounded, shifted).
    gain_db : float
        Band gain written to the files (pre-attenuation included).
    pre_attenuation_db : float
        What ``pre_attenuate`` took off ``gain_db`` (0 when not asked).
    peak_internal_gain_db, peak_internal_at_hz : float
        Highest level inside the stored chain for a full-scale sine
        (:func:`planner.dsp.quantize.peak_internal_gain_db`, FIR output
        included), and where.
    peak_internal_after : int
        After which section (1-based; ``n + 1`` means after the FIR).
    """

    name: str
    active: bool
    design_gain_db: float
    gain_db: float
    pre_attenuation_db: float
    delay_samples: float
    invert: bool
    sos: np.ndarray
    stored_sos: np.ndarray
    scale: float
    fir: np.ndarray | None
    stored_fir: np.ndarray | None
    peak_internal_gain_db: float
    peak_internal_at_hz: float
    peak_internal_after: int
    arith: ArithResult

    @property
    def run_sos(self) -> np.ndarray:
        """The stored sections with ``scale`` folded into the first numerator (what runs)."""
        s = self.stored_sos.copy()
        if len(s):
            s[0, :3] *= self.scale
        return s

    @property
    def run_fir(self) -> np.ndarray | None:
        """The stored taps, times ``scale`` when the band has no sections."""
        if self.stored_fir is None:
            return None
        return self.stored_fir * (self.scale if not len(self.stored_sos) else 1.0)

    @property
    def linear_gain(self) -> float:
        """``10**(gain_db / 20)``, negated when the polarity is inverted."""
        return (-1.0 if self.invert else 1.0) * 10.0 ** (self.gain_db / 20.0)


@dataclass
class RateExport:
    """Everything exported at one rate."""

    fs_hz: float
    project: Project
    report: engine.Report
    bands: list[BandExport]
    arith: qz.Arith

    @property
    def arith_ok(self) -> bool:
        return all(b.arith.ok for b in self.bands)


def _quantize_fir(taps: np.ndarray, a: qz.Arith):
    """Round FIR taps, shifting them right by a power of two where they do not fit."""
    shift = 0
    if a.kind == "fixed":
        while not np.all(a.holds(taps / 2.0 ** shift)):
            shift += 1
    q, sat = a.quantize(taps / 2.0 ** shift)
    return q, shift, bool(sat.any())


def _arith(sos: np.ndarray, fir, a: qz.Arith, freqs: np.ndarray, fs: float):
    """Round a band to ``a`` and re-analyse it. Returns (ArithResult, stored_sos, stored_fir, scale)."""
    n = len(sos)
    stored, shifts, scale = sos.copy(), np.zeros(n, dtype=int), 1.0
    radius, overflow, saturated = np.zeros(n), np.zeros(n, bool), np.zeros(n, bool)
    err = 0.0
    if n:
        q = qz.quantize_sos(sos, a)
        stored, shifts, scale = q.sos, q.shifts, q.gain
        radius, overflow, saturated, err = q.pole_radius, q.overflow, q.saturated, q.max_coef_error
    stored_fir, fir_sat = None, False
    if fir is not None:
        qf, fshift, fir_sat = _quantize_fir(np.asarray(fir, float), a)
        stored_fir = qf
        scale *= 2.0 ** fshift
        err = max(err, float(np.max(np.abs(qf * 2.0 ** fshift - fir))))
    ref = band_responses([sos], freqs, fs, firs=[fir]).h[0]
    eff = stored.copy()
    if n:
        eff[:, :3] *= (2.0 ** shifts)[:, None]
    eff_fir = None if stored_fir is None else stored_fir * (scale / 2.0 ** shifts.sum())
    got = band_responses([eff], freqs, fs, firs=[eff_fir]).h[0]
    ref_db = 20 * np.log10(np.maximum(np.abs(ref), 1e-300))
    dev = np.where(ref_db >= FLOOR_DB,
                   np.abs(20 * np.log10(np.maximum(np.abs(got), 1e-300)) - ref_db), -np.inf)
    k = int(np.argmax(dev))
    dev_db, dev_at = (float(dev[k]), float(freqs[k])) if np.isfinite(dev[k]) else (0.0, float("nan"))
    unstable = radius >= 1.0
    bad = overflow | saturated | unstable
    res = ArithResult(
        arith=a.name, max_coef_error=float(err), deviation_db=dev_db, deviation_at_hz=dev_at,
        pole_radius=[float(r) for r in radius],
        stability_margin=float(1.0 - radius.max()) if n else 1.0,
        overflow_sections=[int(i) + 1 for i in np.flatnonzero(overflow)],
        saturated_sections=[int(i) + 1 for i in np.flatnonzero(saturated & ~overflow)],
        unstable_sections=[int(i) + 1 for i in np.flatnonzero(unstable)],
        shifts=[int(s) for s in shifts], fir_saturated=fir_sat,
        ok=bool(not bad.any() and not fir_sat and dev_db <= MAX_DEVIATION_DB))
    if res.ok:
        return res, stored, stored_fir, scale
    if bad.any():
        i = int(np.flatnonzero(bad)[0])
        why = ("a denominator coefficient is outside the format's range" if overflow[i]
               else "a coefficient saturated at the format's range" if saturated[i]
               else f"a pole moved to radius {radius[i]:.9g}, on or outside the unit circle")
        res.failed_section, res.reason = i + 1, why
    elif fir_sat:
        res.reason = "an FIR tap saturated at the format's range"
    else:
        # The chain deviates: name the section whose own rounding deviates most.
        per = [qz.response_deviation_db(sos[i:i + 1], eff[i:i + 1], freqs, fs,
                                        floor_db=FLOOR_DB)[0] for i in range(n)]
        res.failed_section = int(np.argmax(per)) + 1 if n else None
        res.reason = (f"the response deviates by {dev_db:.3g} dB at {dev_at:.4g} Hz "
                      f"(limit {MAX_DEVIATION_DB:g} dB)")
    if n:
        res.suggestions = qz.suggest_fixes(sos, a, fs, freqs, MAX_DEVIATION_DB, FLOOR_DB)
    return res, stored, stored_fir, scale


def _peak_internal(stored: np.ndarray, stored_fir, freqs: np.ndarray, fs: float):
    """Highest level inside the stored chain (dB), where (Hz) and after which stage (1-based)."""
    gains, at = [], []
    if len(stored):
        p = qz.peak_internal_gain_db(stored, freqs, fs)
        gains, at = list(p.gain_db), list(p.at_hz)
    if stored_fir is not None:
        h = np.abs(band_responses([stored], freqs, fs, firs=[stored_fir]).h[0])
        k = int(np.argmax(h))
        gains.append(20 * np.log10(max(h[k], 1e-300)))
        at.append(freqs[k])
    if not gains:
        return 0.0, float("nan"), 0
    k = int(np.argmax(gains))
    return float(gains[k]), float(at[k]), k + 1


def export_rate(project: Project, fs_hz: float, arith: str | qz.Arith = "float64",
                pre_attenuate: bool = False) -> RateExport:
    """Redesign, order, round and re-analyse every band of ``project`` at ``fs_hz``.

    Parameters
    ----------
    project : Project
    fs_hz : float
        Sample rate in Hz.
    arith : str or Arith
        Target coefficient format (``'float64'``, ``'float32'``, ``'qM.N'``).
    pre_attenuate : bool
        Lower each band's exported gain by its peak internal gain (when above
        0 dB) so that no point inside the chain exceeds full scale for a
        full-scale sine at the band's input.

    Returns
    -------
    RateExport
        Per band, the float64 reference, the stored coefficients, the
        :class:`ArithResult` and the peak internal gain; and the check
        report at this rate.
    """
    a = qz.parse_arith(arith) if isinstance(arith, str) else arith
    proj = project_at_rate(project, fs_hz)
    fs = float(proj.sample_rate)
    report = engine.analyse(proj)
    freqs = report.freqs_hz
    bands = []
    for i, (b, d) in enumerate(zip(proj.bands, report.designs)):
        sos = qz.order_sections(d.sos) if len(d.sos) else np.zeros((0, 6))
        fir = None if d.fir is None else np.array(d.fir, dtype=float)
        res, stored, stored_fir, scale = _arith(sos, fir, a, freqs, fs)
        peak, peak_at, after = _peak_internal(stored, stored_fir, freqs, fs)
        att = max(0.0, peak) if pre_attenuate else 0.0
        bands.append(BandExport(
            name=b.name, active=report.active[i], design_gain_db=b.gain_db,
            gain_db=b.gain_db - att, pre_attenuation_db=att, delay_samples=d.delay_samples,
            invert=b.invert, sos=sos, stored_sos=stored, scale=scale, fir=fir,
            stored_fir=stored_fir, peak_internal_gain_db=peak, peak_internal_at_hz=peak_at,
            peak_internal_after=after, arith=res))
    return RateExport(fs, proj, report, bands, a)


# ---------------------------------------------------------------------------
# Writers
# ---------------------------------------------------------------------------

def _feedback(sos: np.ndarray, negate: bool) -> np.ndarray:
    """Rows ``[b0, b1, b2, a1, a2]`` (a1, a2 negated when asked)."""
    five = sos[:, [0, 1, 2, 4, 5]].copy()
    if negate:
        five[:, 3:] *= -1.0
    return five


def _denominator_text(negate: bool) -> str:
    return "1 - a1 z^-1 - a2 z^-2" if negate else "1 + a1 z^-1 + a2 z^-2"


def to_json_dict(rx: RateExport, negate_feedback: bool = False) -> dict:
    """The JSON contract at one rate (``crossplan-coefficients``, version 1).

    ``biquads`` hold ``[b0, b1, b2, a1, a2]`` as stored; the extra keys are
    ``arith``, ``denominator``, ``negated_feedback`` and, per band,
    ``scale`` and ``numerator_shifts``.
    """
    bands = []
    for b in rx.bands:
        bands.append({
            "name": b.name, "gain_db": b.gain_db, "delay_samples": b.delay_samples,
            "invert": b.invert,
            "biquads": _feedback(b.stored_sos, negate_feedback).tolist(),
            "fir": None if b.stored_fir is None else b.stored_fir.tolist(),
            "scale": b.scale, "numerator_shifts": b.arith.shifts,
            "pre_attenuation_db": b.pre_attenuation_db,
            "peak_internal_gain_db": b.peak_internal_gain_db,
        })
    return {"format": FORMAT, "version": VERSION, "sample_rate": _rate_value(rx.fs_hz),
            "bands": bands, "arith": rx.arith.name, "negated_feedback": bool(negate_feedback),
            "denominator": _denominator_text(negate_feedback), "project": rx.project.name}


def _num(x: float) -> str:
    """Shortest text that reads back as the same float64."""
    return repr(float(x))


def to_csv_text(rx: RateExport, negate_feedback: bool = False) -> str:
    """CSV: header ``band,item,index,b0,b1,b2,a1,a2,value``.

    One ``section`` row per biquad (index from 0), one ``fir`` row per tap
    (tap in ``value``), and per band the rows ``gain_db``, ``delay_samples``,
    ``invert`` (0/1) and ``scale`` with the value in ``value``. Rows with an
    empty band give ``sample_rate``, ``arith`` and ``negated_feedback``.
    """
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
    w.writerow(["band", "item", "index", "b0", "b1", "b2", "a1", "a2", "value"])
    blank = [""] * 5
    w.writerow(["", "sample_rate", ""] + blank + [_num(rx.fs_hz)])
    w.writerow(["", "arith", ""] + blank + [rx.arith.name])
    w.writerow(["", "negated_feedback", ""] + blank + [int(bool(negate_feedback))])
    for b in rx.bands:
        w.writerow([b.name, "gain_db", ""] + blank + [_num(b.gain_db)])
        w.writerow([b.name, "delay_samples", ""] + blank + [_num(b.delay_samples)])
        w.writerow([b.name, "invert", ""] + blank + [int(b.invert)])
        w.writerow([b.name, "scale", ""] + blank + [_num(b.scale)])
        for k, row in enumerate(_feedback(b.stored_sos, negate_feedback)):
            w.writerow([b.name, "section", k] + [_num(v) for v in row] + [""])
        if b.stored_fir is not None:
            for k, t in enumerate(b.stored_fir):
                w.writerow([b.name, "fir", k] + blank + [_num(t)])
    return buf.getvalue()


def to_text(rx: RateExport, negate_feedback: bool = False) -> str:
    """A readable block per band, for entering coefficients into a DSP by hand."""
    lines = [f"# crossplan coefficients: {rx.project.name}",
             f"# sample rate {rx.fs_hz:g} Hz, coefficients in {rx.arith.name}",
             f"# each section: (b0 + b1 z^-1 + b2 z^-2) / ({_denominator_text(negate_feedback)})",
             "# band output = gain * scale * polarity * sections (in order) [* fir], "
             "delayed by delay_samples", ""]
    for b in rx.bands:
        lines.append(f"band {b.name}")
        lines.append(f"  gain_db        {_num(b.gain_db)}"
                     + (f"  (includes {b.pre_attenuation_db:.2f} dB pre-attenuation)"
                        if b.pre_attenuation_db else ""))
        lines.append(f"  delay_samples  {_num(b.delay_samples)}")
        lines.append(f"  polarity       {'inverted' if b.invert else 'normal'}")
        lines.append(f"  scale          {_num(b.scale)}")
        for k, row in enumerate(_feedback(b.stored_sos, negate_feedback)):
            lines.append(f"  section {k + 1}")
            lines.extend(f"    {name} = {_num(v)}" for name, v in zip(
                ("b0", "b1", "b2", "a1", "a2"), row))
        if b.stored_fir is None:
            lines.append("  fir            none")
        else:
            lines.append(f"  fir            {len(b.stored_fir)} taps")
            lines.extend(f"    {_num(t)}" for t in b.stored_fir)
        lines.append("")
    return "\n".join(lines)


def band_impulse_response(b: BandExport, fs_hz: float) -> tuple[np.ndarray, int, float]:
    """A band's impulse response as written to its WAV.

    The stored sections (``scale`` folded in) are run by
    :func:`planner.dsp.signals.truncate_iir_impulse` until the tail is below
    :data:`WAV_FLOOR_DB`; an FIR is convolved in exactly; gain and polarity
    are applied; the delay's whole samples are leading zeros. A fractional
    part of the delay cannot be put into a sampled response without
    changing it (it would need an interpolating filter), so it is left out
    and returned for the manifest.

    Returns
    -------
    h : ndarray
    delay_whole : int
        Leading zeros, ``floor(delay_samples)``.
    delay_fraction : float
        ``delay_samples - delay_whole``, in [0, 1), not in ``h``.
    """
    sos, fir = b.run_sos, b.run_fir
    h = truncate_iir_impulse(sos, fs_hz, WAV_FLOOR_DB) if len(sos) else np.ones(1)
    if fir is not None:
        h = fft_convolve(h, fir) if len(h) > 1 else h[0] * fir
    whole = int(math.floor(b.delay_samples))
    h = np.concatenate([np.zeros(whole), b.linear_gain * h])
    return h, whole, float(b.delay_samples - whole)


def arith_text(rx: RateExport) -> list[str]:
    """Lines per band: the rounding result for the target, and the peak internal gain."""
    out = [f"arithmetic {rx.arith.name} at {rx.fs_hz:g} Hz"]
    for b in rx.bands:
        r = b.arith
        state = "ok  " if r.ok else "FAIL"
        at = f" at {fk.format_hz(r.deviation_at_hz)}" if math.isfinite(r.deviation_at_hz) else ""
        scaled = [f"{i + 1}:>>{s}" for i, s in enumerate(r.shifts) if s]
        out.append(
            f"  {state} {b.name}: max coefficient error {r.max_coef_error:.3g}, deviation "
            f"{r.deviation_db:.3g} dB{at}, min stability margin {r.stability_margin:.3g} "
            f"(largest pole radius {1 - r.stability_margin:.9g})")
        out.append(
            f"       overflow: {', '.join(map(str, r.overflow_sections)) or 'none'}; "
            f"scaled numerators: {', '.join(scaled) or 'none'}"
            + (f" (scale x{b.scale:g})" if b.scale != 1 else "")
            + f"; peak internal gain {round(b.peak_internal_gain_db, 2) + 0.0:+.2f} dB"
            + (f" after stage {b.peak_internal_after} near "
               f"{fk.format_hz(b.peak_internal_at_hz)}" if b.peak_internal_after else "")
            + (f"; pre-attenuated {b.pre_attenuation_db:.2f} dB" if b.pre_attenuation_db else ""))
        if not r.ok:
            where = f"section {r.failed_section}" if r.failed_section else "its FIR"
            out.append(f"       band {b.name!r}, {where}: {rx.arith.name} cannot hold the design "
                       f"at {rx.fs_hz:g} Hz: {r.reason}")
            out.extend(f"       try: {s}" for s in r.suggestions)
    return out


def arith_dict(rx: RateExport) -> dict:
    """The JSON form of :func:`arith_text` (``crossplan check --arith --json``)."""
    return {"format": rx.arith.name, "sample_rate": _rate_value(rx.fs_hz), "ok": rx.arith_ok,
            "bands": [{"name": b.name, "peak_internal_gain_db": b.peak_internal_gain_db,
                       "peak_internal_at_hz": b.peak_internal_at_hz, "scale": b.scale,
                       **b.arith.to_dict()} for b in rx.bands]}


def _write_bytes_atomic(path: Path, write) -> None:
    import os
    import tempfile

    fd, tmp = tempfile.mkstemp(prefix=f".{path.name}.", suffix=".tmp", dir=path.parent)
    os.close(fd)
    try:
        write(tmp)
        os.chmod(tmp, 0o644)
        os.replace(tmp, path)
    except BaseException:
        Path(tmp).unlink(missing_ok=True)
        raise


@dataclass
class ExportResult:
    """What :func:`write_export` did."""

    rates: list[RateExport]
    files: list[Path]
    manifest: Path | None
    arith_ok: bool
    checks_ok: bool


def write_export(project: Project, rates: Sequence[float], fmt: str, out_dir,
                 arith: str = "float64", negate_feedback: bool = False,
                 pre_attenuate: bool = False, source: str | None = None) -> ExportResult:
    """Export ``project`` at every rate in one format, with a manifest.

    Files: ``DIR/<project>-<rate>.json|.csv|.txt``, or for ``wav`` one
    ``DIR/<project>-<rate>-<band>.wav`` per band (32-bit float, mono), and
    ``DIR/<project>-manifest.json``. Nothing is written when the target
    arithmetic cannot hold the design at some rate (``arith_ok`` false).

    Raises
    ------
    ExportError
        Unknown format, no rates, a bad rate or format name, an output
        folder that cannot be made.
    ProjectError
        A filter that cannot be made at a rate (named).
    """
    if fmt not in FORMATS:
        raise ExportError(f"must be one of {', '.join(FORMATS)}, not {fmt!r}", field="format")
    if not rates:
        raise ExportError("give at least one sample rate", field="rate")
    a = qz.parse_arith(arith)
    uniq = list(dict.fromkeys(float(_check_rate(r)) for r in rates))
    exports = [export_rate(project, r, a, pre_attenuate) for r in uniq]
    arith_ok = all(rx.arith_ok for rx in exports)
    checks_ok = all(rx.report.ok for rx in exports)
    if not arith_ok:
        return ExportResult(exports, [], None, False, checks_ok)
    out = Path(out_dir)
    try:
        out.mkdir(parents=True, exist_ok=True)
    except OSError as e:
        raise ExportError(f"cannot make the folder {str(out)!r}: {e}", field="out") from None
    base = slug(project.name)
    files: list[Path] = []
    rate_entries = []
    for rx in exports:
        stem = f"{base}-{rate_text(rx.fs_hz)}"
        wav_info = {}
        if fmt == "wav":
            from planner.render import write_wav

            for b in rx.bands:
                h, whole, frac = band_impulse_response(b, rx.fs_hz)
                p = out / f"{stem}-{slug(b.name)}.wav"
                _write_bytes_atomic(p, lambda t, h=h: write_wav(t, h, rx.fs_hz))
                files.append(p)
                wav_info[b.name] = {"file": p.name, "samples": len(h),
                                    "delay_whole_samples": whole,
                                    "delay_fraction_samples_not_applied": frac}
        else:
            ext = {"json": "json", "csv": "csv", "text": "txt"}[fmt]
            text = {"json": lambda: json.dumps(to_json_dict(rx, negate_feedback), indent=1) + "\n",
                    "csv": lambda: to_csv_text(rx, negate_feedback),
                    "text": lambda: to_text(rx, negate_feedback)}[fmt]()
            p = out / f"{stem}.{ext}"
            pj.atomic_write_text(p, text)
            files.append(p)
        rate_entries.append(_manifest_rate(rx, wav_info))
    manifest = {
        "format": MANIFEST_FORMAT, "version": 1,
        "project": project.name, "project_file": source,
        "content_hash": content_hash(project),
        "crossplan_version": __version__,
        "created_utc": datetime.now(timezone.utc).isoformat(timespec="seconds"),
        "file_format": fmt, "arith": a.name, "negated_feedback": bool(negate_feedback),
        "pre_attenuate": bool(pre_attenuate),
        "denominator": _denominator_text(negate_feedback),
        "rates": [_rate_value(r) for r in uniq],
        "files": [p.name for p in files],
        "checks": rate_entries,
    }
    mpath = out / f"{base}-manifest.json"
    pj.atomic_write_text(mpath, json.dumps(_finite(manifest), indent=1, allow_nan=False) + "\n")
    return ExportResult(exports, files, mpath, arith_ok, checks_ok)


def _manifest_rate(rx: RateExport, wav_info: dict) -> dict:
    bands = []
    for b in rx.bands:
        d = {"name": b.name, "sections": len(b.stored_sos),
             "fir_taps": 0 if b.stored_fir is None else len(b.stored_fir),
             "peak_internal_gain_db": b.peak_internal_gain_db,
             "pre_attenuation_db": b.pre_attenuation_db, "arith": b.arith.to_dict()}
        if b.name in wav_info:
            d["wav"] = wav_info[b.name]
        bands.append(d)
    return {"sample_rate": _rate_value(rx.fs_hz), "check": rx.report.to_dict(),
            "arith_ok": rx.arith_ok, "bands": bands}
