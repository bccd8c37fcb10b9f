"""Export: each band's coefficients at each sample rate, proved in the target arithmetic.

For every requested rate the project is redesigned at that rate (each
filter's parameters are checked there first, so a filter at or above the
rate's Nyquist frequency is refused by name) and analysed as ``check``
analyses it. Each band's sections are then laid out for the DSP
(:data:`SECTION_MODES`): ``per-filter`` keeps every filter's own sections,
in chain order, each labelled with its filter, so they map onto a DSP's
per-filter slots; ``paired`` re-pairs the band's poles and zeros and orders
the sections with the poles nearest the unit circle last
(:func:`planner.dsp.sections.pair_sections`). Both keep every numerator's
shape, so zeros at ``z = +1/-1`` stay exact. For a fixed-point target the
numerators are scaled so that the signal peaks at full
scale after each section (:func:`planner.dsp.sections.scale_sections`), with
what is left of the band's gain in ``scale``. The sections are rounded to the
target number format (:func:`planner.dsp.quantize.quantize_sos`, with a
post-shift per section where a fixed-point word cannot hold them), and the
coefficients as written are compared with the design ``check`` analysed:
nothing is written that differs from what was checked by more than
:data:`MAX_DEVIATION_DB` where the response matters.

Files are written per rate (JSON, CSV, text or one WAV impulse response per
band) and one manifest per export ties them to the project's content hash
and to the check results at each rate.

The coefficient convention of every file: each section is
``[b0, b1, b2, a1, a2]`` with ``a0 = 1`` and the transfer function
``(b0 + b1 z^-1 + b2 z^-2) / (1 + a1 z^-1 + a2 z^-2)``, i.e. the recursion
``y[n] = b0 x[n] + b1 x[n-1] + b2 x[n-2] - a1 y[n-1] - a2 y[n-2]``. With
``negate_feedback`` the files hold ``-a1, -a2`` instead (for engines that
add the feedback terms) and say so. A section with a post-shift ``k`` holds
its coefficients divided by ``2**k``; the DSP shifts the section's
accumulator left by ``k`` bits. A band's output is
``gain * scale * polarity * chain(x)`` delayed by ``delay_samples``.

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
from planner.dsp import fixed as dsec
from planner.dsp import fixed as qz
from planner.dsp.response import band_responses
from planner.dsp.signals import fft_convolve, truncate_iir_impulse
from planner.errors import CrossplanError, ExportError, ProjectError
from planner.model import Project

__all__ = [
    "FORMAT", "VERSION", "MANIFEST_FORMAT", "FORMATS", "SECTION_MODES", "MAX_DEVIATION_DB",
    "RANGE_DB", "ERROR_FLOOR_DB", "WAV_FLOOR_DB", "ArithResult", "BandExport", "RateExport",
    "ExportResult",
    "content_hash", "slug", "rate_text", "project_at_rate", "export_rate", "to_json_dict",
    "to_csv_text", "to_text", "band_impulse_response", "arith_text", "arith_dict",
    "write_export", "MAX_SLUG_CHARS", "RESERVED_STEMS", "band_file_stems", "RunFiles",
    "write_file", "write_text_file",
]

FORMAT = "crossplan-coefficients"
VERSION = 1
MANIFEST_FORMAT = "crossplan-export-manifest"
FORMATS = EXPORT_FORMATS

#: How each band's sections are laid out: each filter's own sections in
#: chain order (the default), or re-paired and re-ordered for fixed point.
SECTION_MODES = ("per-filter", "paired")
#: Largest magnitude deviation (dB) of the written coefficients from the
#: design ``check`` analysed, judged where the design is within RANGE_DB of
#: the band's peak; deeper down the magnitude error must stay ERROR_FLOOR_DB
#: below the peak (see :func:`planner.dsp.quantize.judge_deviation`). The
#: same values as the defaults of :func:`planner.dsp.quantize.suggest_fixes`;
#: common practice, no published source.
MAX_DEVIATION_DB = 0.1
RANGE_DB = 40.0
ERROR_FLOOR_DB = -80.0
#: Tail floor of the WAV impulse responses, dB below the peak (the issue's -150 dB).
WAV_FLOOR_DB = -150.0


#: Longest slug in a file name, characters (a project's and a band's alike): with the
#: rate, the dashes, a band number and the extension a name stays far below the
#: 255 bytes most file systems allow.
MAX_SLUG_CHARS = 64
#: Band file stems a run keeps for itself: render's summed output and the manifest.
RESERVED_STEMS = ("sum", "manifest")


def slug(text: str, fallback: str = "project", max_chars: int = MAX_SLUG_CHARS) -> str:
    """Lower-case ASCII letters, digits and dashes, for file names.

    Accents are taken off first (Unicode NFKD decomposition: ``'Médium'``
    gives ``'medium'``); any other run of characters becomes one dash. The
    result is cut to ``max_chars`` (no dash at either end); ``fallback``
    when nothing is left.
    """
    import unicodedata

    plain = "".join(c for c in unicodedata.normalize("NFKD", str(text))
                    if not unicodedata.combining(c))
    s = re.sub(r"[^a-z0-9]+", "-", plain.lower()).strip("-")
    s = s[:max(1, int(max_chars))].strip("-")
    return s or fallback


def band_file_stems(names: Sequence[str], reserved: Sequence[str] = RESERVED_STEMS) -> list[str]:
    """A distinct, readable file stem per band, the same in every run of the same names.

    Each band takes :func:`slug` of its name (at most :data:`MAX_SLUG_CHARS`
    characters). A band whose slug is empty (a name of other than Latin
    letters and digits), is one of ``reserved``, or is shared with another
    band (``Woofer`` and ``woofer``; ``mid range`` and ``mid-range``; two
    long names alike in their first characters) gets its band number
    (1-based) after it: ``band-3``, ``sum-2``, ``woofer-1`` and
    ``woofer-2``. Should that name be taken as well, ``-2``, ``-3``, ...
    follow it. Comparisons ignore case, as some file systems do.

    Parameters
    ----------
    names : sequence of str
        Band names, project order.
    reserved : sequence of str
        Stems no band may take alone.

    Returns
    -------
    list of str
        One stem per band, no two alike (ignoring case).
    """
    bases = [slug(n, fallback="") for n in names]
    keep = {r.lower() for r in reserved}
    count: dict[str, int] = {}
    for b in bases:
        count[b] = count.get(b, 0) + 1
    alone = [bool(b) and count[b] == 1 and b not in keep for b in bases]
    taken = {b for b, ok in zip(bases, alone) if ok}
    out = []
    for k, (b, ok) in enumerate(zip(bases, alone), start=1):
        if ok:
            out.append(b)
            continue
        stem = f"{b or 'band'}-{k}"
        j = 2
        while stem in taken:
            stem = f"{b or 'band'}-{k}-{j}"
            j += 1
        taken.add(stem)
        out.append(stem)
    return out


class RunFiles:
    """The files of one run (an export, a render): no path is written twice.

    :meth:`claim` records each path with what it is for; claiming a path a
    second time (case ignored, as some file systems do) raises, naming
    both, so that no file written earlier in the run is overwritten.
    """

    def __init__(self) -> None:
        self._what: dict[str, tuple[Path, str]] = {}

    def claim(self, path, what: str) -> Path:
        """Record ``path`` for ``what`` (e.g. ``"band 'woofer' at 48000 Hz"``) and return it.

        Raises
        ------
        ExportError
            ``field='out'``: ``path`` is claimed already in this run.
        """
        import os

        p = Path(path)
        key = os.path.normcase(os.path.abspath(p)).lower()
        if key in self._what:
            raise ExportError(f"{str(p)!r} would be written twice in one run, for "
                              f"{self._what[key][1]} and for {what}; nothing is written over",
                              field="out")
        self._what[key] = (p, what)
        return p


def write_file(path: Path, write) -> None:
    """``write(tmp)`` then rename over ``path`` (atomic); an OSError as an ExportError.

    Raises
    ------
    ExportError
        ``field='out'``: the file cannot be written (a name too long for the
        file system, no space, no permission), with the system's reason.
    """
    try:
        _write_bytes_atomic(Path(path), write)
    except OSError as e:
        raise ExportError(f"cannot write {str(path)!r}: {e.strerror or e}", field="out") from None


def write_text_file(path: Path, text: str) -> None:
    """:func:`planner.project.atomic_write_text`, with an OSError as an ExportError (as
    :func:`write_file`)."""
    try:
        pj.atomic_write_text(path, text)
    except OSError as e:
        raise ExportError(f"cannot write {str(path)!r}: {e.strerror or e}", field="out") from None


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
    """A band as written, compared with the design ``check`` analysed.

    Section numbers are 1-based, in the exported order. ``deviation_db`` is
    judged within ``range_db`` of the band's peak and ``floor_error_db``
    below it (:func:`planner.dsp.quantize.judge_deviation`); both are None
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


