"""The shortest equiripple or least-squares FIR that meets a spec.

Each trial design comes from the design cache (:mod:`planner.dsp.fir.design`),
is measured on a dense grid (:func:`planner.dsp.fir.spec.measure_spec`) and
judged by its margin to the spec in dB (:func:`_margin_db`); the length search
itself is :func:`planner.dsp.fir.search.search_min_odd`.

References
----------
.. [2] J. F. Kaiser, "Nonrecursive digital filter design using the I0-sinh
   window function", Proc. IEEE Int. Symp. Circuits and Systems, 1974,
   pp. 20-23.
.. [3] T. W. Parks and J. H. McClellan, "Chebyshev approximation for
   nonrecursive digital filters with linear phase", IEEE Trans. Circuit
   Theory, vol. CT-19, no. 2, pp. 189-194, 1972.
.. [6] T. W. Parks and C. S. Burrus, "Digital Filter Design", Wiley, 1987,
   ch. 3 (least-squares FIR design).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Callable

import numpy as np

from planner.defaults import MAX_TAPS
from planner.dsp.fir.checks import check_method_taps
from planner.dsp.fir.design import COARSE_DENSITY, FIRLS, FULL_DENSITY, REMEZ, cached_design
from planner.dsp.fir.estimates import estimate_taps
from planner.dsp.fir.search import search_min_odd
from planner.dsp.fir.spec import FirSpec, deviations, measure_spec, spec_bands
from planner.errors import DesignError, SpecNotMetError

__all__ = ["DEFAULT_MAX_TAPS", "FirDesign", "min_taps_equiripple", "min_taps_least_squares"]

#: Largest tap count the searches try unless told otherwise.
DEFAULT_MAX_TAPS = MAX_TAPS

#: Margins (dB) beyond this are clipped: a design that far off says only "far".
_MARGIN_CLIP_DB = 300.0

#: Method names in messages.
_WHAT = {REMEZ: "equiripple (remez)", FIRLS: "least squares (firls)"}


@dataclass(frozen=True)
class FirDesign:
    """Result of a minimum-length search.

    Attributes
    ----------
    taps : ndarray
        The shortest odd-length design found that meets the spec.
    ripple_db, atten_db : float
        Its measured pass-band ripple and stop-band attenuation (dB).
    estimate_taps : int
        The Kaiser 1974 estimate (:func:`estimate_taps`) the search started from.
    trials : int
        Number of trial designs the search looked at (made, or taken from
        the design cache), the bracketing ones at the lower grid density
        included.
    """

    taps: np.ndarray
    ripple_db: float
    atten_db: float
    estimate_taps: int
    trials: int

    @property
    def n_taps(self) -> int:
        """Length of the design (taps)."""
        return len(self.taps)


def _margin_db(spec: FirSpec, ripple_db: float, atten_db: float) -> float:
    """How far a measured design is inside ``spec`` (dB; negative: outside).

    The smaller of the stop-band margin ``atten - A`` and the pass-band one
    ``20 log10(delta_p / delta_p_measured)``. An equiripple design of fixed
    weights keeps ``delta_p / delta_s`` constant, so both margins grow at
    the same rate with the length, nearly linearly in dB (Kaiser 1974 [2]_:
    ``-20 log10 sqrt(delta_p delta_s)`` grows by ``14.6 transition / fs``
    dB per tap).
    """
    dp, _ = deviations(spec.ripple_db, spec.atten_db)
    r = 10.0 ** (min(ripple_db, 600.0) / 20.0)
    dp_m = (r - 1.0) / (r + 1.0)
    mp = 20.0 * math.log10(dp / dp_m) if dp_m > 0 else math.inf
    m = min(mp, atten_db - spec.atten_db)
    return max(-_MARGIN_CLIP_DB, min(_MARGIN_CLIP_DB, m))


def _trial_of(method: str, spec: FirSpec, fs: float):
    """``trial(n, coarse)`` for :func:`search_min_odd`: a cached design, measured once.

    Its value is ``(taps, ripple_db, atten_db, why)``: the taps are None and
    ``why`` says what went wrong when the design failed.
    """
    def trial(n: int, coarse: bool):
        entry = cached_design(method, spec, fs, n, COARSE_DENSITY if coarse else FULL_DENSITY)
        if entry.taps is None:
            return False, None, (None, math.inf, -math.inf, entry.error)
        if entry.measured is None:
            entry.measured = measure_spec(entry.taps, spec, fs)
        r, a = entry.measured
        ok = r <= spec.ripple_db and a >= spec.atten_db
        return ok, _margin_db(spec, r, a), (entry.taps, r, a, "")
    return trial


def _min_taps(method: str, spec: FirSpec, fs_hz: float, max_taps: int, progress,
              cancel) -> FirDesign:
    _, _, _, tw = spec_bands(spec, fs_hz)
    if isinstance(max_taps, bool) or not isinstance(max_taps, (int, np.integer)) or max_taps < 3:
        raise DesignError(f"must be a whole number of taps >= 3, not {max_taps!r}",
                          field="max_taps")
    fs = float(fs_hz)
    max_taps = int(max_taps) if max_taps % 2 else int(max_taps) - 1
    check_method_taps(method, max_taps, "max_taps")
    est = estimate_taps(spec, fs)
    # Kaiser 1974 [2]: each tap adds about 14.6 df dB of attenuation (df = transition / fs).
    slope0 = 14.6 * tw / fs
    n, value, trials = search_min_odd(_trial_of(method, spec, fs), est, max_taps, slope0,
                                      progress, cancel, coarse_is_exact=method == FIRLS)
    if n is None:
        raise _not_met(method, spec, fs, max_taps, est, value)
    h, r, a, _ = value
    return FirDesign(taps=h.copy(), ripple_db=r, atten_db=a, estimate_taps=est, trials=trials)


def _not_met(method: str, spec: FirSpec, fs: float, max_taps: int, est: int,
             best) -> SpecNotMetError:
    """The error of a search that met nothing up to ``max_taps``: what it reached, what it needs."""
    what = _WHAT[method]
    n_best, (h, r, a, why) = best
    reached = (f"reached ripple {r:.3g} dB and attenuation {a:.3g} dB at {n_best} taps"
               if h is not None else f"{what} failed at {n_best} taps ({why})")
    need = (f"about {est} taps would be needed (Kaiser 1974 estimate)"
            if est > max_taps else
            f"the Kaiser 1974 estimate is {est} taps, but {what} did not "
            f"meet the spec up to max_taps")
    return SpecNotMetError(
        f"{spec.describe()} not met by {what} within max_taps {max_taps} at "
        f"{fs:g} Hz: {reached}; {need}", field="taps")


def min_taps_equiripple(spec: FirSpec, fs_hz: float, max_taps: int = DEFAULT_MAX_TAPS,
                        progress: Callable[[float], None] | None = None,
                        cancel: Callable[[], bool] | None = None) -> FirDesign:
    """Shortest odd-length Parks-McClellan filter that meets ``spec``.

    Each trial design is measured on a dense grid (:func:`measure_spec`)
    and its margin to the spec taken in dB (the smaller of the stop-band
    and pass-band margins), which is close to linear in the length. From
    the Kaiser 1974 estimate (:func:`estimate_taps`) the search predicts
    the length where the margin crosses 0 dB by the secant through its
    last two trials: first with designs at half of remez's grid density,
    then with full ones, and ends when a full design of ``N`` taps meets
    the spec and one of ``N - 2`` does not. A prediction that stops
    converging falls back to bisection, so the result does not depend on
    the estimate. Only a design that meets both ripple and attenuation is
    returned; designs are kept in the design cache
    (:func:`clear_design_cache`).

    Parameters
    ----------
    spec : FirSpec
    fs_hz : float
    max_taps : int
        Longest design tried.
    progress : callable, optional
        Called with a fraction in [0, 1] after each trial (non-decreasing,
        ends with 1.0).
    cancel : callable, optional
        Called before each trial; if it returns True the search stops with
        :class:`DesignCancelled`.

    Returns
    -------
    FirDesign

    Raises
    ------
    SpecNotMetError
        If no length up to ``max_taps`` meets the spec (or remez does not
        converge); the message gives the spec, the best ripple and
        attenuation reached, and the estimated length needed.
    DesignCancelled

    References
    ----------
    .. [2] Kaiser, 1974.
    .. [3] Parks and McClellan, 1972.
    """
    return _min_taps(REMEZ, spec, fs_hz, max_taps, progress, cancel)


def min_taps_least_squares(spec: FirSpec, fs_hz: float, max_taps: int = DEFAULT_MAX_TAPS,
                           progress: Callable[[float], None] | None = None,
                           cancel: Callable[[], bool] | None = None) -> FirDesign:
    """Shortest odd-length weighted least-squares (firls) filter that meets ``spec``.

    The weights are those of the equiripple design (``delta_p/delta_s`` in
    the stop band). The search is the one of :func:`min_taps_equiripple`
    (firls has no design grid, so every trial is a full design), started
    from the Kaiser estimate: the equiripple filter is the shortest that
    meets a minimax spec, so a least-squares one is no shorter and the
    search usually goes up from there.

    Parameters, returns and raises as :func:`min_taps_equiripple`.

    References
    ----------
    .. [6] Parks and Burrus, "Digital Filter Design", 1987, ch. 3.
    """
    return _min_taps(FIRLS, spec, fs_hz, max_taps, progress, cancel)
