"""EQ balancing: the gains of a project's EQ filters, or of its bands, that follow a target.

What moves
    *EQ gains*: the ``gain_db`` of every peaking and shelf filter (not
    bypassed, not marked ``"fit": false``) in the chosen bands; their
    centres and Qs stay. A *bank* of peaking filters at ISO 266 nominal
    octave or third-octave centres (Q from the band width, Audio EQ
    Cookbook) can be added to one band first: a graphic EQ.
    *Band gains* (``split``): each band's ``gain_db``, so that the bands of
    a split recombine to the target when they must differ.

What is matched
    The level of the summed response of the active bands (the acoustic
    sum when the bands have drivers), on the project's analysis grid,
    weighted by log-frequency spacing, against the target; least squares
    on dB (:func:`planner.dsp.fit.fit_gains`), then optionally minimax
    (:func:`planner.dsp.fit.minimax_gains`). The Jacobian is exact in form:
    each filter's response is its own factor of its band, so
    ``d level / d g_k = Re((dH_band / dg_k) / S)`` in dB per dB, with the
    filter's own derivative by central differences of its design.

References
----------
.. [1] ISO 266:1997, "Acoustics - Preferred frequencies" (nominal centres).
.. [2] R. Bristow-Johnson, "Audio EQ Cookbook", W3C Working Group Note,
   2021 (peaking and shelf biquads; Q of a bandwidth in octaves).
"""

from __future__ import annotations

from dataclasses import dataclass, field, replace

import numpy as np

from planner import edits, engine, progress
from planner import filters as fk
from planner.defaults import FIT_LIMIT_DB
from planner.dsp import analysis as an
from planner.dsp import fit as dfit
from planner.dsp.response import sos_response
from planner.errors import ProjectError
from planner.model import Filter, Project
from planner.targets import Target
from planner.units import format_hz

__all__ = ["EQ_TYPES", "BANKS", "DEFAULT_LIMIT_DB", "Fit", "fit", "add_bank", "free_filters"]

#: Filter types whose gain the fit sets.
EQ_TYPES = ("peaking", "low_shelf", "high_shelf")
#: Banks of peaking filters: name -> (ISO 266 nominal centres, width in octaves).
BANKS = {"octave": (dfit.ISO_OCTAVE_HZ, 1.0), "third-octave": (dfit.ISO_THIRD_OCTAVE_HZ, 1 / 3)}
#: Gain limit of a filter (either way, dB) unless told otherwise.
DEFAULT_LIMIT_DB = FIT_LIMIT_DB
#: Tikhonov weight of the gains (dB^-2 against the weighted mean square error):
#: small enough to bias a fitted gain by well under 0.01 dB, large enough to hold
#: a filter that barely reaches the sum at 0 dB.
RIDGE = 1e-6
#: A band's EQ filter moves only where the band plays: where, at the filter's
#: centre, the band is within this many dB of the sum (a cut or boost in a
#: tweeter far below its crossover buys nothing and a boost there is a risk).
PLAYS_DB = 20.0
#: A filter whose effect on the sum (its Jacobian column's weighted norm) is
#: below this fraction of the largest filter's is left at its gain, named.
MIN_EFFECT = 0.02
#: Step of the central differences of a filter's response against its gain (dB).
_STEP_DB = 0.01


