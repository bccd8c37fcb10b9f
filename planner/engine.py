"""From a project to its designs, responses and check report.

This module strings the pure DSP layer together for a :class:`~planner.model.Project`:
each filter is designed once per sample rate (cached by its parameters),
each band's chain is evaluated with all the others in one vectorised pass,
and the summed response is checked against the project's limits.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from functools import lru_cache
from types import MappingProxyType
from typing import Any, Mapping

import numpy as np

from planner import config
from planner import filters as fk
from planner.dsp import analysis as an
from planner.dsp import fir as dfir
from planner.dsp import grid as dgrid
from planner.dsp.response import BandResponses, PointEvaluator, band_responses, log_derivative
from planner.errors import CrossplanError
from planner.model import Band, Filter, Project
from planner.units import format_hz

__all__ = ["design_filter", "design_band", "design_project", "BandDesign", "Report", "analyse", "evaluate",
           "point_evaluator",
           "CrossingResult", "BandResult", "Warning_", "CheckResult", "STATE_TEXT"]


@lru_cache(maxsize=4096)
def _design_cached(flt: Filter, fs_hz: float) -> fk.FilterDesign:
    d = fk.design(fk.kind_of(flt), flt.params, fs_hz)
    sos = np.array(d.sos, dtype=float).reshape(-1, 6)
    sos.setflags(write=False)
    fir = None
    if d.fir is not None:
        fir = np.array(d.fir, dtype=float)
        fir.setflags(write=False)
    return fk.FilterDesign(sos, fir)


def design_filter(flt: Filter, fs_hz: float) -> fk.FilterDesign:
    """Design one filter at ``fs_hz`` (cached by parameters and rate; arrays are read-only)."""
    return _design_cached(flt, float(fs_hz))


@dataclass(frozen=True)
class BandDesign:
    """A band's chain at one rate: all sections in order, and the FIR taps (convolved) if any.

    ``fir_latency_samples`` is the sum of the latencies of the band's FIR
    filters (:func:`planner.dsp.fir.latency_samples`: ``(N-1)/2`` for a
    linear-phase filter of ``N`` taps, else the index of its largest tap);
    ``fir_linear_phase`` is False when any of them is not linear phase.
    """

    sos: np.ndarray
    fir: np.ndarray | None
    gain_db: float
    delay_samples: float
    invert: bool
    fir_latency_samples: float = 0.0
    fir_linear_phase: bool = True
    #: for each section, the index of the filter of the band's chain it comes from
    section_filters: tuple[int, ...] = ()

    @property
    def n_sections(self) -> int:
        return len(self.sos)

    @property
    def latency_samples(self) -> float:
        """FIR latency plus the band's delay, in samples (0 for an undelayed IIR-only band)."""
        return self.fir_latency_samples + self.delay_samples


def design_band(band: Band, fs_hz: float) -> BandDesign:
    """Design every (not bypassed) filter of a band at ``fs_hz``.

    A design error names its filter (``filters[j].taps: ...``).
    """
    sos, fir, latency, linear, owners = [], None, 0.0, True, []
    for j, f in enumerate(band.filters):
        if f.bypass:
            continue
        try:
            d = design_filter(f, fs_hz)
        except CrossplanError as e:
            raise e.at(f"filters[{j}]") from None
        if len(d.sos):
            sos.append(d.sos)
            owners.extend([j] * len(d.sos))
        if d.fir is not None:
            fir = d.fir if fir is None else np.convolve(fir, d.fir)
            # Delays of cascaded linear-phase filters add (their phases add).
            latency += dfir.latency_samples(d.fir)
            linear = linear and dfir.is_linear_phase(d.fir)
    return BandDesign(np.vstack(sos) if sos else np.zeros((0, 6)), fir, band.gain_db,
                      band.delay_ms * fs_hz / 1000.0, band.invert, latency, linear,
                      tuple(owners))


