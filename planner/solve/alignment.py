"""Alignment: the band delays, polarities, trims and crossover moves that make the sum flat.

The objective, over the analysis grid, is the mean square deviation (dB) of
the summed level from its target (flat: 0 dB), weighted by log-frequency
spacing so that every octave counts alike, plus, as a second objective, the
phase difference between the two bands of each checked crossing relative to
the phase limit, over the crossing's overlap (the frequencies where the two
levels are within :data:`OVERLAP_DB` of each other, the crossing itself
among them)::

    J = sum_f w_f (L(f) - T(f))^2
        + PHASE_WEIGHT * mean_c sum_{f in overlap c} w_cf (phi_c(f) / phi_limit)^2

Counting the whole overlap, not only the crossing frequency, is what tells
a polarity inversion from a delay of half a period: both put the bands in
phase at the crossing, only the inversion keeps them so on either side.

Delays, trims and polarities change each band's response by a factor
(``g e^{-j w d}``, ``-1``), so for them the responses are computed once and
each trial costs one weighted sum over the grid. Polarity is a discrete
choice and is tried exhaustively (every pattern, the first band's fixed) up
to :data:`EXHAUSTIVE_BANDS` bands, then one band at a time. For each pattern
the delays are found by a coarse scan of each band's delay in turn (the
objective is periodic in the crossover period and has many local minima),
then delays and trims together by L-BFGS-B [1]_ within the bounds.

Crossover frequencies and all-pass frequencies, when allowed to move, need
the filters redesigned: each is searched by bounded scalar minimisation
(Brent's method on log frequency), each trial a full analysis with the
delay and trim search inside it.

The result is checked by :func:`planner.engine.analyse` like any project,
and is returned only when its objective is lower than the input's: the
solver never hands back a worse project.

References
----------
.. [1] J. Nocedal and S. J. Wright, "Numerical Optimization", 2nd ed.,
   Springer, 2006, ch. 7 (limited-memory BFGS with bounds).
.. [2] S. H. Linkwitz, "Active Crossover Networks for Noncoincident
   Drivers", J. Audio Eng. Soc., vol. 24, no. 1, 1976 (delays that put the
   drivers' acoustic centres in one plane).
.. [3] R. P. Brent, "Algorithms for Minimization without Derivatives",
   Prentice-Hall, 1973 (the bounded scalar search).
"""

from __future__ import annotations

import itertools
from dataclasses import dataclass, field, replace

import numpy as np
from scipy import optimize

from planner import edits, engine, progress
from planner.crossovers import crossover_points, move_crossover
from planner.defaults import (ALIGN_DEFAULT, ALIGN_FREQ_OCTAVES, ALIGN_MAX_DELAY_MS,
                               ALIGN_TRIM_DB, ALIGN_VARIABLES)
from planner.dsp import analysis as an
from planner.dsp import fit as dfit
from planner.errors import ProjectError
from planner.model import Project

__all__ = ["VARIABLES", "EXHAUSTIVE_BANDS", "PHASE_WEIGHT", "Bounds", "Alignment", "align",
           "objective"]

#: What alignment may change: band delays, polarities, level trims,
#: crossover frequencies, all-pass frequencies.
VARIABLES = ALIGN_VARIABLES
#: Up to this many bands every polarity pattern is tried.
EXHAUSTIVE_BANDS = 6
#: Weight of the crossing-phase objective beside the flatness one (a
#: crossing at the phase limit costs as much as a 1 dB deviation everywhere).
PHASE_WEIGHT = 1.0
#: The overlap of a crossing, where its phase difference counts: the
#: frequencies where the two bands' levels are within this many dB.
OVERLAP_DB = 6.0
#: Steps of the coarse delay scan per period of the band's highest crossing.
SCAN_STEPS = 32
#: A frequency moves only when that lowers the objective by this fraction,
#: and a result is kept only when it is this much better than the input:
#: changes that buy less are noise.
MIN_GAIN = 0.01
#: Two frequencies this close (relative) are the same for ``Bounds.move_hz``.
_MOVE_REL = 0.01