@dataclass
class Fit:
    """What :func:`fit` found.

    Attributes
    ----------
    project : Project
        The input with the fitted gains (and the bank, when one was added).
    before, after : engine.Report
        Checks of the input (with the bank at 0 dB) and of the result.
    target : Target
    names : list of str
        The gains fitted, as paths (``bands[1].filters[3].gain_db``).
    gains_db : ndarray
    result : planner.dsp.fit.FitResult
        Errors on the grid: max (and where), RMS.
    before_max_db, before_rms_db : float
        The same figures for the input.
    at_limits : list of str
        The gains on a limit, with the value.
    why : str
        A plain-words reason for the largest error.
    left_alone : list of str
        Gains not fitted: their band is more than :data:`PLAYS_DB` below the
        sum at the filter's centre, or the filter barely reaches the sum
        (below :data:`MIN_EFFECT` of the strongest filter's effect).
    labels : list of str
        Short names of the gains, as ``names`` (``"woofer peak 1 kHz"``).
    """

    project: Project
    before: engine.Report
    after: engine.Report
    target: Target
    names: list
    gains_db: np.ndarray
    result: dfit.FitResult
    before_max_db: float
    before_rms_db: float
    at_limits: list = field(default_factory=list)
    why: str = ""
    left_alone: list = field(default_factory=list)
    labels: list = field(default_factory=list)

    @property
    def max_error_db(self) -> float:
        return self.result.max_error_db

    @property
    def max_at_hz(self) -> float:
        return self.result.max_at_hz

    @property
    def rms_error_db(self) -> float:
        return self.result.rms_error_db


def free_filters(project: Project, bands=None) -> list[tuple[int, int]]:
    """(band, filter) of every EQ filter whose gain the fit may set.

    ``bands``: indices (None: every active band). A filter is left out
    when bypassed or marked ``"fit": false`` in the file.
    """
    idx = [i for i, on in enumerate(project.active()) if on] if bands is None else list(bands)
    return [(i, j) for i in idx for j, f in enumerate(project.bands[i].filters)
            if f.type in EQ_TYPES and not f.bypass and f.extra.get("fit", True) is not False]


def add_bank(project: Project, band: int, bank: str) -> Project:
    """``band`` with a bank of peaking filters at 0 dB appended, at the ISO 266 nominal
    centres within the analysis range and below 0.9 of Nyquist.

    Raises
    ------
    ProjectError
        ``field='bank'``: an unknown bank name.
    """
    if bank not in BANKS:
        raise ProjectError(f"must be one of {', '.join(BANKS)}, not {bank!r}", field="bank")
    centres, width = BANKS[bank]
    q = round(dfit.q_of_bandwidth(width), 4)
    a = project.analysis
    top = 0.45 * project.sample_rate
    p = project
    for fc in centres:
        if a.f_min <= fc <= a.f_max and fc < top:
            p = edits.add_filter(p, band, {"type": "peaking", "freq": float(fc), "gain_db": 0.0,
                                           "q": q})
    return p