def design_project(project: Project) -> None:
    """Design every live filter of ``project`` at its rate (into the design cache).

    Loading a file checks its fields only; this makes the designs, so that a
    filter that cannot be made (an FIR spec that cannot be met, refused as a
    :class:`~planner.errors.SpecNotMetError`) is refused with its path,
    ``bands[i].filters[j].taps: ...``. The commands call it right after
    loading, inside their progress scope.
    """
    for i, b in enumerate(project.bands):
        try:
            design_band(b, project.sample_rate)
        except CrossplanError as e:
            raise e.at(f"bands[{i}]") from None


def evaluate(designs: list[BandDesign], freqs_hz: np.ndarray, fs_hz: float) -> BandResponses:
    """Responses of designed bands on a grid (see :func:`planner.dsp.response.band_responses`)."""
    return band_responses([d.sos for d in designs], freqs_hz, fs_hz,
                          gains_db=[d.gain_db for d in designs],
                          delays_samples=[d.delay_samples for d in designs],
                          invert=[d.invert for d in designs],
                          firs=[d.fir for d in designs])


def point_evaluator(designs: list[BandDesign], fs_hz: float) -> PointEvaluator:
    """Band ``bands[k]`` of ``designs`` at ``freqs_hz[k]``, for every k at once
    (see :class:`planner.dsp.response.PointEvaluator`)."""
    return PointEvaluator([d.sos for d in designs], fs_hz,
                          gains_db=[d.gain_db for d in designs],
                          delays_samples=[d.delay_samples for d in designs],
                          invert=[d.invert for d in designs],
                          firs=[d.fir for d in designs])


@dataclass(frozen=True)
class CrossingResult:
    """A crossing of two bands, named in project order (``bands[0]`` first)."""

    bands: tuple[str, str]
    band_index: tuple[int, int]
    freq_hz: float
    phase_diff_deg: float
    level_db: float
    checked: bool     # above the crossing floor: it counts
    ok: bool

    def to_dict(self) -> dict:
        return {"bands": list(self.bands), "freq_hz": self.freq_hz,
                "phase_diff_deg": self.phase_diff_deg, "level_db": self.level_db, "ok": self.ok}


@dataclass(frozen=True)
class BandResult:
    """Per-band figures of the report."""

    name: str
    active: bool
    peak_gain_db: float
    peak_at_hz: float
    sections: int
    fir_taps: int
    latency_samples: float = 0.0
    latency_ms: float = 0.0
    fir_linear_phase: bool = True

    def to_dict(self) -> dict:
        return {"name": self.name, "active": self.active, "peak_gain_db": self.peak_gain_db,
                "peak_at_hz": self.peak_at_hz, "sections": self.sections,
                "fir_taps": self.fir_taps, "latency_samples": self.latency_samples,
                "latency_ms": self.latency_ms, "fir_linear_phase": self.fir_linear_phase}


#: How each check state reads, as text (never by colour alone): only ``fail`` says FAIL.
STATE_TEXT = {"ok": "ok", "warn": "warn", "fail": "FAIL"}


@dataclass(frozen=True)
class CheckResult:
    """The verdict of one check of the report, decided once by the engine.

    Attributes
    ----------
    name : str
        ``"sum"`` (flatness), ``"crossings"`` (phase at the crossings above
        the floor) or ``"headroom"`` (peak gain of each active band).
    state : str
        ``"ok"``, ``"warn"`` (outside its limit but not enforced) or
        ``"fail"`` (outside its limit and enforced: the result fails).
    enforced : bool
        Whether a failure of this check fails the result.
    figures : Mapping
        The numbers behind the verdict, for presenters (per check: see
        :func:`analyse`); presenters print these and never re-decide.
    """

    name: str
    state: str
    enforced: bool
    figures: Mapping[str, Any]

    def __post_init__(self):
        if self.state not in STATE_TEXT:
            raise ValueError(f"state must be one of {', '.join(STATE_TEXT)}, not {self.state!r}")
        object.__setattr__(self, "figures", MappingProxyType(dict(self.figures)))

    @property
    def ok(self) -> bool:
        """Within its limit (a ``warn`` is not ok, though it does not fail the result)."""
        return self.state == "ok"

    @property
    def text(self) -> str:
        """``"ok"``, ``"warn"`` or ``"FAIL"``."""
        return STATE_TEXT[self.state]