@dataclass(frozen=True)
class Bounds:
    """The limits of a search (:meth:`of` gives a project's own, its ``solve`` section).

    Attributes
    ----------
    max_delay_ms : float
        The largest delay a band may get (ms); a band that already has more
        keeps its own as its limit.
    trim_db : float
        How far a band's level may be trimmed either way (dB).
    freq_octaves : float
        How far a crossover or all-pass frequency may move either way (octaves).
    move_hz : tuple of float or None
        The crossover and all-pass frequencies (Hz, as they are in the
        input) that may move; None: all of them.
    """

    max_delay_ms: float = ALIGN_MAX_DELAY_MS
    trim_db: float = ALIGN_TRIM_DB
    freq_octaves: float = ALIGN_FREQ_OCTAVES
    move_hz: tuple | None = None

    def __post_init__(self):
        for name, lo, hi in (("max_delay_ms", 0.0, 1000.0), ("trim_db", 0.0, 40.0),
                             ("freq_octaves", 0.0, 2.0)):
            v = getattr(self, name)
            if not (np.isfinite(v) and lo <= v <= hi):
                raise ProjectError(f"must be within {lo:g} .. {hi:g}, not {v:g}", field=name)

    @classmethod
    def of(cls, project: Project, move_hz: tuple | None = None) -> "Bounds":
        """The bounds the project's ``solve`` section sets (the defaults where it is silent)."""
        s = project.solve
        return cls(s.max_delay_ms, s.trim_db, s.freq_octaves, move_hz)

    def may_move(self, freq_hz: float) -> bool:
        if self.move_hz is None:
            return True
        return any(abs(freq_hz - m) <= _MOVE_REL * m for m in self.move_hz)


@dataclass
class Alignment:
    """What :func:`align` found.

    Attributes
    ----------
    before, after : engine.Report
        The checks of the input and of the result (``after`` is ``before``
        when nothing better was found).
    project : Project
        The aligned project (the input itself when ``improved`` is false).
    improved : bool
    changes : list of str
        One line per change, e.g. ``"tweeter: delay_ms 0 -> 0.117"``.
    at_bounds : list of str
        The bounds that stopped the search (a delay, trim or frequency that
        ended on its limit).
    objective_before, objective_after : float
        The objective (module notes) of the input and of the result.
    latency_added_ms : float
        The change of the largest band delay (ms; negative when the
        alignment takes latency away).
    """

    before: engine.Report
    after: engine.Report
    project: Project
    improved: bool
    changes: list = field(default_factory=list)
    at_bounds: list = field(default_factory=list)
    objective_before: float = 0.0
    objective_after: float = 0.0
    latency_added_ms: float = 0.0


def _run_around(f: np.ndarray, fc: float, mask: np.ndarray) -> np.ndarray:
    """Indices of the run of true ``mask`` values around the grid point nearest ``fc``
    (that point alone when the mask is false there)."""
    k = int(np.argmin(np.abs(np.log(f / fc))))
    if not mask[k]:
        return np.array([k])
    breaks = np.flatnonzero(~mask)
    lo = breaks[breaks < k].max() + 1 if np.any(breaks < k) else 0
    hi = breaks[breaks > k].min() if np.any(breaks > k) else len(f)
    return np.arange(lo, hi)