class _Chain:
    """The summed response as a function of the free gains (EQ filters and band gains)."""

    def __init__(self, project: Project, eq: list[tuple[int, int]], split: list[int]):
        self.project = project
        self.fs = float(project.sample_rate)
        zero = project
        for i, j in eq:               # the responses without the free filters' gains
            zero = edits.set_filter_params(zero, i, j, gain_db=0.0)
        if split:
            zero = replace(zero, bands=tuple(replace(b, gain_db=0.0) if k in split else b
                                             for k, b in enumerate(zero.bands)))
        self.report0 = engine.analyse(zero, warnings=False)   # the responses only
        self.f = self.report0.freqs_hz
        self.w = 2 * np.pi * self.f / self.fs
        self.act = [int(i) for i in np.flatnonzero(self.report0.active)]
        self.h0 = self.report0.responses.h[self.act]
        self.eq = [(self.act.index(i), project.bands[i].filters[j]) for i, j in eq
                   if i in self.act]
        if len(self.eq) != len(eq):
            raise ProjectError("every band with a filter to fit must be active (not muted)",
                               field="bands")
        self.split = [self.act.index(i) for i in split if i in self.act]

    def band_share_db(self, k: int) -> float:
        """Level (dB) of EQ filter ``k``'s band relative to the sum, at the filter's centre
        (the grid point nearest it), with the free gains at 0 dB."""
        b, flt = self.eq[k]
        i = int(np.argmin(np.abs(np.log(self.f / float(flt.params["freq"])))))
        s = np.abs(self.h0[:, i].sum())
        return float(an.db(self.h0[b, i]) - an.db(s)) if s > 0 else 0.0

    def _factor(self, flt: Filter, g: float) -> np.ndarray:
        d = fk.design(fk.kind_of(flt), {**flt.params, "gain_db": float(g)}, self.fs)
        return sos_response(np.asarray(d.sos, float).reshape(1, -1, 6), self.w)[0]

    def parts(self, gains):
        """Band responses (n_act, m) and each EQ filter's log-derivative against its gain."""
        gains = np.asarray(gains, float)
        h = self.h0.copy()
        dlog = []
        for k, (b, flt) in enumerate(self.eq):       # a loop over filters, not frequencies
            g = gains[k]
            e = self._factor(flt, g)
            h[b] *= e
            up, dn = self._factor(flt, g + _STEP_DB), self._factor(flt, g - _STEP_DB)
            dlog.append((up - dn) / (2 * _STEP_DB) / e)
        gb = gains[len(self.eq):]
        for k, b in enumerate(self.split):
            h[b] *= 10 ** (gb[k] / 20)
        return h, dlog

    def level(self, gains) -> np.ndarray:
        gains = np.asarray(gains, float)
        h = self.h0.copy()
        for k, (b, flt) in enumerate(self.eq):
            h[b] *= self._factor(flt, gains[k])
        for k, b in enumerate(self.split):
            h[b] *= 10 ** (gains[len(self.eq) + k] / 20)
        return an.db(h.sum(axis=0))

    def jacobian(self, gains) -> np.ndarray:
        h, dlog = self.parts(gains)
        s = h.sum(axis=0)
        s = np.where(np.abs(s) > 1e-300, s, 1e-300)
        cols = [20 / np.log(10) * np.real(h[b] * dl / s) for (b, _), dl in zip(self.eq, dlog)]
        cols += [np.real(h[b] / s) for b in self.split]
        return np.stack(cols, axis=1)


def _limits(project: Project, eq, split, limit_db: float):
    lo, hi = [], []
    for i, j in eq:
        spec = next((s for s in fk.kind_of(project.bands[i].filters[j]).fields
                     if s.name == "gain_db"), None)
        lo.append(max(-limit_db, spec.lo if spec is not None and spec.lo is not None else -60))
        hi.append(min(limit_db, spec.hi if spec is not None and spec.hi is not None else 30))
    lo += [-limit_db] * len(split)
    hi += [limit_db] * len(split)
    return np.array(lo, float), np.array(hi, float)


