"""From a project to its check report: the grid, the responses, the checks and warnings.

The summed response is checked against the project's limits on a grid made
for it: log-spaced points plus the filters' frequencies and the narrow
features of every section, refined where the sum changes fast and at its
extremes (:mod:`planner.dsp.grid`), so that the reported figures are those
of the response, not of the grid.

Definitions (:mod:`planner.dsp.analysis`): the flatness is the largest
deviation of the sum's level ``20 log10 |sum|`` from the target curve
(``analysis.target``, :mod:`planner.targets`; 0 dB when none) on the grid; a
crossing is where two active bands' levels in dB are equal, with the phase
difference (first band in project order minus the second, wrapped to
(-180, 180] deg) and the level there.

Filters marked ``voicing`` (deliberate EQ) are applied to the bands, but the
crossover checks (the sum against the target, the phase at the crossings)
are judged on the project with them set aside
(:meth:`planner.model.Project.without_voicing`); the voiced sum, voicing
included, is reported against the target beside them (information). The
grid is then the union of the grids made for both sums. Headroom, the
responses for plots and the warnings about filters are those of the bands
as they run, voicing included.
"""

from __future__ import annotations

from dataclasses import replace

import numpy as np

from planner import config
from planner import filters as fk
from planner.dsp import analysis as an
from planner.dsp import grid as dgrid
from planner.dsp.response import BandResponses, log_derivative
from planner.engine.acoustic import AcousticPoints, Drivers, band_acoustics
from planner.engine.design import BandDesign, design_band, evaluate, point_evaluator
from planner.engine.result import (BandResult, CheckResult, CrossingResult, Report,
                                   check_state, sum_within)
from planner.engine.warnings import PENDING_HINT, warnings_of
from planner.errors import CrossplanError, ProjectError
from planner.model import Band, Project
from planner.targets import project_target

__all__ = ["analyse", "check_points", "hints_pending", "phase_hints", "start_grid", "target_level",
           "voicing_labels"]


def voicing_labels(project: Project) -> list[str]:
    """``"tweeter: high shelf 3 kHz +3 dB"`` for every applied voicing filter, project order."""
    return [f"{b.name}: {fk.label(f)}" for b in project.bands for f in b.filters
            if f.voicing and not f.bypass]


def start_grid(project: Project, designs: list[BandDesign] | None = None) -> np.ndarray:
    """The starting grid: ``analysis.points`` log-spaced points, the filters' own frequencies
    (at most :data:`planner.config.GRID_NAMED_MAX`) and, given the designs, points around
    the narrow features of every section (:func:`planner.dsp.grid.feature_points`)."""
    a = project.analysis
    live = [f for b in project.bands for f in b.filters if not f.bypass]
    extra = [f.params[k] for f in live for k in ("freq", "freq2") if k in f.params]
    extra += [x for f in live for x in f.params.get("crossovers", ())]
    extra = [np.asarray(list(dict.fromkeys(extra))[:config.GRID_NAMED_MAX], dtype=float)]
    if designs:
        sos = [d.sos for d in designs if len(d.sos)]
        if sos:
            f0, bw = dgrid.narrow_features(np.vstack(sos), project.sample_rate)
            extra.append(dgrid.feature_points(f0, bw, a.f_min, a.f_max, a.points))
    return an.log_grid(a.f_min, a.f_max, a.points, np.concatenate(extra))


def _merge(freqs: np.ndarray, h: np.ndarray, new_f: np.ndarray, new_h: np.ndarray):
    """The grid and responses with new points (and their responses) merged in order."""
    f = np.concatenate([freqs, new_f])
    order = np.argsort(f, kind="stable")
    f = f[order]
    keep = np.concatenate([[True], np.diff(f) > 0])
    return f[keep], np.concatenate([h, new_h], axis=1)[:, order][:, keep]


def target_level(project: Project):
    """The target curve of ``project`` as a function ``freqs_hz -> dB``, or None (flat).

    Raises
    ------
    ProjectError
        ``field='analysis.target'``: the curve cannot be read (a file gone since loading).
    """
    return None if project.analysis.target is None else project_target(project)