class _Problem:
    """The band responses of one analysis, with delays, trims and polarities as factors.

    Delays are absolute (s, the band's whole delay); trims (dB) and signs
    are relative to the analysed project.
    """

    def __init__(self, report: engine.Report, target_db: np.ndarray):
        p = report.project
        self.fs = float(p.sample_rate)
        self.f = report.freqs_hz
        self.wt = dfit.log_weights(self.f)
        self.w = 2 * np.pi * self.f / self.fs
        self.act = [int(i) for i in np.flatnonzero(report.active)]
        self.h = report.responses.h[self.act]           # as checked: own gain, delay, sign
        self.d0 = np.array([p.bands[i].delay_ms / 1e3 for i in self.act])
        self.target = np.asarray(target_db, float)
        self.limit = float(p.analysis.phase_deg)
        self.cross = [(self.act.index(c.band_index[0]), self.act.index(c.band_index[1]),
                       c.freq_hz) for c in report.checked_crossings]
        # Each crossing's overlap: the run of frequencies around it where the two
        # bands are within OVERLAP_DB of each other and neither is more than
        # OVERLAP_DB below its level at the crossing (not where both are stopped).
        self.overlaps = []
        lv = an.db(self.h)
        for c in report.checked_crossings:
            a, b = self.act.index(c.band_index[0]), self.act.index(c.band_index[1])
            m = _run_around(self.f, c.freq_hz, (np.abs(lv[a] - lv[b]) <= OVERLAP_DB)
                            & (np.minimum(lv[a], lv[b]) >= c.level_db - OVERLAP_DB))
            wt = self.wt[m] / self.wt[m].sum() if self.wt[m].sum() > 0 else \
                np.full(len(m), 1.0 / len(m))
            base = np.angle(self.h[a, m]) - np.angle(self.h[b, m])
            self.overlaps.append((a, b, self.w[m], base, wt))

    @property
    def n(self) -> int:
        return len(self.act)

    def batch(self, delays_s: np.ndarray, gains_db: np.ndarray, signs) -> np.ndarray:
        """The objective for each row of ``delays_s`` (m, n), gains (n,) and signs (n,)."""
        dd = (np.atleast_2d(delays_s) - self.d0) * self.fs          # (m, n) samples
        g = 10 ** (np.asarray(gains_db, float) / 20) * np.asarray(signs, float)
        s = np.zeros((dd.shape[0], len(self.f)), dtype=complex)
        for k in range(self.n):                  # a loop over bands, not frequencies
            s += (g[k] * self.h[k]) * np.exp(-1j * np.outer(dd[:, k], self.w))
        return self._score(s, dd, signs)

    def scan(self, k: int, delays_k_s: np.ndarray, delays_s: np.ndarray, gains_db, signs):
        """:meth:`batch` for the rows that are ``delays_s`` (n,) with band ``k``'s delay
        replaced by each of ``delays_k_s`` (m,): the other bands' sum is made once, so
        only band ``k``'s term is evaluated per row."""
        d = (np.asarray(delays_s, float) - self.d0) * self.fs        # (n,) samples
        dk = (np.asarray(delays_k_s, float) - self.d0[k]) * self.fs  # (m,) samples
        g = 10 ** (np.asarray(gains_db, float) / 20) * np.asarray(signs, float)
        rest = np.zeros(len(self.f), dtype=complex)
        for i in range(self.n):                  # a loop over bands, not frequencies
            if i != k:
                rest += (g[i] * self.h[i]) * np.exp(-1j * d[i] * self.w)
        s = rest[None] + (g[k] * self.h[k]) * np.exp(-1j * np.outer(dk, self.w))
        dd = np.repeat(d[None], len(dk), axis=0)
        dd[:, k] = dk
        return self._score(s, dd, signs)

    def _score(self, s: np.ndarray, dd: np.ndarray, signs) -> np.ndarray:
        """The objective of sums ``s`` (m, n_freqs) made with band delays ``dd`` (m, n)."""
        j = ((an.db(s) - self.target) ** 2) @ self.wt
        if self.overlaps:
            flip = np.where(np.asarray(signs) < 0, np.pi, 0.0)
            ph = 0.0
            for a, b, w, base, wt in self.overlaps:     # a loop over crossings
                diff = base[None] - np.outer(dd[:, a] - dd[:, b], w) + (flip[a] - flip[b])
                ph = ph + ((an.wrap_deg(np.degrees(diff)) / self.limit) ** 2) @ wt
            j = j + PHASE_WEIGHT * ph / len(self.overlaps)
        return j

    def value(self, delays_s, gains_db, signs) -> float:
        return float(self.batch(np.asarray(delays_s, float)[None], gains_db, signs)[0])


def objective(report: engine.Report, target_db=None) -> float:
    """The alignment objective (module notes) of an analysed project.

    Parameters
    ----------
    report : engine.Report
    target_db : ndarray, optional
        The target on ``report.freqs_hz`` (default 0 dB).
    """
    t = np.zeros(len(report.freqs_hz)) if target_db is None else target_db
    prob = _Problem(report, t)
    if prob.n == 0:
        return float("inf")
    return prob.value(prob.d0, np.zeros(prob.n), np.ones(prob.n))