@dataclass
class BandExport:
    """One band as exported at one rate.

    Attributes
    ----------
    sos : ndarray, shape (n, 6)
        The float64 design, as ``check`` analysed it (the reference).
    laid_sos : ndarray, shape (n, 6)
        The sections in the exported layout before rounding (paired and/or
        scaled; equal to ``sos`` for a float per-filter export).
    stored_sos : ndarray, shape (n, 6)
        What the files hold: ``laid_sos`` divided by ``2**shifts`` and rounded.
    shifts : list of int
        Post-shift of each section (0 for floating point).
    section_filters : list of int or None
        Per section, the index of the band's filter it belongs to
        (``per-filter`` mode); None in ``paired`` mode.
    filter_labels : dict
        Filter index -> its label (``"LR4 lowpass 2.2 kHz"``).
    scale : float
        Linear factor after the chain: what scaling left of the band's gain,
        times ``2**k`` of FIR taps shifted right to fit.
    fir, stored_fir : ndarray or None
        FIR taps of the design, and as stored (rounded, shifted).
    gain_db : float
        Band gain written to the files (pre-attenuation included).
    pre_attenuation_db : float
        What ``pre_attenuate`` took off ``gain_db`` (0 when not asked).
    peak_internal_gain_db, peak_internal_at_hz : float
        Highest level inside the band before its gain (after each section,
        after the FIR and after ``scale``) for a full-scale sine, and where.
    peak_internal_after : int
        After which stage (1-based; ``n + 1`` is the FIR, ``n + 2`` the scale).
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
    laid_sos: np.ndarray | None = None
    shifts: list = field(default_factory=list)
    section_filters: list | None = None
    filter_labels: dict = field(default_factory=dict)

    @property
    def effective_sos(self) -> np.ndarray:
        """The sections as the DSP runs them: stored coefficients times ``2**shift``."""
        return qz.unshift(self.stored_sos, self.shifts or [0] * len(self.stored_sos))

    @property
    def run_sos(self) -> np.ndarray:
        """:attr:`effective_sos` with ``scale`` folded into the first numerator (what runs)."""
        s = self.effective_sos
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
    sections: str = "per-filter"

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


def _layout(d: engine.BandDesign, a: qz.Arith, mode: str):
    """The band's sections laid out for the DSP: (sections, section filters, scale).

    ``paired`` re-pairs and re-orders them; a fixed-point target also has
    them scaled to peak at full scale after each section, with the rest of
    the band's gain returned as ``scale``. Floating-point targets keep every
    coefficient as designed (only re-assigned in ``paired`` mode).
    """
    sos = np.asarray(d.sos, dtype=float)
    if not len(sos):
        return sos.copy(), [], 1.0
    owners = list(d.section_filters) if len(d.section_filters) == len(sos) else None
    if mode == "paired":
        sos, owners = dsec.pair_sections(sos), None
    if a.kind == "fixed":
        laid = dsec.scale_sections(sos)
        return laid.sos, owners, laid.gain
    return sos.copy(), owners, 1.0


def _arith(d: engine.BandDesign, laid: np.ndarray, scale: float, a: qz.Arith,
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
            res.reason = (f"the response deviates by {_against(dev.in_range_db, MAX_DEVIATION_DB)}"
                          f" dB at {fk.format_hz(dev.in_range_at_hz)} (limit {MAX_DEVIATION_DB:g}"
                          f" dB within {RANGE_DB:g} dB of the band's peak)")
        else:
            res.reason = (f"the error reaches {_against(dev.floor_error_db, ERROR_FLOOR_DB)} dB "
                          f"re the band's peak at {fk.format_hz(dev.floor_at_hz)} (limit "
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


def _against(value: float, limit: float, digits: int = 3) -> str:
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


def _peak_internal(b_eff: np.ndarray, stored_fir, scale: float, freqs: np.ndarray, fs: float):
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


#: Log-spaced points of the arithmetic re-check, beside the analysis grid's own: the
#: verdict must not depend on how coarse a project's analysis.points is.
RECHECK_POINTS = 4096


def _recheck_grid(report: engine.Report) -> np.ndarray:
    """The check's grid (its filter and feature frequencies) plus a dense log grid."""
    a = report.project.analysis
    return np.unique(np.concatenate([report.freqs_hz,
                                     np.geomspace(a.f_min, a.f_max, RECHECK_POINTS)]))


