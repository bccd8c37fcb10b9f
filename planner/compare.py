"""IIR versus FIR: for each band, the two designs that meet the same magnitude spec.

For every band of a project the crossover filters (lowpass, highpass and the
``fir`` family; EQ filters and end-of-range filters, see :func:`end_of_range`,
are left out and kept as they are in both builds) are read as one chain, and
a magnitude spec is derived from that chain's own response (see
:func:`derive_spec`). Then both ways of meeting that spec are put side by
side:

* an IIR band (its crossover is sections only) keeps its own design on the
  IIR side; the FIR side is the shortest equiripple (Parks-McClellan) FIR
  that meets the spec (:func:`planner.dsp.fir.min_taps_equiripple`);
* an FIR band keeps its own taps on the FIR side; the IIR side is the
  lowest-order IIR that meets the spec (:func:`iir_equivalent`:
  Butterworth by :mod:`planner.dsp.iir` while an order of at most 8 does,
  else elliptic, or the family asked for).

Per side: order or taps, multiplies per sample, latency, group-delay
variation over the pass band, pre-ringing, and the measured ripple and
attenuation. The whole project is then built both ways (every band's
crossover IIR, every band's crossover FIR, EQ kept) and the flatness of
each sum is given.

Pure of I/O and UI: every result is a dataclass with ``to_dict()``.

Spec conventions are those of :class:`planner.dsp.fir.FirSpec`: ripple is
peak-to-peak over the pass band; attenuation is below the *nominal* pass
gain, the middle of the ripple band (``(max + min) / 2``, linear). scipy's
IIR order functions count the stop band below the pass-band *maximum*
instead; the two differ by ``20 log10(1 + delta_p)`` (about 0.5 dB for a
1 dB ripple), which :func:`iir_equivalent` adds.

References
----------
.. [1] A. V. Oppenheim and R. W. Schafer, "Discrete-Time Signal Processing",
   3rd ed., Pearson, 2010, sec. 7.2-7.3 (Butterworth and elliptic design by
   the bilinear transform, order formulas), 5.7 (linear phase), 6.3 and
   6.5 (cascade and folded FIR structures).
.. [2] T. W. Parks and J. H. McClellan, IEEE Trans. Circuit Theory CT-19(2),
   1972 (equiripple FIR).
.. [3] A. Antoniou, "Digital Signal Processing: Signals, Systems, and
   Filters", McGraw-Hill, 2006, sec. 10.5-10.6 (elliptic order
   ``n >= K(k) K'(k1) / (K'(k) K(k1))``).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Callable, Sequence

import numpy as np
from scipy import optimize, signal, special

from planner import engine
from planner.defaults import COMPARE_ATTEN_DB, COMPARE_RIPPLE_DB, IIR_FAMILIES
from planner.dsp import analysis as an
from planner.dsp import fir as dfir
from planner.dsp.fir.checks import check_positive
from planner.dsp.fir.spec import deviations
from planner.dsp import iir
from planner.dsp.response import band_responses
from planner.engine import BandDesign
from planner.errors import DesignError, SpecNotMetError
from planner.model import Filter, Project

__all__ = [
    "DEFAULT_RIPPLE_DB", "DEFAULT_ATTEN_DB", "IIR_FAMILIES", "MAX_ELLIPTIC_ORDER",
    "DerivedSpec", "Side", "BandComparison", "Build", "Comparison",
    "is_crossover", "end_of_range", "derive_spec", "butterworth_order", "elliptic_order",
    "iir_equivalent", "fir_equivalent", "side_metrics", "compare_chain", "compare_project",
]

#: Default pass-band ripple of the derived spec (dB, peak to peak): the band's
#: pass band ends where its response leaves a 1 dB window.
DEFAULT_RIPPLE_DB = COMPARE_RIPPLE_DB
#: Default stop-band attenuation of the derived spec (dB below the nominal
#: pass gain): the stop band starts where the response stays 60 dB down.
DEFAULT_ATTEN_DB = COMPARE_ATTEN_DB
# IIR_FAMILIES (from planner.defaults): ``auto``: Butterworth when an order up
# to 8 (the largest planner.dsp.iir designs) meets the spec, else elliptic.
#: Highest elliptic order tried (sections stay well conditioned far beyond it).
MAX_ELLIPTIC_ORDER = 40

#: Orders tried above the formula's before an IIR equivalent is given up.
_EXTRA_ORDERS = 3
#: Design margins of the IIR equivalents (see :func:`iir_equivalent`).
_MARGIN_DB, _MARGIN_REL = 1e-3, 1e-4

#: Points of the log grid the spec is read from (edges are then refined).
_SPEC_POINTS = 8192


# --------------------------------------------------------------------------
# results


def _db10(x: float) -> float:
    return 10.0 * math.log10(x) if x > 0 else -math.inf


@dataclass(frozen=True)
class DerivedSpec:
    """The magnitude spec read from a band's crossover chain.

    Attributes
    ----------
    kind : {"lowpass", "highpass", "bandpass"}
    pass_hz, stop_hz : float or (float, float)
        Pass-band and stop-band edges in Hz (pairs for a bandpass).
    ripple_db, atten_db : float
        As asked (see the module notes for the conventions).
    pass_gain_db : float
        Nominal pass gain of the band's chain (middle of its ripple band).
    """

    kind: str
    pass_hz: float | tuple[float, float]
    stop_hz: float | tuple[float, float]
    ripple_db: float
    atten_db: float
    pass_gain_db: float

    def fir_spec(self) -> dfir.FirSpec:
        """The same spec as a :class:`planner.dsp.fir.FirSpec` (nominal gain 1)."""
        return dfir.FirSpec(self.kind, self.pass_hz, self.stop_hz, self.ripple_db, self.atten_db)

    @property
    def pass_range_hz(self) -> tuple[float, float]:
        """The pass band as (low, high) Hz; 0 or infinity at an open end."""
        if self.kind == "bandpass":
            return tuple(self.pass_hz)
        return (0.0, self.pass_hz) if self.kind == "lowpass" else (self.pass_hz, math.inf)

    def to_dict(self) -> dict:
        def v(x):
            return list(x) if isinstance(x, tuple) else x
        return {"kind": self.kind, "pass_hz": v(self.pass_hz), "stop_hz": v(self.stop_hz),
                "ripple_db": self.ripple_db, "atten_db": self.atten_db,
                "pass_gain_db": self.pass_gain_db}


@dataclass(frozen=True)
class Side:
    """One way of meeting a band's spec (the IIR or the FIR side).

    Attributes
    ----------
    source : {"project", "equivalent"}
        The band's own design, or the one found to meet its spec.
    design : str
        What it is, e.g. ``"LR4 lowpass 2.2 kHz"`` or ``"elliptic order 12"``.
    order : int
        IIR order (poles) of the sections; 0 for an FIR.
    taps : int
        FIR length; 0 for sections only.
    sections : int
    multiplies_per_sample : int
        5 per biquad section plus the folded count of a linear-phase FIR
        (``ceil(N/2)``), :func:`planner.dsp.fir.iir_multiplies_per_sample`
        and :func:`~planner.dsp.fir.fir_multiplies_per_sample`.
    multiplies_per_sample_direct : int
        The same with the FIR in direct form (``N``, one per tap).
    latency_samples, latency_ms : float
        Pure delay: ``(N-1)/2`` for a linear-phase FIR, 0 for causal
        sections (their output starts at once; their group delay is in
        ``group_delay_variation_ms``).
    group_delay_variation_ms : float
        Largest minus smallest group delay over the pass band (within the
        project's analysis range).
    pre_ringing : float
        Fraction of the impulse response's energy before its largest sample
        (:func:`planner.dsp.fir.pre_ringing_energy`).
    pre_ringing_db : float
        The same in dB (``10 log10``; -inf for none).
    ripple_db, atten_db : float
        Measured against the spec (:func:`planner.dsp.fir.measure_spec`).
    """

    source: str
    design: str
    order: int
    taps: int
    sections: int
    multiplies_per_sample: int
    multiplies_per_sample_direct: int
    latency_samples: float
    latency_ms: float
    group_delay_variation_ms: float
    pre_ringing: float
    pre_ringing_db: float
    ripple_db: float
    atten_db: float
    sos: np.ndarray = field(repr=False, compare=False, default=None)
    fir: np.ndarray | None = field(repr=False, compare=False, default=None)

    def to_dict(self) -> dict:
        return {"source": self.source, "design": self.design, "order": self.order,
                "taps": self.taps, "sections": self.sections,
                "multiplies_per_sample": self.multiplies_per_sample,
                "multiplies_per_sample_direct": self.multiplies_per_sample_direct,
                "latency_samples": self.latency_samples, "latency_ms": self.latency_ms,
                "group_delay_variation_ms": self.group_delay_variation_ms,
                "pre_ringing": self.pre_ringing, "pre_ringing_db": self.pre_ringing_db,
                "ripple_db": self.ripple_db, "atten_db": self.atten_db}


#: Band statuses.
OK, NO_CROSSOVER, NOT_MET = "ok", "no crossover to compare", "spec not met"


@dataclass(frozen=True)
class BandComparison:
    """One band: its spec and both sides, or why there are none.

    ``status`` is :data:`OK`, :data:`NO_CROSSOVER` (full-range EQ only, or
    only end-of-range filters) or :data:`NOT_MET` (``message`` says which
    spec and what was reached). ``own`` is ``"iir"`` or ``"fir"``: which side
    is the band's own design. ``end_of_range`` lists the labels of the
    band's end-of-range filters (see :func:`end_of_range`), left out of the
    spec and kept as they are in both builds.
    """

    index: int
    name: str
    status: str
    own: str | None = None
    spec: DerivedSpec | None = None
    iir: Side | None = None
    fir: Side | None = None
    message: str = ""
    end_of_range: tuple[str, ...] = ()

    @property
    def multiplies_ratio(self) -> float | None:
        """FIR over IIR multiplies per sample (folded FIR), None without both sides."""
        return self._ratio("multiplies_per_sample")

    @property
    def multiplies_ratio_direct(self) -> float | None:
        """FIR over IIR multiplies per sample with the FIR in direct form."""
        return self._ratio("multiplies_per_sample_direct")

    def _ratio(self, key: str) -> float | None:
        if self.iir is None or self.fir is None:
            return None
        den = getattr(self.iir, key)
        return getattr(self.fir, key) / den if den else math.inf

    def to_dict(self) -> dict:
        return {"index": self.index, "name": self.name, "status": self.status,
                "message": self.message, "own": self.own,
                "spec": None if self.spec is None else self.spec.to_dict(),
                "iir": None if self.iir is None else self.iir.to_dict(),
                "fir": None if self.fir is None else self.fir.to_dict(),
                "multiplies_ratio": self.multiplies_ratio,
                "multiplies_ratio_direct": self.multiplies_ratio_direct,
                "end_of_range": list(self.end_of_range)}


@dataclass(frozen=True)
class Build:
    """The whole project built one way (every crossover IIR, or every one FIR).

    Attributes
    ----------
    family : {"iir", "fir"}
    complete : bool
        False when some band has no design of this family (``missing``);
        then the figures are None.
    max_dev_db, at_hz, ripple_db : float or None
        Flatness of the sum of the active bands on the analysis grid
        (:func:`planner.dsp.analysis.flatness`).
    latency_samples, latency_ms : float or None
        Common latency of the crossovers after alignment.
    inverted : list of str
        Bands inverted in the project; they stay inverted in both builds
        (an inversion an IIR crossover needs, as with LR2, may cancel in
        the FIR build).
    align_samples : list of float
        Delay added to each band so that every band keeps the alignment it
        has in the project: a band whose crossover gains ``d`` samples of
        latency over its own design is matched by delaying the others.
    designs : list of BandDesign or None
        The bands as built (for responses and plots; not in ``to_dict``).
    """

    family: str
    complete: bool
    missing: list[str]
    max_dev_db: float | None = None
    at_hz: float | None = None
    ripple_db: float | None = None
    latency_samples: float | None = None
    latency_ms: float | None = None
    align_samples: list[float] = field(default_factory=list)
    inverted: list[str] = field(default_factory=list)
    designs: list[BandDesign] | None = field(default=None, repr=False, compare=False)

    def to_dict(self) -> dict:
        return {"family": self.family, "complete": self.complete, "missing": self.missing,
                "max_dev_db": self.max_dev_db, "at_hz": self.at_hz, "ripple_db": self.ripple_db,
                "latency_samples": self.latency_samples, "latency_ms": self.latency_ms,
                "align_samples": self.align_samples, "inverted": self.inverted}


@dataclass(frozen=True)
class Comparison:
    """The result of :func:`compare_project`."""

    name: str
    sample_rate: float
    ripple_db: float
    atten_db: float
    iir_family: str
    bands: list[BandComparison]
    iir_sum: Build
    fir_sum: Build

    @property
    def ok(self) -> bool:
        """True when no band's spec was left unmet."""
        return all(b.status != NOT_MET for b in self.bands)

    def to_dict(self) -> dict:
        return {"ok": self.ok, "name": self.name, "sample_rate": self.sample_rate,
                "ripple_db": self.ripple_db, "atten_db": self.atten_db,
                "iir_family": self.iir_family,
                "bands": [b.to_dict() for b in self.bands],
                "sum": {"iir": self.iir_sum.to_dict(), "fir": self.fir_sum.to_dict()}}


# --------------------------------------------------------------------------
# checks


def _check_spec_numbers(ripple_db, atten_db) -> tuple[float, float]:
    r = check_positive(ripple_db, "ripple_db", "dB")
    try:
        a = float(atten_db)
    except (TypeError, ValueError):
        a = float("nan")
    if not (a > r and math.isfinite(a)):
        raise DesignError(f"must be a number of dB above ripple_db ({r:g} dB), not {atten_db!r}",
                          field="atten_db")
    return r, a


def _check_family(iir_family: str) -> str:
    if iir_family not in IIR_FAMILIES:
        raise DesignError(f"must be one of {', '.join(IIR_FAMILIES)}, not {iir_family!r}",
                          field="iir_family")
    return iir_family


def _low_edge(flt: Filter) -> float:
    """Where ``flt`` starts to pass from below (Hz; 0 for none): a highpass side."""
    p = flt.params
    if flt.type == "highpass" or (flt.family == "fir" and flt.type == "bandpass"):
        return float(p["freq"])
    if flt.type == "split" and p["band"] > 0:
        return float(p["crossovers"][p["band"] - 1])
    return 0.0


def _high_edge(flt: Filter) -> float:
    """Where ``flt`` stops passing above (Hz; infinity for none): a lowpass side."""
    p = flt.params
    if flt.type == "lowpass":
        return float(p["freq"])
    if flt.family == "fir" and flt.type == "bandpass":
        return float(p["freq2"])
    if flt.type == "split" and p["band"] < len(p["crossovers"]):
        return float(p["crossovers"][p["band"]])
    return math.inf


def end_of_range(project: Project) -> list[set[int]]:
    """Per band, the positions of its end-of-range filters.

    A highpass (of any family) below which no other band of the project
    passes guards the bottom of the range, as a subsonic filter under a
    woofer does; a lowpass above which no other band passes guards the top.
    They hand nothing over to another band, so they are no crossover: left
    out, their gentle slopes would otherwise set the spec (a second-order
    highpass at 25 Hz is 60 dB down only at 0.77 Hz, which no FIR of
    sensible length resolves). Another band "passes below" a frequency when
    none of its own highpass sides (highpass, FIR bandpass, split band above
    the lowest) lies at or above it; "above" likewise. A project of one band
    has no end-of-range filters: there is nothing to tell them apart from.
    Bypassed filters count for nothing.
    """
    live = [[f for f in b.filters if not f.bypass] for b in project.bands]
    lows = [max((_low_edge(f) for f in fl), default=0.0) for fl in live]
    highs = [min((_high_edge(f) for f in fl), default=math.inf) for fl in live]
    out: list[set[int]] = [set() for _ in project.bands]
    if len(project.bands) < 2:
        return out
    for i, band in enumerate(project.bands):
        others = [j for j in range(len(project.bands)) if j != i]
        for k, f in enumerate(band.filters):
            if f.bypass or f.type not in ("lowpass", "highpass"):
                continue
            freq = float(f.params["freq"])
            if f.type == "highpass" and all(lows[j] >= freq for j in others):
                out[i].add(k)
            elif f.type == "lowpass" and all(highs[j] <= freq for j in others):
                out[i].add(k)
    return out


def is_crossover(flt: Filter) -> bool:
    """True for the filters that make a band's crossover: lowpass, highpass and the ``fir`` family.

    Everything else (peaking, shelves, notches, all-passes, raw biquads,
    the resonant cookbook band-pass) is EQ and is kept as it is in both
    builds.
    """
    return flt.type in ("lowpass", "highpass") or flt.family == "fir"


# --------------------------------------------------------------------------
# chains: response, impulse, measures


def _chain_h(sos: np.ndarray, fir: np.ndarray | None, freqs_hz, fs_hz: float) -> np.ndarray:
    return band_responses([sos], np.atleast_1d(np.asarray(freqs_hz, float)), fs_hz,
                          firs=[fir]).h[0]


@dataclass(frozen=True)
class _Run:
    """The fields :func:`planner.export.band_impulse_response` reads, for a bare chain."""

    run_sos: np.ndarray
    run_fir: np.ndarray | None
    delay_samples: float = 0.0
    linear_gain: float = 1.0


def _chain_impulse(sos: np.ndarray, fir: np.ndarray | None, fs_hz: float) -> np.ndarray:
    from planner.export import band_impulse_response

    return band_impulse_response(_Run(sos, fir), fs_hz)[0]


def _order(sos: np.ndarray) -> int:
    """IIR order of a cascade: per section the larger of its numerator and denominator degree."""
    s = np.asarray(sos, float).reshape(-1, 6)
    if not len(s):
        return 0
    num = np.where(s[:, 2] != 0, 2, np.where(s[:, 1] != 0, 1, 0))
    den = np.where(s[:, 5] != 0, 2, np.where(s[:, 4] != 0, 1, 0))
    return int(np.maximum(num, den).sum())


def _pass_grid(spec: DerivedSpec, fs_hz: float, f_min: float, f_max: float) -> np.ndarray:
    lo, hi = spec.pass_range_hz
    lo = max(lo, f_min) if lo > 0 else f_min
    hi = min(hi, f_max, fs_hz / 2 * 0.999999)
    if not lo < hi:            # pass band outside the analysis range: use the pass band itself
        lo, hi = spec.pass_range_hz
        lo = lo if lo > 0 else min(f_min, hi / 10)
        hi = min(hi, fs_hz / 2 * 0.999999)
    return np.geomspace(lo, hi, 512)


def side_metrics(sos: np.ndarray, fir: np.ndarray | None, spec: DerivedSpec, fs_hz: float,
                 source: str, design: str, f_min_hz: float = 20.0,
                 f_max_hz: float = 20000.0) -> Side:
    """Figures of one crossover chain (sections, then taps) against ``spec``.

    Parameters
    ----------
    sos : ndarray, shape (n, 6)
    fir : ndarray or None
    spec : DerivedSpec
    fs_hz : float
    source, design : str
        See :class:`Side`.
    f_min_hz, f_max_hz : float
        Analysis range; the group delay is taken over the pass band within it.

    Returns
    -------
    Side
    """
    sos = np.asarray(sos, float).reshape(-1, 6)
    fs = float(fs_hz)
    n_taps = 0 if fir is None else len(fir)
    mult = dfir.iir_multiplies_per_sample(len(sos))
    mult_direct = mult
    latency = 0.0
    if fir is not None:
        mult += dfir.fir_multiplies_per_sample(fir)
        mult_direct += dfir.fir_multiplies_per_sample(fir, folded=False)
        latency = dfir.latency_samples(fir)
    fp = _pass_grid(spec, fs, f_min_hz, f_max_hz)
    gd = band_responses([sos], fp, fs, firs=[fir]).group_delay_samples()[0]
    gd = gd[np.isfinite(gd)]
    gd_var = float(gd.max() - gd.min()) * 1000.0 / fs if gd.size else math.nan
    h = _chain_impulse(sos, fir, fs)
    pre = dfir.pre_ringing_energy(h)
    ripple, atten = dfir.measure_spec(h / 10.0 ** (spec.pass_gain_db / 20.0), spec.fir_spec(), fs)
    return Side(source=source, design=design, order=_order(sos), taps=n_taps,
                sections=len(sos), multiplies_per_sample=mult,
                multiplies_per_sample_direct=mult_direct, latency_samples=latency,
                latency_ms=1000.0 * latency / fs, group_delay_variation_ms=gd_var,
                pre_ringing=pre, pre_ringing_db=_db10(pre), ripple_db=ripple, atten_db=atten,
                sos=sos, fir=None if fir is None else np.asarray(fir, float))


# --------------------------------------------------------------------------
# deriving the spec


def _spec_grid(fs: float) -> np.ndarray:
    g = np.concatenate([[0.0], np.geomspace(fs * 1e-5, fs / 2, _SPEC_POINTS)])
    g[-1] = fs / 2
    return g


def _refine(mag_db: Callable[[float], float], target: float, a: float, b: float) -> float:
    """The frequency in [a, b] where ``mag_db`` crosses ``target`` (brentq to 1e-9 relative)."""
    fa, fb = mag_db(a) - target, mag_db(b) - target
    if fa == 0:
        return a
    if fb == 0 or np.sign(fa) == np.sign(fb):
        return b
    return float(optimize.brentq(lambda f: mag_db(f) - target, a, b, xtol=1e-9 * b, rtol=1e-12))


def derive_spec(sos: np.ndarray, fir: np.ndarray | None, fs_hz: float,
                ripple_db: float = DEFAULT_RIPPLE_DB,
                atten_db: float = DEFAULT_ATTEN_DB) -> DerivedSpec:
    """Read a magnitude spec off a crossover chain's own response.

    The response is taken on a log grid from ``fs * 1e-5`` to Nyquist (with
    0 Hz) and the edges are refined by root finding:

    * kind: a chain that still passes (within ``atten_db`` of its peak) at
      0 Hz and not at Nyquist is a lowpass, the reverse a highpass, neither
      a bandpass;
    * pass edge: from the pass end (0 Hz, Nyquist, or a bandpass's peak)
      outwards, where the peak-to-peak spread of the response seen so far
      first exceeds ``ripple_db``;
    * nominal pass gain ``g``: the middle of the (linear) range in the
      pass band;
    * stop edge: where the response falls for good to ``atten_db`` below
      ``g`` (beyond it, up to Nyquist or down to 0 Hz, it stays below).

    Parameters
    ----------
    sos : ndarray, shape (n, 6)
    fir : ndarray or None
    fs_hz : float
    ripple_db, atten_db : float

    Returns
    -------
    DerivedSpec

    Raises
    ------
    SpecNotMetError
        When the chain never reaches ``atten_db`` below its pass gain (the
        message says how far down it gets), or passes at both ends.
    """
    r, a = _check_spec_numbers(ripple_db, atten_db)
    fs = float(fs_hz)
    sos = np.asarray(sos, float).reshape(-1, 6)
    grid = _spec_grid(fs)
    m = an.db(_chain_h(sos, fir, grid, fs))

    def mag_db(f: float) -> float:
        return float(an.db(_chain_h(sos, fir, [f], fs))[0])

    peak = float(m.max())
    low_pass, high_pass = m[0] > peak - a, m[-1] > peak - a
    if low_pass and high_pass:
        raise SpecNotMetError(
            f"the crossover never falls {a:g} dB below its peak at either end (it is at "
            f"{m[0] - peak:.1f} dB at 0 Hz and {m[-1] - peak:.1f} dB at {fs / 2:g} Hz): "
            "no lowpass, highpass or bandpass spec to read; lower --atten-db", field="atten_db")
    if low_pass:
        kind = "lowpass"
    elif high_pass:
        kind = "highpass"
    else:
        kind = "bandpass"

    def pass_edge(order: np.ndarray) -> tuple[float, int]:
        """Walk ``order`` (grid indices from the pass end outwards); the edge and its last index."""
        mm = m[order]
        hi_run, lo_run = np.maximum.accumulate(mm), np.minimum.accumulate(mm)
        out = np.flatnonzero(hi_run - lo_run > r)
        if not len(out):
            return float(grid[order[-1]]), len(order) - 1
        k = int(out[0])
        target = lo_run[k - 1] + r if mm[k] > hi_run[k - 1] else hi_run[k - 1] - r
        return _refine(mag_db, target, float(grid[order[k - 1]]), float(grid[order[k]])), k - 1

    idx = np.arange(len(grid))
    if kind == "lowpass":
        fp, k = pass_edge(idx)
        inside = m[: k + 1]
    elif kind == "highpass":
        fp, k = pass_edge(idx[::-1])
        inside = m[len(grid) - 1 - k:]
    else:
        ip = int(np.argmax(m))
        upper = np.flatnonzero(m[ip:] < peak - r)
        lower = np.flatnonzero(m[:ip + 1][::-1] < peak - r)
        if not len(upper) or not len(lower):
            raise SpecNotMetError(f"the band-pass crossover does not fall {r:g} dB below its peak "
                                  "on both sides", field="ripple_db")
        ju, jl = ip + int(upper[0]), ip - int(lower[0])
        fp = (_refine(mag_db, peak - r, float(grid[jl]), float(grid[jl + 1])),
              _refine(mag_db, peak - r, float(grid[ju - 1]), float(grid[ju])))
        inside = m[jl + 1:ju]
    lin = 10.0 ** (np.concatenate([inside, [mag_db(f) for f in np.atleast_1d(fp)]]) / 20.0)
    g_db = float(20.0 * np.log10((lin.max() + lin.min()) / 2.0))
    t = g_db - a
    above = np.flatnonzero(m > t)

    def never() -> SpecNotMetError:
        end = "Nyquist" if kind == "lowpass" else "0 Hz"
        deepest = float(m[-1] if kind == "lowpass" else m[0]) - g_db
        return SpecNotMetError(
            f"the {kind} crossover does not stay {a:g} dB below its pass gain "
            f"({g_db:.2f} dB) up to {end} (it is at {deepest:.1f} dB there); lower --atten-db",
            field="atten_db")

    def upper_stop() -> float:
        j = int(above[-1])
        if j >= len(grid) - 1:
            raise never()
        return _refine(mag_db, t, float(grid[j]), float(grid[j + 1]))

    def lower_stop() -> float:
        j = int(above[0])
        if j == 0:
            raise never()
        return _refine(mag_db, t, float(grid[j - 1]), float(grid[j]))

    if kind == "lowpass":
        fst = upper_stop()
    elif kind == "highpass":
        fst = lower_stop()
    else:
        fst = (lower_stop(), upper_stop())
    return DerivedSpec(kind, fp, fst, r, a, g_db)


# --------------------------------------------------------------------------
# IIR orders and designs


def _edge_ratio(kind: str, pass_hz: float, stop_hz: float, fs_hz: float) -> float:
    """Selectivity ``Omega_s / Omega_p`` (> 1) of the prewarped edges ``tan(pi f / fs)``."""
    wp, ws = np.tan(np.pi * pass_hz / fs_hz), np.tan(np.pi * stop_hz / fs_hz)
    return float(ws / wp if kind == "lowpass" else wp / ws)


def butterworth_order(kind: str, pass_hz: float, stop_hz: float, ripple_db: float,
                      atten_db: float, fs_hz: float) -> int:
    """Lowest Butterworth order with at most ``ripple_db`` loss at the pass edge and ``atten_db`` at the stop edge.

    ``n >= log10((10^(A/10) - 1) / (10^(R/10) - 1)) / (2 log10(Omega_s / Omega_p))``
    with the prewarped edges ``Omega = tan(pi f / fs)`` (Oppenheim and
    Schafer [1]_, sec. 7.2). ``atten_db`` is below the pass-band maximum,
    as in :func:`scipy.signal.buttord`.
    """
    ratio = _edge_ratio(kind, pass_hz, stop_hz, fs_hz)
    n = math.log10((10 ** (atten_db / 10) - 1) / (10 ** (ripple_db / 10) - 1)) \
        / (2 * math.log10(ratio))
    return max(1, int(math.ceil(n)))


def elliptic_order(kind: str, pass_hz: float, stop_hz: float, ripple_db: float,
                   atten_db: float, fs_hz: float) -> int:
    """Lowest elliptic (Cauer) order meeting the same edges.

    ``n >= K(k) K(sqrt(1 - k1^2)) / (K(sqrt(1 - k^2)) K(k1))`` with
    ``k = Omega_p / Omega_s`` and ``k1 = sqrt((10^(R/10) - 1) / (10^(A/10) - 1))``,
    ``K`` the complete elliptic integral of the first kind (Antoniou [3]_,
    sec. 10.6). ``K(sqrt(1 - x^2))`` is taken by
    :func:`scipy.special.ellipkm1` so that a tiny ``k1`` keeps its digits.
    """
    k = 1.0 / _edge_ratio(kind, pass_hz, stop_hz, fs_hz)
    k1 = math.sqrt((10 ** (ripple_db / 10) - 1) / (10 ** (atten_db / 10) - 1))
    n = special.ellipk(k * k) * special.ellipkm1(k1 * k1) \
        / (special.ellipkm1(k * k) * special.ellipk(k1 * k1))
    return max(1, int(math.ceil(n)))


def _butterworth(kind: str, n: int, pass_hz: float, ripple_db: float, fs: float) -> np.ndarray:
    # Cut-off (-3 dB) put so that the pass edge has exactly ripple_db of loss.
    wc = np.tan(np.pi * pass_hz / fs) * (10 ** (ripple_db / 10) - 1) ** (
        (-1.0 if kind == "lowpass" else 1.0) / (2 * n))
    return iir.butterworth_sos(kind, n, float(fs / np.pi * np.arctan(wc)), fs)


def _elliptic(kind: str, n: int, pass_hz: float, ripple_db: float, atten_db: float,
              fs: float) -> np.ndarray:
    return signal.ellip(n, ripple_db, atten_db, pass_hz, btype=kind, fs=fs, output="sos")


def iir_equivalent(spec: DerivedSpec, fs_hz: float,
                   family: str = "auto") -> tuple[np.ndarray, str]:
    """The lowest-order IIR meeting ``spec``, scaled to its nominal pass gain.

    The order comes from :func:`butterworth_order` or :func:`elliptic_order`
    (for a bandpass: a highpass on the lower edges cascaded with a lowpass
    on the upper ones, each given half the ripple); the design is then
    measured (:func:`planner.dsp.fir.measure_spec` on its impulse response,
    truncated 150 dB down) and the order raised until it meets the spec.

    Parameters
    ----------
    spec : DerivedSpec
    fs_hz : float
    family : {"auto", "butterworth", "elliptic"}
        ``auto``: Butterworth (maximally flat, the usual crossover filter)
        when an order up to 8 meets the spec, else elliptic (the lowest
        order for any magnitude spec).

    Returns
    -------
    sos : ndarray, shape (n, 6)
        With the nominal gain ``spec.pass_gain_db`` folded into the first section.
    design : str
        E.g. ``"butterworth order 5"``, ``"elliptic HP 6 + LP 6"``.

    Raises
    ------
    SpecNotMetError
        For ``family="butterworth"`` when an order above 8 would be needed
        (the message gives it), or when no elliptic order up to
        :data:`MAX_ELLIPTIC_ORDER` meets the spec.
    """
    _check_family(family)
    fs = float(fs_hz)
    r, a = spec.ripple_db, spec.atten_db
    dp, _ = deviations(r, a)
    # Attenuation below the pass-band maximum, as scipy's designs count it.
    # The designs aim a hair inside the spec (1e-4 of the ripple, 1e-3 dB of
    # attenuation) so that rounding in the measurement cannot miss it.
    a_max = a + 20.0 * math.log10(1.0 + dp) + _MARGIN_DB
    r_in = r * (1.0 - _MARGIN_REL)
    fspec = spec.fir_spec()
    parts = ([("lowpass", spec.pass_hz, spec.stop_hz, r_in)] if spec.kind == "lowpass" else
             [("highpass", spec.pass_hz, spec.stop_hz, r_in)] if spec.kind == "highpass" else
             [("highpass", spec.pass_hz[0], spec.stop_hz[0], r_in / 2),
              ("lowpass", spec.pass_hz[1], spec.stop_hz[1], r_in / 2)])
    top = max(iir.FAMILIES["butterworth"])
    orders_bw = [butterworth_order(k, p, s, rr, a_max, fs) for k, p, s, rr in parts]
    if family == "auto":
        family = "butterworth" if max(orders_bw) <= top else "elliptic"
    if family == "butterworth":
        orders, limit = orders_bw, top
    else:
        orders = [elliptic_order(k, p, s, rr, a_max, fs) for k, p, s, rr in parts]
        limit = MAX_ELLIPTIC_ORDER
    first = list(orders)
    while True:
        if max(orders) - max(first) > _EXTRA_ORDERS:
            raise SpecNotMetError(
                f"{fspec.describe()} not met by {family} designs of order {max(first)} to "
                f"{max(orders) - 1}: reached ripple {ripple:.4g} dB and attenuation "
                f"{atten:.4g} dB", field="order")
        if max(orders) > limit:
            raise SpecNotMetError(
                f"{fspec.describe()} needs a {family} order of {max(orders)} per filter, above "
                f"the largest {limit}" + ("; try --iir-family elliptic" if family == "butterworth"
                                          else ""), field="order")
        if family == "butterworth":
            sos = np.vstack([_butterworth(k, n, p, rr, fs)
                             for (k, p, s, rr), n in zip(parts, orders)])
        else:
            sos = np.vstack([_elliptic(k, n, p, rr, a_max, fs)
                             for (k, p, s, rr), n in zip(parts, orders)])
        # Nominal gain 1 (pass band from 1 - dp to 1 + dp), then the band's own level.
        sos = sos.copy()
        sos[0, :3] *= (1.0 + dp)
        ripple, atten = dfir.measure_spec(_chain_impulse(sos, None, fs), fspec, fs)
        if ripple <= r and atten >= a:
            break
        orders = [n + 1 for n in orders]
    sos[0, :3] *= 10.0 ** (spec.pass_gain_db / 20.0)
    if len(parts) == 1:
        label = f"{family} order {orders[0]}"
    else:
        label = f"{family} HP {orders[0]} + LP {orders[1]}"
    return sos, label


def fir_equivalent(spec: DerivedSpec, fs_hz: float, max_taps: int = dfir.DEFAULT_MAX_TAPS,
                   progress: Callable[[float], None] | None = None,
                   cancel: Callable[[], bool] | None = None) -> tuple[np.ndarray, str]:
    """The shortest equiripple FIR meeting ``spec`` (:func:`planner.dsp.fir.min_taps_equiripple`).

    For a bandpass the wider transition band is first narrowed to the
    width of the narrower one (see the source).

    Returns the taps, times the nominal pass gain, and a label such as
    ``"equiripple 1177 taps"``. Raises as ``min_taps_equiripple``
    (:class:`~planner.errors.SpecNotMetError` beyond ``max_taps``,
    :class:`~planner.errors.DesignCancelled`).
    """
    fspec = spec.fir_spec()
    if spec.kind == "bandpass":
        # The wider transition narrowed to the narrower one: a tighter spec (so
        # the original one is still met) that remez handles well; in a wide
        # don't-care band next to a narrow one the exchange goes astray. The
        # length is set by the narrower transition either way (Kaiser 1974: the
        # length goes as one over the transition width).
        (pl, ph), (sl, sh) = spec.pass_hz, spec.stop_hz
        tw = min(pl - sl, sh - ph)
        fspec = dfir.FirSpec("bandpass", (pl, ph), (pl - tw, ph + tw), spec.ripple_db,
                             spec.atten_db)
    d = dfir.min_taps_equiripple(fspec, fs_hz, max_taps=max_taps, progress=progress,
                                 cancel=cancel)
    return d.taps * 10.0 ** (spec.pass_gain_db / 20.0), f"equiripple {d.n_taps} taps"


# --------------------------------------------------------------------------
# one chain, one project


@dataclass(frozen=True)
class _ChainResult:
    own: str
    spec: DerivedSpec
    iir: Side
    fir: Side


def compare_chain(sos: np.ndarray, fir: np.ndarray | None, fs_hz: float, design: str = "",
                  ripple_db: float = DEFAULT_RIPPLE_DB, atten_db: float = DEFAULT_ATTEN_DB,
                  iir_family: str = "auto", max_taps: int = dfir.DEFAULT_MAX_TAPS,
                  f_min_hz: float = 20.0, f_max_hz: float = 20000.0,
                  progress: Callable[[float], None] | None = None,
                  cancel: Callable[[], bool] | None = None) -> _ChainResult:
    """Compare one crossover chain with its equivalent of the other family.

    A chain with FIR taps is the FIR side and gets an IIR equivalent
    (:func:`iir_equivalent`); a chain of sections only is the IIR side and
    gets an FIR equivalent (:func:`fir_equivalent`).

    Returns an object with ``own`` (``"iir"`` or ``"fir"``), ``spec``,
    ``iir`` and ``fir`` (:class:`Side`). Raises :class:`SpecNotMetError`
    as :func:`derive_spec` and the equivalents do.
    """
    _check_family(iir_family)
    fs = float(fs_hz)
    sos = np.asarray(sos, float).reshape(-1, 6)
    spec = derive_spec(sos, fir, fs, ripple_db, atten_db)
    rng = dict(f_min_hz=f_min_hz, f_max_hz=f_max_hz)
    own = side_metrics(sos, fir, spec, fs, "project", design or "project design", **rng)
    if fir is None:
        taps, label = fir_equivalent(spec, fs, max_taps, progress, cancel)
        other = side_metrics(np.zeros((0, 6)), taps, spec, fs, "equivalent", label, **rng)
        return _ChainResult("iir", spec, own, other)
    eq_sos, label = iir_equivalent(spec, fs, iir_family)
    other = side_metrics(eq_sos, None, spec, fs, "equivalent", label, **rng)
    return _ChainResult("fir", spec, other, own)


def _parts(band, fs: float, kept: set[int] = frozenset()):
    """(crossover sos, crossover fir, EQ sos, EQ fir, label, kept labels) of a band's live filters.

    The filters at the positions ``kept`` (end-of-range ones) go with the EQ.
    """
    xs, xf, es, ef, labels, kept_labels = [], None, [], None, [], []
    for k, f in enumerate(band.filters):
        if f.bypass:
            continue
        d = engine.design_filter(f, fs)
        if k in kept:
            kept_labels.append(f.label())
        if is_crossover(f) and k not in kept:
            labels.append(f.label())
            if len(d.sos):
                xs.append(d.sos)
            if d.fir is not None:
                xf = d.fir if xf is None else np.convolve(xf, d.fir)
        else:
            if len(d.sos):
                es.append(d.sos)
            if d.fir is not None:
                ef = d.fir if ef is None else np.convolve(ef, d.fir)

    def stack(lst):
        return np.vstack(lst) if lst else np.zeros((0, 6))

    return stack(xs), xf, stack(es), ef, " + ".join(labels), tuple(kept_labels)


def _scope_callbacks(progress, cancel, text: str):
    """Explicit callbacks, else those of the current :mod:`planner.progress` scope."""
    from planner import progress as pg

    if progress is None and pg.active():
        progress = pg.reporter(text)
    if cancel is None and pg.active():
        cancel = pg.cancelled
    return progress, cancel


def compare_project(project: Project, ripple_db: float = DEFAULT_RIPPLE_DB,
                    atten_db: float = DEFAULT_ATTEN_DB, iir_family: str = "auto",
                    max_taps: int = dfir.DEFAULT_MAX_TAPS,
                    progress: Callable[[float], None] | None = None,
                    cancel: Callable[[], bool] | None = None) -> Comparison:
    """Compare every band of ``project`` with its equivalent of the other family.

    Parameters
    ----------
    project : Project
    ripple_db, atten_db : float
        Spec read from each band (see :func:`derive_spec`).
    iir_family : {"auto", "butterworth", "elliptic"}
        IIR equivalents of FIR bands (see :func:`iir_equivalent`).
    max_taps : int
        Longest FIR equivalent tried.
    progress : callable ``(fraction) -> None``, optional
        Overall progress of the FIR searches, in [0, 1]. Without it (and
        without ``cancel``) the current :mod:`planner.progress` scope, if
        any, is used.
    cancel : callable ``() -> bool``, optional
        Asked before each trial FIR; True stops with
        :class:`planner.errors.DesignCancelled`.

    Returns
    -------
    Comparison
        A band whose spec cannot be met has status :data:`NOT_MET` and the
        reason; the other bands are still compared.
    """
    r, a = _check_spec_numbers(ripple_db, atten_db)
    _check_family(iir_family)
    fs = float(project.sample_rate)
    rep = engine.analyse(project)
    nb = len(project.bands)
    ends = end_of_range(project)
    parts = [_parts(b, fs, e) for b, e in zip(project.bands, ends)]
    bands: list[BandComparison] = []
    for i, (band, (xs, xf, _, _, label, kept)) in enumerate(zip(project.bands, parts)):
        if not len(xs) and xf is None:
            msg = (f"only end-of-range filters ({', '.join(kept)}), kept as they are in both "
                   "builds" if kept else "")
            bands.append(BandComparison(i, band.name, NO_CROSSOVER, message=msg,
                                        end_of_range=kept))
            continue
        if kept:
            label += f"; {', '.join(kept)} kept on both sides (end of range)"
        prog, canc = _scope_callbacks(progress, cancel,
                                      f"compare: band {band.name}, FIR equivalent")
        sub = None
        if prog is not None:
            def sub(f, i=i, prog=prog):
                prog((i + f) / nb)
        try:
            c = compare_chain(xs, xf, fs, label, r, a, iir_family, max_taps,
                              project.analysis.f_min, project.analysis.f_max, sub, canc)
        except SpecNotMetError as e:
            bands.append(BandComparison(i, band.name, NOT_MET,
                                        own="fir" if xf is not None else "iir",
                                        message=f"band {band.name}: {e}", end_of_range=kept))
            continue
        bands.append(BandComparison(i, band.name, OK, c.own, c.spec, c.iir, c.fir,
                                    end_of_range=kept))
    if progress is not None:
        progress(1.0)
    return Comparison(project.name, fs, r, a, iir_family, bands,
                      _build(project, rep, parts, bands, "iir"),
                      _build(project, rep, parts, bands, "fir"))


def _build(project: Project, rep: engine.Report, parts, bands: Sequence[BandComparison],
           family: str) -> Build:
    """Every band's crossover replaced by its ``family`` side; EQ, gain, delay, polarity kept."""
    fs = float(project.sample_rate)
    missing = [b.name for b in bands if b.status == NOT_MET]
    if missing:
        return Build(family, False, missing)
    chains, delta = [], []
    for b, (xs, xf, es, ef, _, _), own in zip(bands, parts, rep.designs):
        if b.status != OK:
            chains.append(None)
            delta.append(0.0)
            continue
        side = b.iir if family == "iir" else b.fir
        own_side = b.iir if b.own == "iir" else b.fir
        chains.append(side)
        delta.append(side.latency_samples - own_side.latency_samples)
    top = max(delta) if delta else 0.0
    align = [top - d for d in delta]
    designs = []
    for (b, (xs, xf, es, ef, _, _), own, side, al) in zip(bands, parts, rep.designs, chains,
                                                          align):
        if side is None:
            designs.append(own)
            continue
        sos = np.vstack([es, side.sos]) if len(es) else side.sos
        f = side.fir
        if ef is not None:
            f = ef if f is None else np.convolve(ef, f)
        designs.append(BandDesign(sos, f, own.gain_db, own.delay_samples + al, own.invert))
    active = project.active()
    lat = max((s.latency_samples + al for s, al in zip(chains, align) if s is not None),
              default=0.0)
    inverted = [b.name for b in project.bands if b.invert]
    if not any(active):
        return Build(family, True, [], None, None, None, lat, 1000.0 * lat / fs, align,
                     inverted, designs)
    h = engine.evaluate(designs, rep.freqs_hz, fs).sum(active)
    dev, at, ripple = an.flatness(rep.freqs_hz, h)
    return Build(family, True, [], dev, at, ripple, lat, 1000.0 * lat / fs, align, inverted,
                 designs)