def _sample(project: Project, designs: list[BandDesign], active: list[bool], response, point,
            target=None, start=None):
    """The analysis grid and every band's response on it.

    Where the sum's level is looked at (fast changes, extremes) it is taken
    relative to ``target`` (a function ``freqs_hz -> dB``; None: 0 dB), so
    that the grid resolves the deviation the check reports.
    ``response(f)`` gives the bands' responses at ``f`` (n_bands rows), and
    may append more rows (their logarithmic derivatives) that are carried
    along through every merge; the grid is chosen from the first n_bands.

    The starting grid (:func:`start_grid`) is evaluated; then, for at most
    :data:`~planner.config.GRID_REFINE_PASSES` passes, the cells where the
    sum's level changes by more than :data:`~planner.config.GRID_REFINE_STEP_DB`
    are split (:func:`planner.dsp.grid.fast_cells`); then the largest local
    maxima and minima of the sum's level and each band's peak are refined by
    exact evaluation (:func:`planner.dsp.grid.zoom_extremes`) and added. The
    grid has at most :func:`planner.config.grid_cap` points. ``start``: the starting grid
    and ``response`` on it, when the caller has them already.
    """
    freqs, h = start if start is not None else (f := start_grid(project, designs), response(f))
    act = np.asarray(active, dtype=bool)
    nb = len(designs)

    def tdb(f):
        return 0.0 if target is None else target(f)

    def sum_db(hh, f):
        return (an.db(hh[:nb][act].sum(axis=0)) - tdb(f)) if act.any() else np.zeros(hh.shape[1])

    lv = sum_db(h, freqs)
    for _ in range(config.GRID_REFINE_PASSES if act.any() else 0):
        new = dgrid.fast_cells(freqs, lv[None, :], np.array([-np.inf]))
        if not len(new):
            break
        freqs, h = _merge(freqs, h, new, response(new))
        lv = sum_db(h, freqs)

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
    peaks = np.argmax(np.abs(h[:nb]), axis=1)
    cands += [(k, 1.0, int(peaks[k])) for k in range(len(designs))]
    row = np.array([c[0] for c in cands])
    sign = np.array([c[1] for c in cands])
    idx = np.array([c[2] for c in cands])
    n = len(freqs)
    lo, hi = freqs[np.maximum(idx - 1, 0)], freqs[np.minimum(idx + 1, n - 1)]
    is_sum = row < 0
    start = np.where(is_sum, lv[idx], an.db(h[np.maximum(row, 0), idx]))

    def value(c, f):
        # Every band at every trial point, by the matrix-product path: the sum candidates
        # need every active band there anyway.
        hv = point.all_bands(f)
        band = np.maximum(row[c], 0)
        out = np.where(is_sum[c], (an.db(hv[act].sum(axis=0)) - tdb(f)) if act.any() else 0.0,
                       an.db(hv[band, np.arange(len(c))]))
        return sign[c] * out

    x, _ = dgrid.zoom_extremes(value, lo, hi, freqs[idx], sign * start)
    x = np.unique(x[(x > freqs[0]) & (x < freqs[-1])])
    x = x[~np.isin(x, freqs)]
    if len(x):
        freqs, h = _merge(freqs, h, x, response(x))
    return freqs, h


def _targets(project: Project, freqs: np.ndarray) -> list:
    """Each band's target chain (its acoustic goal) on ``freqs``, or None."""
    out = []
    for b in project.bands:
        if not b.target:
            out.append(None)
            continue
        d = design_band(Band(b.name, filters=b.target), project.sample_rate)
        out.append(evaluate([d], freqs, project.sample_rate).h[0])
    return out


def _evaluators(project: Project, designs: list[BandDesign], group_delay: bool = False):
    """(drivers or None, responses on a grid, point evaluator, start): electrical, or
    acoustic when a band has a driver (:mod:`planner.engine.acoustic`). With
    ``group_delay`` the grid responses carry the bands' electrical logarithmic derivatives
    as extra rows, evaluated in the same pass over the sections. ``start`` is the starting
    grid and the responses on it when they were needed here (the drivers' levels are found
    from the electrical ones), else None."""
    fs = project.sample_rate
    electrical = point_evaluator(designs, fs)
    nb = len(designs)

    def el_response(f):
        if not group_delay:
            return evaluate(designs, f, fs).h
        r = evaluate(designs, f, fs, derivative=True)
        return np.concatenate([r.h, r.dlog])

    if not project.has_drivers:
        return None, el_response, electrical, None
    f0 = start_grid(project, designs)
    h0 = el_response(f0)
    drivers = Drivers.of(project, f0, h0[:nb])

    def response(f):
        out = el_response(f)
        out[:nb] *= drivers.all_bands(f)
        return out

    h0[:nb] *= drivers.all_bands(f0)        # response(f0), without evaluating it again
    return drivers, response, AcousticPoints(electrical, drivers), (f0, h0)