def fit(project: Project, target: Target, bands=None, split: bool = False,
        bank: str | None = None, limit_db: float = DEFAULT_LIMIT_DB,
        minimax: bool = False) -> Fit:
    """Fit the gains of the project's EQ filters (or bands) so the sum follows ``target``.

    Parameters
    ----------
    project : Project
    target : Target
    bands : sequence of int, optional
        The bands whose EQ filters move (default every active band); with
        ``bank``, exactly one band, which gets the bank.
    split : bool
        Fit the gains of these bands (of every active band by default)
        instead of their EQ filters'.
    bank : {"octave", "third-octave"}, optional
        Add a bank of peaking filters at 0 dB to the band first.
    limit_db : float
        Each gain within ``+-limit_db`` (and within its filter's own range).
    minimax : bool
        After least squares, lower the worst deviation (minimax).

    Raises
    ------
    ProjectError
        Nothing to fit, a bank without exactly one band, bad limits.
    """
    if not (np.isfinite(limit_db) and 0 < limit_db <= 30):
        raise ProjectError(f"must be within 0 .. 30 dB, not {limit_db:g}", field="limit_db")
    p = project
    if bank is not None:
        if bands is None and len(project.bands) == 1:
            bands = [0]
        if bands is None or len(bands) != 1:
            raise ProjectError("a bank goes into one band: name it (--bands NAME)", field="bank")
        p = add_bank(p, bands[0], bank)
    if split:
        eq, sp = [], ([i for i, on in enumerate(p.active()) if on] if bands is None
                      else list(bands))
        if len(sp) < 2:
            raise ProjectError("fitting band gains needs at least two active bands, "
                               f"found {len(sp)}", field="bands")
    else:
        eq, sp = free_filters(p, bands), []
        if not eq:
            raise ProjectError("no EQ gains to fit: the bands have no peaking or shelf "
                               "filters (add some, or a bank: --bank third-octave)",
                               field="bands")
    names = [f"bands[{i}].filters[{j}].gain_db" for i, j in eq] + \
            [f"bands[{i}].gain_db" for i in sp]
    labels = [f"{p.bands[i].name} {_short(p.bands[i].filters[j])}" for i, j in eq] + \
             [p.bands[i].name for i in sp]
    g0 = np.array([p.bands[i].filters[j].params["gain_db"] for i, j in eq] +
                  [p.bands[i].gain_db for i in sp], float)
    progress.report(0.05, "fit: band responses")
    chain = _Chain(p, eq, sp)
    f, t = chain.f, target(chain.f)
    wt = dfit.log_weights(f)
    lo, hi = _limits(p, eq, sp, limit_db)
    # Gains that barely reach the sum (a woofer's EQ far above its lowpass) stay put.
    jac0 = chain.jacobian(g0)
    effect = np.sqrt(wt @ jac0 ** 2)
    idle = set(np.flatnonzero(effect < MIN_EFFECT * effect.max()).tolist()) \
        if effect.max() > 0 else set(range(len(g0)))
    idle |= {k for k in range(len(eq)) if chain.band_share_db(k) < -PLAYS_DB}
    idle = np.array(sorted(idle), dtype=int)
    lo, hi = lo.copy(), hi.copy()
    lo[idle] = hi[idle] = g0[idle]
    hi[idle] += 1e-9                       # a fixed gain: bounds that only admit its value
    start = dfit.evaluate(chain.level, np.clip(g0, lo, hi), t, f, wt, lo, hi, "start")
    before = dfit.evaluate(chain.level, g0, t, f, wt, np.full_like(g0, -np.inf),
                           np.full_like(g0, np.inf), "start")
    progress.report(0.2, "fit: least squares")
    res = dfit.fit_gains(chain.level, f, t, np.clip(g0, lo, hi), (lo, hi), wt,
                         jacobian=chain.jacobian, ridge=RIDGE)
    if minimax:
        progress.report(0.6, "fit: minimax")
        res = dfit.minimax_gains(chain.level, f, t, res.gains_db, (lo, hi), wt,
                                 jacobian=chain.jacobian)
    if res.rms_error_db > start.rms_error_db and not minimax:
        res = start                              # never worse than where it started
    gains = np.round(res.gains_db, 3)
    res = dfit.evaluate(chain.level, gains, t, f, wt, lo, hi, res.method)
    out = p
    for (i, j), g in zip(eq, gains[:len(eq)]):
        out = edits.set_filter_params(out, i, j, gain_db=float(g))
    if sp:
        new = list(out.bands)
        for i, g in zip(sp, gains[len(eq):]):
            new[i] = replace(new[i], gain_db=float(g))
        out = replace(out, bands=tuple(new))
    progress.report(0.9, "fit: checking the result")
    after = engine.analyse(out)
    at = [f"{names[k]} at {gains[k]:+.2f} dB (limit {lo[k]:+g} .. {hi[k]:+g})"
          for k in res.at_limit if k not in set(idle)]
    left = [names[k] for k in idle]
    progress.report(1.0, "fit")
    return Fit(out, engine.analyse(p), after, target, names, gains, res,
               before.max_error_db, before.rms_error_db, at,
               explain(out, eq, sp, res, lo, hi, f, set(idle.tolist())), left, labels)


def _short(flt: Filter) -> str:
    kind = {"peaking": "peak", "low_shelf": "low shelf", "high_shelf": "high shelf"}[flt.type]
    return f"{kind} {format_hz(float(flt.params['freq']))}"