def _state(within: bool, enforced: bool) -> str:
    return "ok" if within else ("fail" if enforced else "warn")


@dataclass(frozen=True)
class Warning_:
    """A plain-language warning, pointing at a band (and filter) where it can."""

    text: str
    band: int | None = None
    filter: int | None = None
    code: str = ""


@dataclass
class Report:
    """The result of checking a project at its sample rate.

    The arrays (``freqs_hz``, ``responses``, ``sum_h``) are there for plots;
    :meth:`to_dict` gives the JSON form of ``crossplan check --json``.
    ``checks`` holds the verdict of every check (:class:`CheckResult`), in
    the order sum, crossings, headroom: the text report, the JSON and the
    editor all read it, and ``ok`` is true when none of them is ``fail``.
    """

    project: Project
    designs: list[BandDesign]
    freqs_hz: np.ndarray
    responses: BandResponses
    active: list[bool]
    sum_h: np.ndarray
    max_dev_db: float
    at_hz: float
    ripple_db: float
    flat_ok: bool
    crossings: list[CrossingResult]
    bands: list[BandResult]
    warnings: list[Warning_] = field(default_factory=list)
    checks: tuple[CheckResult, ...] = ()

    def check(self, name: str) -> CheckResult:
        """The :class:`CheckResult` called ``name`` (KeyError if there is none)."""
        for c in self.checks:
            if c.name == name:
                return c
        raise KeyError(name)

    @property
    def checked_crossings(self) -> list[CrossingResult]:
        return [c for c in self.crossings if c.checked]

    @property
    def worst_crossing(self) -> CrossingResult | None:
        """The checked crossing with the largest phase difference (None without one)."""
        return self.check("crossings").figures["worst"]

    @property
    def phase_ok(self) -> bool:
        """Every crossing above the floor is within the phase limit."""
        return self.check("crossings").ok

    @property
    def headroom_ok(self) -> bool:
        """No active band peaks above :data:`planner.config.HEADROOM_LIMIT_DB`."""
        return self.check("headroom").ok

    @property
    def ok(self) -> bool:
        """True when no check fails (a warning does not fail the result)."""
        return bool(self.checks) and all(c.state != "fail" for c in self.checks)

    @property
    def latency_samples(self) -> float:
        """Latency of the sum: the largest latency of the active bands (samples; 0 if none)."""
        lat = [b.latency_samples for b in self.bands if b.active]
        return max(lat) if lat else 0.0

    @property
    def latency_ms(self) -> float:
        return 1000.0 * self.latency_samples / self.project.sample_rate

    @property
    def latencies_agree(self) -> bool:
        """True when every active band has the same latency (within LATENCY_TOL_SAMPLES)."""
        lat = [b.latency_samples for b in self.bands if b.active]
        return not lat or max(lat) - min(lat) <= LATENCY_TOL_SAMPLES

    def sum_group_delay_ms(self) -> np.ndarray:
        return self.responses.sum_group_delay_samples(self.active) * 1000.0 / self.project.sample_rate

    def band_group_delay_ms(self) -> np.ndarray:
        return self.responses.group_delay_samples() * 1000.0 / self.project.sample_rate

    def to_dict(self) -> dict:
        a = self.project.analysis
        gd = self.sum_group_delay_ms()
        gd = gd[np.isfinite(gd)]
        return {
            "ok": self.ok,
            "name": self.project.name,
            "sample_rate": self.project.sample_rate,
            "sum": {"max_dev_db": self.max_dev_db, "at_hz": self.at_hz,
                    "ripple_db": self.ripple_db, "limit_db": a.flatness_db, "ok": self.flat_ok,
                    "group_delay_ms": {"min": float(gd.min()) if gd.size else None,
                                       "max": float(gd.max()) if gd.size else None},
                    "latency_samples": self.latency_samples, "latency_ms": self.latency_ms,
                    "latencies_agree": self.latencies_agree},
            "crossovers": [c.to_dict() for c in self.checked_crossings],
            "crossings_below_floor": [c.to_dict() for c in self.crossings if not c.checked],
            "phase_limit_deg": a.phase_deg,
            "crossing_floor_db": a.crossing_floor_db,
            "bands": [b.to_dict() for b in self.bands],
            "warnings": [w.text for w in self.warnings],
            "headroom": self._headroom_dict(),
            "checks": [{"name": c.name, "state": c.state, "enforced": c.enforced}
                       for c in self.checks],
        }

    def _headroom_dict(self) -> dict:
        h = self.check("headroom")
        f = h.figures
        w = None if f["worst"] is None else self.bands[f["worst"]]
        worst = None if w is None else {"band": w.name, "peak_gain_db": w.peak_gain_db,
                                        "peak_at_hz": w.peak_at_hz}
        return {"ok": h.ok, "state": h.state, "enforced": h.enforced, "limit_db": f["limit_db"],
                "worst": worst, "over": [self.bands[i].name for i in f["over"]]}