def _periods(prob: _Problem) -> np.ndarray:
    """Per band, the period (s) of the highest crossing it takes part in (1 ms without one)."""
    out = np.full(prob.n, 1e-3)
    for a, b, fc in prob.cross:
        out[a] = min(out[a], 1.0 / fc)
        out[b] = min(out[b], 1.0 / fc)
    return out


def _delay_limits(prob: _Problem, bounds: Bounds) -> np.ndarray:
    return np.maximum(bounds.max_delay_ms / 1e3, prob.d0)


def _search_continuous(prob: _Problem, signs, vary: set, bounds: Bounds, d0, g0):
    """Delays and trims for one polarity pattern: a coarse delay scan, then L-BFGS-B."""
    n = prob.n
    d, g = np.array(d0, float), np.array(g0, float)
    dmax = _delay_limits(prob, bounds)
    if "delay" in vary:
        per = _periods(prob)
        for _ in range(2):                        # two passes, one band at a time
            for k in range(n):
                cands = np.unique(np.r_[np.arange(0.0, dmax[k] + 1e-12, per[k] / SCAN_STEPS),
                                        d[k]])
                d[k] = cands[int(np.argmin(prob.scan(k, cands, d, g, signs)))]
    x0, lo, hi = [], [], []
    if "delay" in vary:
        x0 += list(d * 1e3)
        lo += [0.0] * n
        hi += list(dmax * 1e3)
    if "gain" in vary:
        x0 += list(g)
        lo += [-bounds.trim_db] * n
        hi += [bounds.trim_db] * n
    if not x0:
        return d, g, prob.value(d, g, signs)

    def unpack(x):
        dd = np.asarray(x[:n]) / 1e3 if "delay" in vary else d
        gg = np.asarray(x[-n:]) if "gain" in vary else g
        return dd, gg

    res = optimize.minimize(lambda x: prob.value(*unpack(x), signs), np.array(x0),
                            method="L-BFGS-B", bounds=list(zip(lo, hi)))
    dd, gg = unpack(np.clip(res.x, lo, hi))
    j = prob.value(dd, gg, signs)
    j_scan = prob.value(d, g, signs)
    return (dd, gg, j) if j <= j_scan else (d, g, j_scan)


def _patterns(n: int) -> list:
    if n <= EXHAUSTIVE_BANDS:
        return [np.array((1.0,) + rest) for rest in itertools.product((1.0, -1.0), repeat=n - 1)]
    return [np.ones(n)]


def _inner(report: engine.Report, target_db, vary: set, bounds: Bounds, share=(0.0, 1.0)):
    """The best delays, trims and polarities for the report's band responses.

    Returns ``((j, delays_s, trims_db, signs), problem)``; delays absolute.
    """
    prob = _Problem(report, target_db)
    n = prob.n
    zg, ones = np.zeros(n), np.ones(n)
    best = (prob.value(prob.d0, zg, ones), prob.d0.copy(), zg, ones)
    if n == 0:
        return best, prob
    pats = _patterns(n) if "invert" in vary else [ones]
    for k, s in enumerate(pats):                  # a loop over polarity patterns
        if progress.cancelled():
            break
        d, g, j = _search_continuous(prob, s, vary, bounds, prob.d0, zg)
        if j < best[0] - 1e-12:
            best = (j, d, g, s)
        progress.report(share[0] + share[1] * (k + 1) / len(pats),
                        "align: delays, polarities and trims")
    if "invert" in vary and n > EXHAUSTIVE_BANDS:
        for k in range(1, n):                     # one band at a time beyond that
            if progress.cancelled():
                break
            s = best[3].copy()
            s[k] = -s[k]
            d, g, j = _search_continuous(prob, s, vary, bounds, best[1], best[2])
            if j < best[0] - 1e-12:
                best = (j, d, g, s)
    return best, prob