def _bandwidth_oct(flt: Filter) -> float:
    """A peaking filter's bandwidth in octaves from its Q (Cookbook), shelves: 2 octaves."""
    if flt.type != "peaking":
        return 2.0
    q = float(flt.params["q"])
    return float(2 / np.log(2) * np.arcsinh(1 / (2 * q)))


def _feature_width_oct(f: np.ndarray, err: np.ndarray, k: int) -> float:
    """Width (octaves) of the error feature around grid point ``k``: where the error
    stays above half its value there."""
    half = abs(err[k]) / 2
    same = (np.sign(err) == np.sign(err[k])) & (np.abs(err) >= half)
    breaks = np.flatnonzero(~same)
    lo = breaks[breaks < k].max() + 1 if np.any(breaks < k) else 0
    hi = breaks[breaks > k].min() - 1 if np.any(breaks > k) else len(f) - 1
    return float(np.log2(f[hi] / f[lo])) if hi > lo else 0.0


def explain(project: Project, eq, split, res: dfit.FitResult, lo, hi, f, idle=()) -> str:
    """Why the largest error is where it is, in plain words."""
    at_hz, err = res.max_at_hz, res.max_error_db
    k = int(np.argmin(np.abs(f - at_hz)))
    if abs(err) < 0.05:
        return "the target is met within 0.05 dB"
    if split:
        return (f"the bands' gains shape the sum only as wholes: at {at_hz:.4g} Hz the sum is "
                f"{err:+.2f} dB off, which no choice of band gains removes without raising "
                "it elsewhere")
    fl = [(project.bands[i].filters[j], n) for n, (i, j) in enumerate(eq) if n not in idle]
    if not fl:
        return "every filter was left alone: none is in a band that plays where it acts"

    def octs(x):
        return abs(np.log2(float(x[0].params["freq"]) / at_hz))

    near = min(fl, key=octs)
    reach = max(_bandwidth_oct(near[0]), 0.5)
    if near[0].type == "peaking" and octs(near) > reach:
        out = (f"no filter that may move acts at {at_hz:.4g} Hz: the nearest, at "
               f"{float(near[0].params['freq']):.4g} Hz, is {octs(near):.2g} octave away")
        if idle:
            out += " (the others there are left alone: their band hardly plays there)"
        return out
    if at_hz > 0.3 * project.sample_rate and near[0].type == "peaking":
        return (f"near Nyquist ({at_hz:.4g} Hz of {project.sample_rate / 2:g} Hz): the "
                "bilinear transform squeezes the filters there, so they cannot shape the "
                "response as they do lower down")
    n = near[1]
    if res.gains_db[n] <= lo[n] + 1e-6 or res.gains_db[n] >= hi[n] - 1e-6:
        g = res.gains_db[n]
        return (f"the filter at {float(near[0].params['freq']):.4g} Hz sits at its limit "
                f"({g:+.1f} dB): a larger {'boost' if g > 0 else 'cut'} would be needed")
    width = _feature_width_oct(f, res.error_db, k)
    narrowest = min(_bandwidth_oct(x) for x, _ in fl)
    if width < narrowest / 2:
        kind = "a notch" if err < 0 else "a peak"
        return (f"{kind} about {width:.2g} octave wide at {at_hz:.4g} Hz, narrower than any "
                f"filter (the narrowest spans {narrowest:.2g} octave)")
    centres = np.sort([float(x.params["freq"]) for x, _ in fl])
    spacing = np.diff(np.log2(centres))
    if len(spacing) and width < spacing.max():
        return (f"detail at {at_hz:.4g} Hz finer than the filters' spacing "
                f"({spacing.max():.2g} octave at most between centres)")
    return (f"the filters overlap: at {at_hz:.4g} Hz the best compromise with the neighbouring "
            f"filters leaves {err:+.2f} dB")