def _grid(project: Project, designs: list[BandDesign] | None = None) -> np.ndarray:
    """The starting grid: ``analysis.points`` log-spaced points, the filters' own frequencies
    (at most :data:`planner.config.GRID_NAMED_MAX`) and, given the designs, points around
    the narrow features of every section (:func:`planner.dsp.grid.feature_points`)."""
    a = project.analysis
    live = [f for b in project.bands for f in b.filters if not f.bypass]
    extra = [f.params[k] for f in live for k in ("freq", "freq2") if k in f.params]
    extra += [x for f in live for x in f.params.get("crossovers", ())]
    extra = list(dict.fromkeys(extra))[:config.GRID_NAMED_MAX]
    if designs:
        sos = [d.sos for d in designs if len(d.sos)]
        if sos:
            f0, bw = dgrid.narrow_features(np.vstack(sos), project.sample_rate)
            extra += list(dgrid.feature_points(f0, bw, a.f_min, a.f_max, a.points))
    return an.log_grid(a.f_min, a.f_max, a.points, extra)


def _merge(freqs: np.ndarray, h: np.ndarray, new_f: np.ndarray, new_h: np.ndarray):
    """The grid and responses with new points (and their responses) merged in order."""
    f = np.concatenate([freqs, new_f])
    order = np.argsort(f, kind="stable")
    f = f[order]
    keep = np.concatenate([[True], np.diff(f) > 0])
    return f[keep], np.concatenate([h, new_h], axis=1)[:, order][:, keep]