def _apply(project: Project, prob: _Problem, delays_s, gains_db, signs) -> Project:
    """The project with the found delays, trims (added) and polarity flips.

    A delay every active band got on top of the input's smallest is taken
    off again: it would change nothing in the sum but add latency.
    """
    d = np.asarray(delays_s, float)
    if len(d):
        d = d - max(0.0, float(d.min() - prob.d0.min()))
    bands = list(project.bands)
    for k, i in enumerate(prob.act):
        b = bands[i]
        bands[i] = replace(b, delay_ms=round(float(d[k]) * 1e3, 6),
                           gain_db=round(b.gain_db + float(gains_db[k]), 4),
                           invert=b.invert if signs[k] > 0 else not b.invert)
    return replace(project, bands=tuple(bands))


def _allpasses(project: Project, bounds: Bounds) -> list[tuple[int, int, float]]:
    """(band, filter, freq_hz) of every all-pass that may move."""
    return [(i, j, float(f.params["freq"])) for i, b in enumerate(project.bands)
            for j, f in enumerate(b.filters)
            if f.type == "allpass" and bounds.may_move(float(f.params["freq"]))]


def _move(project: Project, target_fn, vary: set, bounds: Bounds, what: str) -> Project:
    """Crossover points (``what="freq"``) or all-passes moved one at a time, each by a
    bounded search on log frequency with the delay and trim search inside every trial."""
    inner_vary = vary - {"freq", "allpass", "invert"}
    p = project

    def score(cand: Project) -> float:
        r = engine.analyse(cand, warnings=False)     # a trial: its figures only
        (j, *_), _ = _inner(r, target_fn(r.freqs_hz), inner_vary, bounds)
        return j

    if what == "freq":
        items = [pt.freq_hz for pt in crossover_points(project) if bounds.may_move(pt.freq_hz)]
    else:
        items = _allpasses(project, bounds)
    for k, item in enumerate(items):              # a loop over the points that may move
        if progress.cancelled():
            break
        if what == "freq":
            base = item
            pt0 = _point_near(p, base)
            if pt0 is None:
                continue

            def make(hz, pt0=pt0, p=p):
                return move_crossover(p, pt0, hz)
        else:
            bi, fi, base = item

            def make(hz, bi=bi, fi=fi, p=p):
                return edits.set_filter_params(p, bi, fi, freq=hz)

        lo, hi = np.log(base) - bounds.freq_octaves * np.log(2), np.log(base) + \
            bounds.freq_octaves * np.log(2)

        def trial(lf, make=make):
            try:
                return score(make(float(np.exp(lf))))
            except ProjectError:
                return np.inf

        j_here = score(p)
        res = optimize.minimize_scalar(trial, bounds=(lo, hi), method="bounded",
                                       options={"xatol": 2e-3, "maxiter": 25})
        if np.isfinite(res.fun) and res.fun < j_here * (1 - 5 * MIN_GAIN):
            p = make(float(np.exp(res.x)))
        progress.report(0.1 + 0.6 * (k + 1) / len(items), f"align: moving {what}")
    return p


def _point_near(project: Project, freq_hz: float):
    """The crossover point of ``project`` at ``freq_hz`` (None when it has none there)."""
    for q in crossover_points(project):
        if abs(q.freq_hz - freq_hz) <= 1e-6 * freq_hz:
            return q
    return None