def export_rate(project: Project, fs_hz: float, arith: str | qz.Arith = "float64",
                pre_attenuate: bool = False, sections: str = "per-filter") -> RateExport:
    """Redesign, lay out, round and re-check every band of ``project`` at ``fs_hz``.

    Parameters
    ----------
    project : Project
    fs_hz : float
        Sample rate in Hz.
    arith : str or Arith
        Target coefficient format (``'float64'``, ``'float32'``, ``'qM.N'``).
    pre_attenuate : bool
        Lower each band's exported gain by its peak internal gain (when above
        0 dB) so that no point inside the band exceeds full scale for a
        full-scale sine at the band's input.
    sections : {'per-filter', 'paired'}
        The layout of each band's sections (see :data:`SECTION_MODES`).

    Returns
    -------
    RateExport
        Per band, the design ``check`` analysed at this rate, the stored
        coefficients, the :class:`ArithResult` and the peak internal gain;
        and the check report at this rate.
    """
    if sections not in SECTION_MODES:
        raise ExportError(f"must be one of {', '.join(SECTION_MODES)}, not {sections!r}",
                          field="sections")
    a = qz.parse_arith(arith) if isinstance(arith, str) else arith
    proj = project_at_rate(project, fs_hz)
    fs = float(proj.sample_rate)
    report = engine.analyse(proj)
    freqs = _recheck_grid(report)
    bands = []
    for i, (b, d) in enumerate(zip(proj.bands, report.designs)):
        laid, owners, scale = _layout(d, a, sections)
        res, stored, shifts, stored_fir, scale = _arith(d, laid, scale, a, freqs, fs)
        peak, peak_at, after = _peak_internal(qz.unshift(stored, shifts), stored_fir, scale,
                                              freqs, fs)
        att = max(0.0, peak) if pre_attenuate else 0.0
        labels = {j: f.label() for j, f in enumerate(b.filters) if not f.bypass}
        bands.append(BandExport(
            name=b.name, active=report.active[i], design_gain_db=b.gain_db,
            gain_db=b.gain_db - att, pre_attenuation_db=att, delay_samples=d.delay_samples,
            invert=b.invert, sos=np.asarray(d.sos, float), stored_sos=stored, scale=scale,
            fir=None if d.fir is None else np.array(d.fir, dtype=float),
            stored_fir=stored_fir, peak_internal_gain_db=peak, peak_internal_at_hz=peak_at,
            peak_internal_after=after, arith=res, laid_sos=laid,
            shifts=[int(s) for s in shifts], section_filters=owners, filter_labels=labels))
    return RateExport(fs, proj, report, bands, a, sections)


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
            "biquads": _feedback(b.stored_sos, negate_feedback).tolist(),
            "fir": None if b.stored_fir is None else b.stored_fir.tolist(),
            "scale": b.scale, "post_shifts": list(b.shifts),
            "section_filters": b.section_filters,
            "filters": [{"index": j, "label": t} for j, t in sorted(b.filter_labels.items())],
            "numerator_shifts": [0] * len(b.stored_sos),
            "pre_attenuation_db": b.pre_attenuation_db,
            "peak_internal_gain_db": b.peak_internal_gain_db,
        })
    return {"format": FORMAT, "version": VERSION, "sample_rate": _rate_value(rx.fs_hz),
            "bands": bands, "arith": rx.arith.name, "sections": rx.sections,
            "negated_feedback": bool(negate_feedback),
            "denominator": _denominator_text(negate_feedback), "project": rx.project.name}