def _sample(project: Project, designs: list[BandDesign], active: list[bool]):
    """The analysis grid and every band's response on it.

    The starting grid (:func:`_grid`) is evaluated; then, for at most
    :data:`~planner.config.GRID_REFINE_PASSES` passes, the cells where the
    sum's level changes by more than :data:`~planner.config.GRID_REFINE_STEP_DB`
    are split (:func:`planner.dsp.grid.fast_cells`); then the largest local
    maxima and minima of the sum's level and each band's peak are refined by
    exact evaluation (:func:`planner.dsp.grid.zoom_extremes`) and added. The
    grid has at most :func:`planner.config.grid_cap` points.
    """
    fs = project.sample_rate
    freqs = _grid(project, designs)
    h = evaluate(designs, freqs, fs).h
    act = np.asarray(active, dtype=bool)

    def sum_db(hh):
        return an.db(hh[act].sum(axis=0)) if act.any() else np.zeros(hh.shape[1])

    lv = sum_db(h)
    for _ in range(config.GRID_REFINE_PASSES if act.any() else 0):
        new = dgrid.fast_cells(freqs, lv[None, :], np.array([-np.inf]))
        if not len(new):
            break
        freqs, h = _merge(freqs, h, new, evaluate(designs, new, fs).h)
        lv = sum_db(h)

    # Local extremes: candidates are (row, sign, grid index); row -1 is the sum's level (sign
    # +1: maxima, -1: minima), row k >= 0 band k's level (its peak). A local extreme of the
    # sum more than GRID_EXTREME_MARGIN_DB short of the largest cannot become it.
    cands = []
    # A sum flat to within the zoom's own tolerance (a complementary FIR split) has nothing
    # to refine: its local extremes are rounding noise.
    if act.any() and np.ptp(lv) > config.GRID_ZOOM_VTOL:
        for sg in (1.0, -1.0):
            idx = dgrid.local_extremes(sg * lv, config.GRID_EXTREMES)
            near = sg * lv[idx] >= sg * lv[idx[0]] - config.GRID_EXTREME_MARGIN_DB
            cands += [(-1, sg, int(i)) for i in idx[near]]
    peaks = np.argmax(np.abs(h), axis=1)
    cands += [(k, 1.0, int(peaks[k])) for k in range(len(designs))]
    row = np.array([c[0] for c in cands])
    sign = np.array([c[1] for c in cands])
    idx = np.array([c[2] for c in cands])
    n = len(freqs)
    lo, hi = freqs[np.maximum(idx - 1, 0)], freqs[np.minimum(idx + 1, n - 1)]
    is_sum = row < 0
    start = np.where(is_sum, lv[idx], an.db(h[np.maximum(row, 0), idx]))
    point = point_evaluator(designs, fs)

    def value(c, f):
        # Every band at every trial point, by the matrix-product path: the sum candidates
        # need every active band there anyway.
        hv = point.all_bands(f)
        band = np.maximum(row[c], 0)
        out = np.where(is_sum[c], an.db(hv[act].sum(axis=0)) if act.any() else 0.0,
                       an.db(hv[band, np.arange(len(c))]))
        return sign[c] * out

    x, _ = dgrid.zoom_extremes(value, lo, hi, freqs[idx], sign * start)
    x = np.unique(x[(x > freqs[0]) & (x < freqs[-1])])
    x = x[~np.isin(x, freqs)]
    if len(x):
        freqs, h = _merge(freqs, h, x, evaluate(designs, x, fs).h)
    return freqs, h


def analyse(project: Project, points: int | None = None) -> Report:
    """Design, evaluate and check every band of ``project`` at its sample rate.

    Parameters
    ----------
    project : Project
    points : int, optional
        Grid points instead of ``project.analysis.points``.
    """
    from dataclasses import replace

    if points is not None:
        project = replace(project, analysis=replace(project.analysis, points=int(points)))
    fs = project.sample_rate
    a = project.analysis
    designs = []
    for i, b in enumerate(project.bands):
        try:
            designs.append(design_band(b, fs))
        except CrossplanError as e:
            raise e.at(f"bands[{i}]") from None
    active = project.active()
    freqs, h = _sample(project, designs, active)
    resp = BandResponses(freqs, h, fs, lambda: log_derivative(
        [d.sos for d in designs], freqs, fs, [d.delay_samples for d in designs],
        [d.fir for d in designs]))
    act_idx = [i for i, on in enumerate(active) if on]
    sum_h = resp.sum(active)
    if act_idx:
        max_dev, at, ripple = an.flatness(freqs, sum_h)
    else:
        max_dev, at, ripple = float("-inf"), float(freqs[0]), 0.0
    flat_ok = bool(np.isfinite(max_dev) and abs(max_dev) <= a.flatness_db)

    crossings: list[CrossingResult] = []
    if len(act_idx) >= 2:
        sub = resp.h[act_idx]
        # Each crossing is refined on its own two bands, at its own trial frequencies.
        point = point_evaluator([designs[i] for i in act_idx], fs)
        for c in an.find_crossings(freqs, sub, evaluate=point):
            ia, ib = act_idx[c.a], act_idx[c.b]
            checked = c.level_db >= a.crossing_floor_db
            crossings.append(CrossingResult(
                (project.bands[ia].name, project.bands[ib].name), (ia, ib), c.freq_hz,
                c.phase_diff_deg, c.level_db, checked,
                (abs(c.phase_diff_deg) <= a.phase_deg) if checked else True))

    peak, peak_at = an.peak_gain(freqs, resp.h)
    bands = [BandResult(b.name, active[i], float(peak[i]), float(peak_at[i]),
                        designs[i].n_sections,
                        0 if designs[i].fir is None else len(designs[i].fir),
                        designs[i].latency_samples, 1000.0 * designs[i].latency_samples / fs,
                        designs[i].fir_linear_phase)
             for i, b in enumerate(project.bands)]
    report = Report(project, designs, freqs, resp, active, sum_h, max_dev, at, ripple, flat_ok,
                    crossings, bands, checks=_checks(project, active, max_dev, at, ripple,
                                                     flat_ok, crossings, bands))
    report.warnings.extend(_warnings(report))
    return report