def align(project: Project, vary=ALIGN_DEFAULT, bounds: Bounds = Bounds(),
          target_fn=None) -> Alignment:
    """Search delays, polarities, trims and (optionally) frequencies for a flat sum.

    Parameters
    ----------
    project : Project
        Designed or not; analysed with :func:`planner.engine.analyse` (the
        acoustic sum when its bands have drivers).
    vary : sequence of str
        Some of :data:`VARIABLES`.
    bounds : Bounds
    target_fn : callable ``freqs_hz -> dB``, optional
        The curve the sum should follow (default flat, 0 dB).

    Returns
    -------
    Alignment
        Never worse than the input: when no lower objective is found the
        input comes back with ``improved`` false.

    Raises
    ------
    ProjectError
        ``vary`` names something else, or names nothing.
    """
    vary = set(vary)
    bad = vary - set(VARIABLES)
    if bad or not vary:
        raise ProjectError(f"must be some of {', '.join(VARIABLES)}, not "
                           f"{', '.join(sorted(bad)) or 'nothing'}", field="vary")
    target_fn = target_fn or (lambda f: np.zeros(len(f)))
    before = engine.analyse(project)
    j0 = objective(before, target_fn(before.freqs_hz))
    p = project
    if "invert" in vary and ("freq" in vary or "allpass" in vary):
        # The polarity first (frequency trials keep it fixed), then the moves.
        (_, _, _, s), prob = _inner(before, target_fn(before.freqs_hz), {"invert", "delay"},
                                    bounds, share=(0.0, 0.1))
        p = _apply(p, prob, prob.d0, np.zeros(prob.n), s)
    for what in ("freq", "allpass"):
        if what in vary:
            p = _move(p, target_fn, vary, bounds, what)
    base = before if p is project else engine.analyse(p, warnings=False)
    (_, d, g, s), prob = _inner(base, target_fn(base.freqs_hz), vary, bounds, share=(0.7, 0.3))
    cand = _apply(p, prob, d, g, s)
    after = engine.analyse(cand)
    j1 = objective(after, target_fn(after.freqs_hz))
    progress.report(1.0, "align")
    if not j1 < j0 * (1 - MIN_GAIN):
        return Alignment(before, before, project, False, [], [], j0, j0, 0.0)
    lat0 = max((b.delay_ms for b in project.bands), default=0.0)
    lat1 = max((b.delay_ms for b in cand.bands), default=0.0)
    return Alignment(before, after, cand, True, changes(project, cand),
                     _at_bounds(project, cand, vary, bounds), j0, j1, lat1 - lat0)


def changes(old: Project, new: Project) -> list[str]:
    """One line per band delay, trim, polarity and filter frequency that differs."""
    out = []
    for a, b in zip(old.bands, new.bands):
        if abs(a.delay_ms - b.delay_ms) > 1e-9:
            out.append(f"{a.name}: delay_ms {a.delay_ms:.6g} -> {b.delay_ms:.6g}")
        if abs(a.gain_db - b.gain_db) > 1e-6:
            out.append(f"{a.name}: gain_db {a.gain_db:+.2f} -> {b.gain_db:+.2f}")
        if a.invert != b.invert:
            out.append(f"{a.name}: invert {str(a.invert).lower()} -> {str(b.invert).lower()}")
        for j, (fa, fb) in enumerate(zip(a.filters, b.filters)):
            for key in ("freq", "crossovers"):
                if key in fa.params and fa.params[key] != fb.params.get(key):
                    out.append(f"{a.name}: filters[{j}] {fa.type} {key} "
                               f"{_hz(fa.params[key])} -> {_hz(fb.params[key])}")
    return out


def _hz(v) -> str:
    if isinstance(v, (list, tuple)):
        return "[" + ", ".join(f"{float(x):.6g}" for x in v) + "]"
    return f"{float(v):.6g} Hz"


def _at_bounds(old: Project, new: Project, vary: set, bounds: Bounds) -> list[str]:
    out = []
    for a, b in zip(old.bands, new.bands):
        lim = max(bounds.max_delay_ms, a.delay_ms)
        if "delay" in vary and lim > 0 and b.delay_ms >= lim - 1e-4:
            out.append(f"{b.name}: delay at its limit, {lim:g} ms")
        if "gain" in vary and bounds.trim_db > 0 and \
                abs(b.gain_db - a.gain_db) >= bounds.trim_db - 1e-3:
            out.append(f"{b.name}: trim at its limit, {b.gain_db - a.gain_db:+.2f} dB")
    if vary & {"freq", "allpass"} and bounds.freq_octaves > 0:
        for a, b in zip(old.bands, new.bands):
            for j, (fa, fb) in enumerate(zip(a.filters, b.filters)):
                if "freq" in fa.params and fa.params["freq"] != fb.params.get("freq"):
                    octs = abs(np.log2(float(fb.params["freq"]) / float(fa.params["freq"])))
                    if octs >= bounds.freq_octaves - 2e-3:
                        out.append(f"{b.name}: filters[{j}] {fa.type} moved to its limit, "
                                   f"{float(fb.params['freq']):.6g} Hz "
                                   f"({bounds.freq_octaves:g} octave)")
    return out