def check_points(points, n_bands: int = 2) -> int:
    """``points`` if it is a whole number of grid points the project file would take.

    The same limits as ``analysis.points`` for ``n_bands`` bands
    (:data:`planner.config.MIN_POINTS`, :func:`planner.config.max_points`); a
    ProjectError with field ``points`` otherwise.
    """
    if isinstance(points, bool) or not isinstance(points, (int, np.integer)):
        raise ProjectError(f"must be a whole number of points, not {points!r}", field="points")
    top = config.max_points(n_bands)
    if not config.MIN_POINTS <= points <= top:
        raise ProjectError(f"{points} points is outside {config.MIN_POINTS} .. {top}, the "
                           f"limits of analysis.points for {n_bands} bands", field="points")
    return int(points)


def analyse(project: Project, points: int | None = None, group_delay: bool = False,
            warnings: bool = True, hints: bool = True) -> Report:
    """Design, evaluate and check every band of ``project`` at its sample rate.

    Parameters
    ----------
    project : Project
    points : int, optional
        Grid points instead of ``project.analysis.points``.
    group_delay : bool
        The group delay will be asked for (the text report and JSON show the
        sum's): evaluate the derivative it needs in the same pass as the
        responses. Without it, the derivative is evaluated on first use, in
        a second pass; the figures are the same either way.
    warnings : bool
        Add the plain-language warnings (default). A crossing out of phase gets
        a hint found by trying candidate changes (:func:`phase_hints`).
    hints : bool
        With ``hints=False`` a crossing out of phase gets
        :data:`~planner.engine.warnings.PENDING_HINT` instead, and
        :func:`phase_hints` adds the hints later (the editor shows the check
        first).
    """
    if points is not None:
        points = check_points(points, len(project.bands))
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
    target = target_level(project)
    checked = project.without_voicing()
    voiced = checked is not project
    cdesigns = designs
    if voiced:
        cdesigns = [design_band(b, fs) for b in checked.bands]
    drivers, response, point, start = _evaluators(project, designs, group_delay)
    freqs, h = _sample(project, designs, active, response, point, target, start)
    if voiced:
        cdrivers, cresponse, cpoint, cstart = _evaluators(checked, cdesigns)
        f2, _ = _sample(checked, cdesigns, active, cresponse, cpoint, target, cstart)
        freqs = np.union1d(freqs, f2)
        h, hc = response(freqs), cresponse(freqs)
    # With group_delay the rows past the bands are their logarithmic derivatives.
    h, dl_el = h[:len(designs)], (h[len(designs):] if group_delay else None)
    if not voiced:
        cdrivers, cpoint, hc = drivers, point, h

    def dlog():
        out = dl_el
        if out is None:
            out = log_derivative([d.sos for d in designs], freqs, fs,
                                 [d.delay_samples for d in designs], [d.fir for d in designs])
        return out if drivers is None else out + drivers.log_derivative(freqs, fs)

    resp = BandResponses(freqs, h, fs, dlog)
    cresp = resp if not voiced else BandResponses(freqs, hc, fs, lambda: None)
    act_idx = [i for i, on in enumerate(active) if on]
    sum_h = resp.sum(active)
    checked_sum = cresp.sum(active)
    t_db = None if target is None else np.asarray(target(freqs), dtype=float)
    rel = 1.0 if t_db is None else 10.0 ** (-t_db / 20.0)
    if act_idx:
        max_dev, at, ripple = an.flatness(freqs, checked_sum * rel)
    else:
        max_dev, at, ripple = float("-inf"), float(freqs[0]), 0.0
    flat_ok = sum_within(max_dev, a.flatness_db)
    voiced_fig = None
    if voiced and act_idx:
        vd, vat, vr = an.flatness(freqs, sum_h * rel)
        voiced_fig = {"max_dev_db": float(vd), "at_hz": float(vat), "ripple_db": float(vr),
                      "filters": voicing_labels(project)}

    crossings: list[CrossingResult] = []
    if len(act_idx) >= 2:
        sub = cresp.h[act_idx]
        # Each crossing is refined on its own two bands, at its own trial frequencies.
        cpoint = point_evaluator([cdesigns[i] for i in act_idx], fs)
        if cdrivers is not None:
            cpoint = AcousticPoints(cpoint, cdrivers, act_idx)
        for c in an.find_crossings(freqs, sub, evaluate=cpoint):
            ia, ib = act_idx[c.a], act_idx[c.b]
            checked_c = c.level_db >= a.crossing_floor_db
            crossings.append(CrossingResult(
                (project.bands[ia].name, project.bands[ib].name), (ia, ib), c.freq_hz,
                c.phase_diff_deg, c.level_db, checked_c,
                (abs(c.phase_diff_deg) <= a.phase_deg) if checked_c else True))

    # Headroom is electrical: what the DSP's signal reaches, whatever the driver does.
    electrical = resp.h if drivers is None else evaluate(designs, freqs, fs).h
    peak, peak_at = an.peak_gain(freqs, electrical)
    acoustics = (None if drivers is None else
                 band_acoustics(drivers, project, freqs, resp.h, _targets(project, freqs)))
    bands = [BandResult(b.name, active[i], float(peak[i]), float(peak_at[i]),
                        designs[i].n_sections,
                        0 if designs[i].fir is None else len(designs[i].fir),
                        designs[i].latency_samples, 1000.0 * designs[i].latency_samples / fs,
                        designs[i].fir_linear_phase,
                        acoustic=drivers is not None and b.driver is not None,
                        acoustics=None if acoustics is None else acoustics[i])
             for i, b in enumerate(project.bands)]
    report = Report(project, designs, freqs, resp, active, sum_h, max_dev, at, ripple, flat_ok,
                    crossings, bands, checks=_checks(project, active, max_dev, at, ripple,
                                                     flat_ok, crossings, bands, voiced),
                    drivers=drivers, target_db=t_db, checked_sum_h=checked_sum,
                    checked_h=None if not voiced else cresp.h,
                    voiced=voiced_fig)
    if warnings:
        report.warnings.extend(warnings_of(report, _reanalyse if hints else None,
                                           pending=not hints))
    return report


