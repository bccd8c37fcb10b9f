"""Reading a magnitude spec off a band's crossover chain, and which filters make the crossover."""

from __future__ import annotations

import math
from typing import Callable

import numpy as np
from planner.lazyimport import scipy_module

from planner.compare.results import DEFAULT_ATTEN_DB, DEFAULT_RIPPLE_DB, DerivedSpec
from planner.defaults import IIR_FAMILIES
from planner.dsp import analysis as an
from planner.dsp.fir.checks import check_positive
from planner.dsp.response import band_responses
from planner.errors import DesignError, SpecNotMetError
from planner.model import Filter, Project

__all__ = ["check_spec_numbers", "check_family", "end_of_range", "is_crossover",
           "chain_response", "spec_grid", "derive_spec"]


#: Points of the log grid the spec is read from (edges are then refined).
_SPEC_POINTS = 8192


def check_spec_numbers(ripple_db, atten_db) -> tuple[float, float]:
    r = check_positive(ripple_db, "ripple_db", "dB")
    try:
        a = float(atten_db)
    except (TypeError, ValueError):
        a = float("nan")
    if not (a > r and math.isfinite(a)):
        raise DesignError(f"must be a number of dB above ripple_db ({r:g} dB), not {atten_db!r}",
                          field="atten_db")
    return r, a


def check_family(iir_family: str) -> str:
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


def chain_response(sos: np.ndarray, fir: np.ndarray | None, freqs_hz, fs_hz: float) -> np.ndarray:
    return band_responses([sos], np.atleast_1d(np.asarray(freqs_hz, float)), fs_hz,
                          firs=[fir]).h[0]


def spec_grid(fs: float) -> np.ndarray:
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
    return float(scipy_module("optimize").brentq(lambda f: mag_db(f) - target, a, b,
                                                 xtol=1e-9 * b, rtol=1e-12))


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
    r, a = check_spec_numbers(ripple_db, atten_db)
    fs = float(fs_hz)
    sos = np.asarray(sos, float).reshape(-1, 6)
    grid = spec_grid(fs)
    m = an.db(chain_response(sos, fir, grid, fs))

    def mag_db(f: float) -> float:
        return float(an.db(chain_response(sos, fir, [f], fs))[0])

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
