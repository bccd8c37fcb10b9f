"""Each band at one export rate: redesigned, laid out for the DSP and proved in its arithmetic.

For every requested rate the project is redesigned at that rate (each
filter's parameters are checked there first, so a filter at or above the
rate's Nyquist frequency is refused by name) and analysed as ``check``
analyses it. Each band's sections are then laid out for the DSP
(:data:`SECTION_MODES`): ``per-filter`` keeps every filter's own sections,
in chain order, each labelled with its filter, so they map onto a DSP's
per-filter slots; ``paired`` re-pairs the band's poles and zeros and orders
the sections with the poles nearest the unit circle last
(:func:`planner.dsp.fixed.sections.pair_sections`). Both keep every numerator's
shape, so zeros at ``z = +1/-1`` stay exact. For a fixed-point target the
numerators are scaled so that the signal peaks at full scale after each
section (:func:`planner.dsp.fixed.sections.scale_sections`), with what is left of
the band's gain in ``scale``. The sections are then rounded and compared with
the design ``check`` analysed (:mod:`planner.export.recheck`).

References
----------
.. [1] A. V. Oppenheim and R. W. Schafer, "Discrete-Time Signal Processing",
   3rd ed., Prentice Hall, 2010, sec. 6.3 (cascade form), 6.7 (coefficient
   quantisation), 6.9 (scaling for overflow).
.. [2] L. B. Jackson, "Digital Filters and Signal Processing", 3rd ed.,
   Kluwer, 1996, sec. 11.3-11.4 (scaling, pairing and ordering of sections).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field, replace

import numpy as np

from planner import engine, filters as fk
from planner.dsp import fixed as qz
from planner.errors import CrossplanError, ExportError, ProjectError
from planner.export.recheck import (ArithResult, peak_internal, quantize_and_recheck,
                                    recheck_grid)
from planner.model import Project

__all__ = ["SECTION_MODES", "check_rate", "rate_value", "project_at_rate", "BandExport",
           "RateExport", "export_rate"]


#: How each band's sections are laid out: each filter's own sections in
#: chain order (the default), or re-paired and re-ordered for fixed point.
SECTION_MODES = ("per-filter", "paired")


def check_rate(fs_hz) -> float:
    if isinstance(fs_hz, bool) or not isinstance(fs_hz, (int, float)) \
            or not math.isfinite(fs_hz) or not 1000 <= fs_hz <= 1_536_000:
        raise ExportError(f"{fs_hz!r} Hz is not a sample rate crossplan exports "
                          "(1000 .. 1536000 Hz)", field="rate")
    return float(fs_hz)


def rate_value(fs_hz: float):
    return int(fs_hz) if float(fs_hz).is_integer() else float(fs_hz)


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
    fs = check_rate(fs_hz)
    for i, b in enumerate(project.bands):
        for j, f in enumerate(b.filters):
            if f.bypass:
                continue
            try:
                fk.check_params(fk.kind_of(f), dict(f.params), fs)
                engine.design_filter(f, fs)
            except CrossplanError as e:
                sub = f".{e.field}" if e.field else ""
                raise ProjectError(f"band {b.name!r}, filter {j + 1} ({fk.label(f)}) at {fs:g} Hz: "
                                   f"{e.message}", field=f"bands[{i}].filters[{j}]{sub}") from None
    a = project.analysis
    f_max = min(a.f_max, fs / 2)
    if f_max <= a.f_min:
        raise ExportError(f"{fs:g} Hz has its Nyquist frequency ({fs / 2:g} Hz) at or below "
                          f"analysis.f_min ({a.f_min:g} Hz)", field="rate")
    return replace(project, sample_rate=rate_value(fs),
                   analysis=replace(a, f_max=float(f_max)))


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
        sos, owners = qz.pair_sections(sos), None
    if a.kind == "fixed":
        laid = qz.scale_sections(sos)
        return laid.sos, owners, laid.gain
    return sos.copy(), owners, 1.0


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
    freqs = recheck_grid(report)
    bands = []
    for i, (b, d) in enumerate(zip(proj.bands, report.designs)):
        laid, owners, scale = _layout(d, a, sections)
        res, stored, shifts, stored_fir, scale = quantize_and_recheck(d, laid, scale, a, freqs, fs)
        peak, peak_at, after = peak_internal(qz.unshift(stored, shifts), stored_fir, scale,
                                              freqs, fs)
        att = max(0.0, peak) if pre_attenuate else 0.0
        labels = {j: fk.label(f) for j, f in enumerate(b.filters) if not f.bypass}
        bands.append(BandExport(
            name=b.name, active=report.active[i], design_gain_db=b.gain_db,
            gain_db=b.gain_db - att, pre_attenuation_db=att, delay_samples=d.delay_samples,
            invert=b.invert, sos=np.asarray(d.sos, float), stored_sos=stored, scale=scale,
            fir=None if d.fir is None else np.array(d.fir, dtype=float),
            stored_fir=stored_fir, peak_internal_gain_db=peak, peak_internal_at_hz=peak_at,
            peak_internal_after=after, arith=res, laid_sos=laid,
            shifts=[int(s) for s in shifts], section_filters=owners, filter_labels=labels))
    return RateExport(fs, proj, report, bands, a, sections)