def _reanalyse(p: Project) -> Report:
    # ``p`` is a candidate made from a report's project, so it has that report's points.
    return analyse(p, warnings=False)


def hints_pending(report: Report) -> bool:
    """Whether a phase warning of ``report`` still waits for its hint (``hints=False``)."""
    return any(w.code == "phase" and w.text.endswith(PENDING_HINT) for w in report.warnings)


def phase_hints(report: Report) -> Report:
    """``report`` with its warnings made again with the phase hints (each fix tried and
    the ones named checked), for a report analysed with ``hints=False``. A new report;
    ``report`` itself is not changed."""
    return replace(report, warnings=warnings_of(report, _reanalyse))


def _checks(project: Project, active: list[bool], max_dev: float, at: float, ripple: float,
            flat_ok: bool, crossings: list[CrossingResult],
            bands: list[BandResult], voiced: bool = False) -> tuple[CheckResult, ...]:
    """The verdicts of the sum, crossings and headroom checks (the one place they are made).

    Figures: ``sum``: max_dev_db, at_hz, ripple_db (from the target), limit_db,
    muted (every band muted), target (its name, None for flat),
    voicing_set_aside (whether voicing filters were set aside); ``crossings``: limit_deg, floor_db, checked (how many
    crossings are above the floor), worst (the checked
    :class:`CrossingResult` with the largest phase difference, or None),
    failing (those beyond the limit); ``headroom``: limit_db, worst (index
    of the active band with the highest peak, or None), over (indices of the
    active bands above the limit).
    """
    a = project.analysis
    muted = not any(active)
    checks = [CheckResult("sum", check_state(flat_ok and not muted, True), True,
                          {"max_dev_db": max_dev, "at_hz": at, "ripple_db": ripple,
                           "limit_db": a.flatness_db, "muted": muted, "target": a.target,
                           "voicing_set_aside": bool(voiced)})]
    checked = [c for c in crossings if c.checked]
    failing = tuple(c for c in checked if not c.ok)
    worst = max(checked, key=lambda c: abs(c.phase_diff_deg)) if checked else None
    checks.append(CheckResult("crossings", check_state(not failing, True), True,
                              {"limit_deg": a.phase_deg, "floor_db": a.crossing_floor_db,
                               "checked": len(checked), "worst": worst, "failing": failing}))
    live = [i for i, b in enumerate(bands) if active[i]]
    over = tuple(i for i in live if bands[i].peak_gain_db > config.HEADROOM_LIMIT_DB)
    top = max(live, key=lambda i: bands[i].peak_gain_db) if live else None
    checks.append(CheckResult("headroom", check_state(not over, a.enforce_headroom),
                              a.enforce_headroom,
                              {"limit_db": config.HEADROOM_LIMIT_DB, "worst": top, "over": over}))
    return tuple(checks)
