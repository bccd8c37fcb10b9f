"""The other family's equivalent of a band: the IIR or FIR that meets the same spec, and each
side's figures."""

from __future__ import annotations

import math
from typing import Callable

import numpy as np
from planner.lazyimport import scipy_module

from planner.compare.results import DerivedSpec, Side, db10
from planner.compare.spec import check_family
from planner.dsp import fir as dfir
from planner.dsp.fir.spec import deviations
from planner.dsp import iir
from planner.dsp.response import band_responses
from planner.errors import SpecNotMetError
from planner.timeresp import chain_impulse

__all__ = ["MAX_ELLIPTIC_ORDER", "iir_order", "side_metrics", "butterworth_order",
           "elliptic_order", "iir_equivalent", "fir_equivalent"]


# IIR_FAMILIES (from planner.defaults): ``auto``: Butterworth when an order up
# to 8 (the largest planner.dsp.iir designs) meets the spec, else elliptic.
#: Highest elliptic order tried (sections stay well conditioned far beyond it).
MAX_ELLIPTIC_ORDER = 40


#: Orders tried above the formula's before an IIR equivalent is given up.
_EXTRA_ORDERS = 3


#: Design margins of the IIR equivalents (see :func:`iir_equivalent`).
_MARGIN_DB, _MARGIN_REL = 1e-3, 1e-4


def _chain_impulse(sos: np.ndarray, fir: np.ndarray | None, fs_hz: float) -> np.ndarray:
    """The chain's impulse response, as a WAV export holds it (unit gain, no delay)."""
    return chain_impulse(sos, fir, 1.0, 0.0, fs_hz)[0]


def iir_order(sos: np.ndarray) -> int:
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
    return Side(source=source, design=design, order=iir_order(sos), taps=n_taps,
                sections=len(sos), multiplies_per_sample=mult,
                multiplies_per_sample_direct=mult_direct, latency_samples=latency,
                latency_ms=1000.0 * latency / fs, group_delay_variation_ms=gd_var,
                pre_ringing=pre, pre_ringing_db=db10(pre), ripple_db=ripple, atten_db=atten,
                sos=sos, fir=None if fir is None else np.asarray(fir, float))


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
    special = scipy_module("special")
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
    return scipy_module("signal").ellip(n, ripple_db, atten_db, pass_hz, btype=kind, fs=fs,
                                        output="sos")


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
    check_family(family)
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
    ripple, atten = math.inf, -math.inf    # what the designs reached (none yet)
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
    est = dfir.estimate_taps(fspec, fs_hz)
    if est > max_taps:
        # Refused before any trial: a search up to max_taps cannot succeed, and each trial at
        # thousands of taps takes about a second (a subsonic highpass's slow skirt).
        raise SpecNotMetError(
            f"an equiripple FIR meeting {fspec.describe()} needs about {est} taps by Kaiser's "
            f"1974 estimate ({1000.0 * (est - 1) / 2 / fs_hz:.1f} ms of latency at "
            f"{fs_hz:g} Hz; a transition this narrow often needs more), more than the "
            f"{max_taps} taps compare tries: give a larger --max-taps (up to "
            f"{dfir.DEFAULT_MAX_TAPS}) to search for it, which is slow (each trial at that "
            "length takes a fraction of a second or more), or widen the spec (--atten-db, "
            "--ripple-db)", field="max_taps")
    d = dfir.min_taps_equiripple(fspec, fs_hz, max_taps=max_taps, progress=progress,
                                 cancel=cancel)
    return d.taps * 10.0 ** (spec.pass_gain_db / 20.0), f"equiripple {d.n_taps} taps"