def _checks(project: Project, active: list[bool], max_dev: float, at: float, ripple: float,
            flat_ok: bool, crossings: list[CrossingResult],
            bands: list[BandResult]) -> tuple[CheckResult, ...]:
    """The verdicts of the sum, crossings and headroom checks (the one place they are made).

    Figures: ``sum``: max_dev_db, at_hz, ripple_db, limit_db, muted (every
    band muted); ``crossings``: limit_deg, floor_db, checked (how many
    crossings are above the floor), worst (the checked
    :class:`CrossingResult` with the largest phase difference, or None),
    failing (those beyond the limit); ``headroom``: limit_db, worst (index
    of the active band with the highest peak, or None), over (indices of the
    active bands above the limit).
    """
    a = project.analysis
    muted = not any(active)
    checks = [CheckResult("sum", _state(flat_ok and not muted, True), True,
                          {"max_dev_db": max_dev, "at_hz": at, "ripple_db": ripple,
                           "limit_db": a.flatness_db, "muted": muted})]
    checked = [c for c in crossings if c.checked]
    failing = tuple(c for c in checked if not c.ok)
    worst = max(checked, key=lambda c: abs(c.phase_diff_deg)) if checked else None
    checks.append(CheckResult("crossings", _state(not failing, True), True,
                              {"limit_deg": a.phase_deg, "floor_db": a.crossing_floor_db,
                               "checked": len(checked), "worst": worst, "failing": failing}))
    live = [i for i, b in enumerate(bands) if active[i]]
    over = tuple(i for i in live if bands[i].peak_gain_db > config.HEADROOM_LIMIT_DB)
    top = max(live, key=lambda i: bands[i].peak_gain_db) if live else None
    checks.append(CheckResult("headroom", _state(not over, a.enforce_headroom),
                              a.enforce_headroom,
                              {"limit_db": config.HEADROOM_LIMIT_DB, "worst": top, "over": over}))
    return tuple(checks)


#: Latencies closer than this (samples) count as equal (see :mod:`planner.config`).
LATENCY_TOL_SAMPLES = config.LATENCY_TOL_SAMPLES


def _fmt_samples(x: float) -> str:
    return f"{x:.0f}" if abs(x - round(x)) < 1e-9 else f"{x:.3f}"


def _latency_warnings(r: Report) -> list[Warning_]:
    """Active bands whose latencies differ, when an FIR is among them.

    Each band that leads the latest one gets a warning naming both, the
    difference in samples and ms, and the delay_ms that would align it.
    Projects of IIR bands only are left alone: there a difference of
    delay_ms is a choice (driver alignment), not an FIR's latency.
    """
    p, fs = r.project, r.project.sample_rate
    act = [i for i, on in enumerate(r.active) if on]
    if not any(r.designs[i].fir is not None for i in act) or r.latencies_agree:
        return []

    def what(i):
        d = r.designs[i]
        if d.fir is None:
            return f"IIR, latency {_fmt_samples(d.latency_samples)} samples"
        return f"FIR, latency {_fmt_samples(d.latency_samples)} samples"

    late = max(act, key=lambda i: r.designs[i].latency_samples)
    top = r.designs[late].latency_samples
    out = []
    for i in act:
        diff = top - r.designs[i].latency_samples
        if diff <= LATENCY_TOL_SAMPLES:
            continue
        ms = 1000.0 * diff / fs
        name = p.bands[i].name
        new = p.bands[i].delay_ms + ms
        out.append(Warning_(
            f"band {name} ({what(i)}) leads band {p.bands[late].name} ({what(late)}) by "
            f"{_fmt_samples(diff)} samples ({ms:.6g} ms): add delay_ms {ms:.6g} to {name}"
            + (f" (making it {new:.6g})" if p.bands[i].delay_ms else ""),
            band=i, code="latency"))
    return out