def _num(x: float, arith: qz.Arith | None = None) -> str:
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
    w.writerow(["", "sample_rate", ""] + blank + [_num(rx.fs_hz)])
    w.writerow(["", "arith", ""] + blank + [rx.arith.name])
    w.writerow(["", "sections", ""] + blank + [rx.sections])
    w.writerow(["", "negated_feedback", ""] + blank + [int(bool(negate_feedback))])
    for b in rx.bands:
        w.writerow([b.name, "gain_db", ""] + blank + [_num(b.gain_db)])
        w.writerow([b.name, "delay_samples", ""] + blank + [_num(b.delay_samples)])
        w.writerow([b.name, "invert", ""] + blank + [int(b.invert)])
        w.writerow([b.name, "scale", ""] + blank + [_num(b.scale)])
        for k, row in enumerate(_feedback(b.stored_sos, negate_feedback)):
            w.writerow([b.name, "section", k] + [_num(v, rx.arith) for v in row]
                       + ["", b.shifts[k] if b.shifts else 0, _section_label(b, k)])
        if b.stored_fir is not None:
            for k, t in enumerate(b.stored_fir):
                w.writerow([b.name, "fir", k] + blank + [_num(t, rx.arith)])
    return buf.getvalue()


def to_text(rx: RateExport, negate_feedback: bool = False) -> str:
    """A readable block per band, for entering coefficients into a DSP by hand."""
    lines = [f"# crossplan coefficients: {rx.project.name}",
             f"# sample rate {rx.fs_hz:g} Hz, coefficients in {rx.arith.name}, "
             f"sections {rx.sections}",
             f"# each section: (b0 + b1 z^-1 + b2 z^-2) / ({_denominator_text(negate_feedback)})",
             "# a section with a post-shift k holds its coefficients / 2^k: shift its "
             "accumulator left by k bits",
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
            label = _section_label(b, k)
            shift = b.shifts[k] if b.shifts else 0
            lines.append(f"  section {k + 1}" + (f"  ({label})" if label else "")
                         + (f"  post-shift {shift}" if shift else ""))
            lines.extend(f"    {name} = {_num(v, rx.arith)}" for name, v in zip(
                ("b0", "b1", "b2", "a1", "a2"), row))
        if b.stored_fir is None:
            lines.append("  fir            none")
        else:
            lines.append(f"  fir            {len(b.stored_fir)} taps")
            lines.extend(f"    {_num(t, rx.arith)}" for t in b.stored_fir)
        lines.append("")
    return "\n".join(lines)


def band_impulse_response(b: BandExport, fs_hz: float, delay=None):
    """A band's impulse response as written to its WAV (and rendered).

    The stored sections (``scale`` folded in) are run by
    :func:`planner.dsp.signals.truncate_iir_impulse` until the tail is below
    :data:`WAV_FLOOR_DB`; an FIR is convolved in exactly; a fractional part
    of the delay is convolved in as the fractional-delay FIR of ``delay``
    (:mod:`planner.dsp.fracdelay`); gain and polarity are applied; the
    delay line's whole samples are leading zeros.

    Parameters
    ----------
    b : BandExport
        Or any object with ``run_sos``, ``run_fir``, ``delay_samples`` and ``linear_gain``.
    fs_hz : float
    delay : planner.delays.BandDelay, optional
        How the delay runs, from the run's :func:`planner.delays.plan_delays`
        (which aligns the bands of one run). Default: the band alone, in
        ``apply`` mode.

    Returns
    -------
    h : ndarray
    delay : planner.delays.BandDelay
        The delay as made: ``whole_samples`` leading zeros, then the filter
        with ``taps`` (if any) for ``fraction_samples``.
    """
    from planner.delays import plan_delays

    if delay is None:
        delay = plan_delays([b.delay_samples], "apply").bands[0]
    sos, fir = b.run_sos, b.run_fir
    h = truncate_iir_impulse(sos, fs_hz, WAV_FLOOR_DB) if len(sos) else np.ones(1)
    if fir is not None:
        h = fft_convolve(h, fir) if len(h) > 1 else h[0] * fir
    if delay.taps is not None:
        h = fft_convolve(h, delay.taps) if len(h) > 1 else h[0] * delay.taps
    h = np.concatenate([np.zeros(delay.whole_samples), b.linear_gain * h])
    return h, delay


def _stage_text(b: BandExport) -> str:
    n = len(b.stored_sos)
    k = b.peak_internal_after
    if not k:
        return ""
    what = f"section {k}" if k <= n else "the FIR" if k == n + 1 else "scale"
    return f" after {what} near {fk.format_hz(b.peak_internal_at_hz)}"


def _deviation_text(r: ArithResult) -> str:
    if r.deviation_db is None:
        return "deviation not evaluated"
    at = f" at {fk.format_hz(r.deviation_at_hz)}" if math.isfinite(r.deviation_at_hz) else ""
    text = (f"deviation {_against(r.deviation_db, MAX_DEVIATION_DB)} dB{at} within "
            f"{r.range_db:g} dB of the peak")
    if r.floor_error_db is not None and math.isfinite(r.floor_error_db):
        text += f", error {_against(r.floor_error_db, r.floor_db)} dB re peak below it"
    return text


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
    return {"format": rx.arith.name, "sample_rate": _rate_value(rx.fs_hz), "ok": rx.arith_ok,
            "sections": rx.sections,
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
    """What :func:`write_export` did.

    ``band_files`` holds per rate (the order of ``rates``) each band's file,
    project order; ``delays`` per rate how the WAV impulse responses made
    the band delays (:class:`planner.delays.DelayPlan`; ``None`` for the
    coefficient formats, which hold the exact ``delay_samples``); ``notes``
    the lines on fractional delays for the command's output.
    """

    rates: list[RateExport]
    files: list[Path]
    manifest: Path | None
    arith_ok: bool
    checks_ok: bool
    band_files: list[list[Path]] = field(default_factory=list)
    delays: list = field(default_factory=list)
    notes: list[str] = field(default_factory=list)


def _coefficient_text(rx: RateExport, fmt: str, negate_feedback: bool) -> str:
    if fmt == "json":
        return json.dumps(to_json_dict(rx, negate_feedback), indent=1) + "\n"
    if fmt == "csv":
        return to_csv_text(rx, negate_feedback)
    return to_text(rx, negate_feedback)




def write_export(project: Project, rates: Sequence[float], fmt: str, out_dir,
                 arith: str = "float64", negate_feedback: bool = False,
                 pre_attenuate: bool = False, source: str | None = None,
                 sections: str = "per-filter",
                 fractional_delay: str = "apply") -> ExportResult:
    """Export ``project`` at every rate in one format, with a manifest.

    Files: ``DIR/<project>-<rate>.json|.csv|.txt``, or for ``wav`` one
    ``DIR/<project>-<rate>-<band>.wav`` per band (32-bit float, mono), and
    ``DIR/<project>-manifest.json``; ``<project>`` is :func:`slug` of the
    project's name and ``<band>`` the band's stem from
    :func:`band_file_stems` (distinct for every band). Nothing is written
    when the target arithmetic cannot hold the design at some rate
    (``arith_ok`` false), and no file is written twice (:class:`RunFiles`).

    ``fractional_delay`` (``"apply"`` or ``"round"``, see
    :mod:`planner.delays`) says how the WAV impulse responses make a
    fractional delay; coefficient files always hold the exact
    ``delay_samples``.

    Raises
    ------
    ExportError
        Unknown format or fractional-delay mode, no rates, a bad rate or
        format name, an output folder that cannot be made, a file that
        cannot be written.
    ProjectError
        A filter that cannot be made at a rate (named).
    """
    from planner import delays as dl

    if fmt not in FORMATS:
        raise ExportError(f"must be one of {', '.join(FORMATS)}, not {fmt!r}", field="format")
    dl.check_mode(fractional_delay)
    if not rates:
        raise ExportError("give at least one sample rate", field="rate")
    a = qz.parse_arith(arith)
    uniq = list(dict.fromkeys(float(_check_rate(r)) for r in rates))
    exports = [export_rate(project, r, a, pre_attenuate, sections) for r in uniq]
    arith_ok = all(rx.arith_ok for rx in exports)
    checks_ok = all(rx.report.ok for rx in exports)
    if not arith_ok:
        return ExportResult(exports, [], None, False, checks_ok)
    out = Path(out_dir)
    base = slug(project.name)
    names = [b.name for b in project.bands]
    stems = band_file_stems(names)
    run = RunFiles()
    # Every path is named and claimed before anything is written.
    band_files: list[list[Path]] = []
    plans: list = []
    for rx in exports:
        stem = f"{base}-{rate_text(rx.fs_hz)}"
        at = f"at {rx.fs_hz:g} Hz"
        if fmt == "wav":
            band_files.append([run.claim(out / f"{stem}-{st}.wav", f"band {n!r} {at}")
                               for n, st in zip(names, stems)])
            plans.append(dl.plan_delays([b.delay_samples for b in rx.bands], fractional_delay))
        else:
            ext = {"json": "json", "csv": "csv", "text": "txt"}[fmt]
            p = run.claim(out / f"{stem}.{ext}", f"the {fmt} coefficients {at}")
            band_files.append([p] * len(names))
            plans.append(None)
    mpath = run.claim(out / f"{base}-manifest.json", "the manifest")
    try:
        out.mkdir(parents=True, exist_ok=True)
    except OSError as e:
        raise ExportError(f"cannot make the folder {str(out)!r}: {e}", field="out") from None
    files: list[Path] = []
    rate_entries, notes = [], []
    for rx, paths, plan in zip(exports, band_files, plans):
        wav_info = []
        if fmt == "wav":
            from planner.render import write_wav

            for b, p, bd in zip(rx.bands, paths, plan.bands):
                h, _ = band_impulse_response(b, rx.fs_hz, bd)
                write_file(p, lambda t, h=h: write_wav(t, h, rx.fs_hz))
                files.append(p)
                wav_info.append({"file": p.name, "samples": len(h),
                                 "delay_whole_samples": bd.whole_samples,
                                 "delay_fraction_applied_samples": bd.fraction_samples,
                                 "delay_rounded_by_samples": bd.rounded_by_samples})
            notes.extend(dl.run_notes(rx.report, plan))
        else:
            write_text_file(paths[0], _coefficient_text(rx, fmt, negate_feedback))
            files.append(paths[0])
            notes.extend(dl.exact_notes(rx.report))
        rate_entries.append(_manifest_rate(rx, paths, wav_info, plan))
    manifest = {
        "format": MANIFEST_FORMAT, "version": 1,
        "project": project.name, "project_file": source,
        "content_hash": content_hash(project),
        "crossplan_version": __version__,
        "created_utc": datetime.now(timezone.utc).isoformat(timespec="seconds"),
        "file_format": fmt, "arith": a.name, "negated_feedback": bool(negate_feedback),
        "pre_attenuate": bool(pre_attenuate), "sections": sections,
        "denominator": _denominator_text(negate_feedback),
        "fractional_delay": fractional_delay if fmt == "wav" else "exact",
        "rates": [_rate_value(r) for r in uniq],
        "files": [p.name for p in files],
        "checks": rate_entries,
    }
    text = json.dumps(_finite(manifest), indent=1, allow_nan=False) + "\n"
    write_text_file(mpath, text)
    return ExportResult(exports, files, mpath, arith_ok, checks_ok, band_files, plans, notes)


def _manifest_rate(rx: RateExport, paths: Sequence[Path], wav_info: Sequence[dict],
                   plan) -> dict:
    """One rate's entry of the manifest: the check, and per band its file and figures.

    ``delays`` says how the band delays were made at this rate: for the
    WAV format the run's :class:`planner.delays.DelayPlan` (``apply`` or
    ``round``, the fraction per band, the added latency, the filter, and
    for ``round`` what rounding cost); for the coefficient formats
    ``"exact"``: the files hold ``delay_samples`` as designed.
    """
    from planner import delays as dl

    names = [b.name for b in rx.bands]
    bands = []
    for i, (b, p) in enumerate(zip(rx.bands, paths)):
        d = {"name": b.name, "file": p.name, "sections": len(b.stored_sos),
             "post_shifts": list(b.shifts),
             "fir_taps": 0 if b.stored_fir is None else len(b.stored_fir),
             "peak_internal_gain_db": b.peak_internal_gain_db,
             "pre_attenuation_db": b.pre_attenuation_db, "arith": b.arith.to_dict()}
        if wav_info:
            d["wav"] = wav_info[i]
        bands.append(d)
    if plan is None:
        exact = dl.plan_delays([b.delay_samples for b in rx.bands], "round")
        delays = {"fractional_delay": "exact", "added_latency_samples": 0,
                  "added_latency_ms": 0.0, "filter": None,
                  "bands": [{"name": n, "delay_samples": bd.delay_samples,
                             "fraction_samples": dl.fraction_of(bd.delay_samples)}
                            for n, bd in zip(names, exact.bands)],
                  "rounding": None}
    else:
        delays = plan.to_dict(names, rx.fs_hz)
        delays["rounding"] = (dl.rounding_effect(rx.report, plan.rounded_delays).to_dict()
                              if plan.mode == "round" and plan.fractional else None)
    return {"sample_rate": _rate_value(rx.fs_hz), "check": rx.report.to_dict(),
            "arith_ok": rx.arith_ok, "delays": delays, "bands": bands,
            "band_files": {b.name: p.name for b, p in zip(rx.bands, paths)}}