def _kind_warnings(r: Report) -> list[Warning_]:
    """Warnings each filter kind raises about its filters across the active bands.

    A kind with ``project_warnings`` (the bands of a complementary FIR split,
    which must add up to a pure delay) is given every live filter of it in
    an active band.
    """
    p = r.project
    found: dict = {}
    for i, on in enumerate(r.active):
        if not on:
            continue
        for j, f in enumerate(p.bands[i].filters):
            kind = fk.kind_of(f)
            if not f.bypass and kind.project_warnings is not None:
                found.setdefault(kind.key, (kind, []))[1].append((i, p.bands[i].name, j, f.params))
    return [Warning_(w.text, w.band, w.filter, w.code)
            for kind, items in found.values() for w in kind.project_warnings(items)]


def _warnings(r: Report) -> list[Warning_]:
    """Plain-language warnings about the sum, the crossings, headroom and risky filters."""
    p, a = r.project, r.project.analysis
    out: list[Warning_] = []
    if not any(r.active):
        out.append(Warning_("every band is muted: nothing is summed", code="all-muted"))
        return out
    out.extend(_kind_warnings(r))
    out.extend(_latency_warnings(r))
    if not r.flat_ok:
        out.append(Warning_(
            f"the sum deviates by {r.max_dev_db:+.2f} dB at {format_hz(r.at_hz)} "
            f"(limit +/-{a.flatness_db:g} dB)", code="flatness"))
    for c in r.checked_crossings:
        if c.ok:
            continue
        deg = abs(c.phase_diff_deg)
        where = f"bands {c.bands[0]} and {c.bands[1]} are {deg:.0f} deg apart at {format_hz(c.freq_hz)}"
        if deg >= config.INVERT_HINT_DEG:
            hint = "try inverting one"
        else:
            hint = "try matching the slopes of the two filters, or adjust delay_ms"
        out.append(Warning_(f"{where}: {hint}", band=c.band_index[1], code="phase"))
    for i in r.check("headroom").figures["over"]:
        b = r.bands[i]
        out.append(Warning_(
            f"band {b.name} peaks at {b.peak_gain_db:+.1f} dB near {format_hz(b.peak_at_hz)}: "
            f"lower its gain by {b.peak_gain_db:.1f} dB (or attenuate its input) "
            "so that it cannot clip", band=i, code="headroom"))
    for i, band in enumerate(p.bands):
        live = [(j, f) for j, f in enumerate(band.filters) if not f.bypass]
        for j, f in live:
            g = f.params.get("gain_db", 0.0)
            if f.type in ("peaking", "low_shelf", "high_shelf") and g > config.BOOST_WARN_DB:
                out.append(Warning_(
                    f"band {band.name}, filter {j + 1}: a {g:+.1f} dB boost drives the driver "
                    "harder and eats headroom; check the manufacturer's limits",
                    band=i, filter=j, code="boost"))
        hps = [(j, f) for j, f in live if f.type == "highpass"]
        if hps:
            j, top = max(hps, key=lambda jf: jf[1].params["freq"])
            order = top.params.get("order", 2)
            if (top.params["freq"] >= config.TWEETER_HIGHPASS_HZ
                    and order < config.TWEETER_MIN_ORDER and top.family != "fir"):
                # Common practice, no published source: a tweeter wants a
                # highpass of at least 12 dB/octave.
                out.append(Warning_(
                    f"band {band.name} is protected only by a first-order (6 dB/octave) "
                    f"highpass at {format_hz(top.params['freq'])}: a tweeter usually needs "
                    "12 dB/octave or more", band=i, filter=j, code="shallow-highpass"))
    from planner.delays import fraction_warnings  # (imports this module)
    out.extend(fraction_warnings(r))
    return out
