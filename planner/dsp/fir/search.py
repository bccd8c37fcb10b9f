"""The fewest odd length whose design meets a spec, found from few trial designs.

A trial design of ``n`` taps is judged by its margin to the spec in dB (see
:mod:`planner.dsp.fir.min_taps`), which grows close to linearly with the
length (Kaiser 1974 [2]_). :func:`search_min_odd` predicts where the margin
crosses 0 dB, brackets it, and then checks below the answer for the jitter
of scipy's remez; :class:`OddSearch` holds its state, one method per step.

References
----------
.. [2] J. F. Kaiser, "Nonrecursive digital filter design using the I0-sinh
   window function", Proc. IEEE Int. Symp. Circuits and Systems, 1974,
   pp. 20-23.
"""

from __future__ import annotations

import math
from typing import Callable

import numpy as np

from planner.errors import DesignCancelled

__all__ = ["OddSearch", "search_min_odd", "descent_floor"]

#: A trial whose predicted length is more than this fraction away (or 4 taps)
#: is followed by a bracketing trial at the lower grid density; a closer one
#: by a full design. (At 95-100 dB the coarse designs' margins scatter by a
#: few dB, so they only serve to get near.)
_COARSE_STEP = 0.1
#: A secant through a coarse and a full trial needs margins this far apart
#: (dB), well above what the grid density changes.
_MIXED_SECANT_DB = 1.5
#: Secant slopes are kept between 1/_SLOPE_LOW and _SLOPE_RANGE times the
#: nominal (Kaiser) slope: two noisy margins close together give any slope.
_SLOPE_LOW, _SLOPE_RANGE = 2.0, 3.0
#: Fraction of the way a prediction from one full trial and the nominal slope
#: goes: near the crossing the margin usually grows 1.5-2 times faster.
_DAMP = 0.67
#: Allowance (dB) of the downward check, at least: see :func:`descent_floor`.
_NOISE_FLOOR_DB = 0.05
#: Full trials nearest the answer that the downward check fits its line to.
_FIT_POINTS = 5
#: The margin's jitter from one length to the next, in odd steps of the
#: nominal slope (measured over the tests' sweeps: within about 1.5 steps).
_JITTER_STEPS = 1.5
#: Most extra full designs the downward check makes.
_MAX_DESCENT = 8
#: Most trials of the prediction step (it takes 2-5 as a rule; bisection over
#: the whole range takes at most 13).
_MAX_TRIALS = 40

#: ``trial(n, coarse) -> (meets, margin_db or None, value)``.
Trial = Callable[[int, bool], tuple[bool, float | None, object]]


def _ceil_odd(x: float) -> int:
    """The smallest odd whole number >= ``x``."""
    n = int(math.ceil(x - 1e-9))
    return n if n % 2 else n + 1


def _round_odd(x: float) -> int:
    """The odd whole number nearest to ``x``."""
    return 2 * int(math.floor((x - 1.0) / 2.0 + 0.5)) + 1


def descent_floor(full: dict, hi: int, slope0: float) -> float:
    """Shortest length that could still meet the spec below ``hi``, given the full trials.

    scipy's remez is not exactly monotone in the length: the margin it
    reaches jitters about its trend by up to about one and a half odd steps
    (some tenths of a dB at 95-100 dB, where its stop-band error is near the
    limits of its arithmetic), so a length just below the first miss may
    still meet. The trend down from ``hi`` falls at ``s`` dB per tap, the
    slope fitted to the full trials nearest ``hi`` but no steeper than the
    nominal ``slope0``; a shorter length can meet only while that line plus an
    allowance ``L`` stays above 0 dB, that is down to ``hi - (m(hi) + L) / s``.
    ``L`` is the largest of _NOISE_FLOOR_DB, the scatter of those trials about
    the line, and _JITTER_STEPS odd steps of the nominal slope.

    Parameters
    ----------
    full : dict
        ``{n: (meets, margin_db or None, value)}`` of the full trials.
    hi : int
        The shortest full trial that meets.
    slope0 : float
        Nominal margin gained per tap (dB).
    """
    pts = sorted(((k, v[1]) for k, v in full.items() if v[1] is not None),
                 key=lambda p: abs(p[0] - hi))[:_FIT_POINTS]
    m_hi = full[hi][1] if full[hi][1] is not None else 0.0
    s, scatter = slope0, 0.0
    n = np.array([p[0] for p in pts], dtype=float)
    m = np.array([p[1] for p in pts], dtype=float)
    if len(pts) >= 2 and np.ptp(n) > 0:
        fit = np.polyfit(n, m, 1)[0] if len(pts) >= 3 else (m[1] - m[0]) / (n[1] - n[0])
        s = min(max(float(fit), slope0 / _SLOPE_LOW), slope0)
        if len(pts) >= 3:
            resid = m - (m_hi + s * (n - hi))
            scatter = float(np.max(np.abs(resid - np.median(resid))))
    allowance = max(_NOISE_FLOOR_DB, scatter, _JITTER_STEPS * 2.0 * slope0)
    return hi - (m_hi + allowance) / s


def search_min_odd(trial: Trial, n_start: int, max_taps: int, slope0: float,
                   progress: Callable[[float], None] | None,
                   cancel: Callable[[], bool] | None, coarse_is_exact: bool = False):
    """Smallest odd ``n`` in ``[3, max_taps]`` whose full design meets the spec.

    1. Prediction (:meth:`OddSearch.converge`): the margin is close to
       linear in the length, so each trial predicts where it crosses 0 dB,
       by the secant through the two trials nearest the crossing (a meeting
       and a missing full one when both are known; from ``slope0`` while
       there is only one trial). The first trial is at ``n_start``; a
       prediction more than _COARSE_STEP away is tried at the lower grid
       density (a bracketing trial), a nearer one with a full design. It
       ends when a full design of ``N`` taps meets the spec and one of
       ``N - 2`` does not. Predictions that land beyond a known bound, or
       two in a row that do not halve the bracket, give way to bisection (or
       to a doubling step while nothing meets), so the search converges
       whatever the first guess.
    2. Downward check (:meth:`OddSearch.descend`): shorter lengths are tried
       while :func:`descent_floor` says one could still meet; one that does
       becomes ``N``.

    Parameters
    ----------
    trial : callable
        ``trial(n, coarse)`` designs ``n`` taps (at the lower grid density
        when ``coarse``) and returns ``(meets, margin_db, value)``: whether it
        meets the spec, its margin in dB (None when the design failed) and
        what to return.
    n_start : int
        First length tried (rounded to odd, clipped to ``[3, max_taps]``).
    max_taps : int
        Longest length tried (odd).
    slope0 : float
        Nominal margin gained per tap (dB).
    progress : callable or None
        Called with a fraction in [0, 1] after each trial, 1.0 at the end.
    cancel : callable or None
        Called before each trial; True stops the search with
        :class:`planner.errors.DesignCancelled`.
    coarse_is_exact : bool
        The coarse trials are the full ones (no design grid): every trial
        is then a full one.

    Returns
    -------
    tuple
        ``(n, value, trials)``, or ``(None, (n_best, value), trials)`` when
        even ``max_taps`` fails (``n_best`` the longest full design tried).
    """
    search = OddSearch(trial, max_taps, slope0, progress, cancel, coarse_is_exact)
    search.converge(n_start)
    search.descend()
    return search.result()


class OddSearch:
    """State of :func:`search_min_odd`: the trials so far, and one method per step.

    Attributes
    ----------
    full : dict
        ``{n: (meets, margin_db or None, value)}`` of the full trials.
    coarse : dict
        ``{n: margin_db}`` of the coarse trials that made a design.
    coarse_tried : set
        Lengths tried coarse (a failed design included).
    steps : int
        Trials so far.
    """

    def __init__(self, trial: Trial, max_taps: int, slope0: float,
                 progress: Callable[[float], None] | None, cancel: Callable[[], bool] | None,
                 coarse_is_exact: bool = False):
        self.trial, self.max_taps, self.slope0 = trial, max_taps, slope0
        self.progress, self.cancel, self.coarse_is_exact = progress, cancel, coarse_is_exact
        self.steps = 0
        self.full: dict[int, tuple[bool, float | None, object]] = {}
        self.coarse: dict[int, float] = {}
        self.coarse_tried: set[int] = set()
        self.widths: list[int] = []     # bracket widths hi - lo, one per converging step
        self.growth = 0                 # the last upward step while nothing met

    # -- trials and what they bound

    def run(self, n: int, is_coarse: bool) -> None:
        """Make trial ``n`` (coarse or full) and record it; stop if cancelled."""
        if self.cancel is not None and self.cancel():
            raise DesignCancelled(
                f"the design was cancelled after {self.steps} trial designs "
                f"(next would have been {n} taps)", field="taps")
        self.steps += 1
        res = self.trial(n, is_coarse)
        if is_coarse and not self.coarse_is_exact:
            self.coarse_tried.add(n)
            if res[1] is not None:
                self.coarse[n] = res[1]
        else:
            self.full[n] = res
        # Most searches end within 3-5 trials; the fraction never goes back.
        if self.progress is not None:
            self.progress(0.9 * (1.0 - 0.6 ** self.steps))

    def bounds(self) -> tuple[int, int | None]:
        """Shortest full design that meets, and the longest one below it that misses.

        A length whose design failed (remez did not converge: it does at long
        lengths and high attenuations) says nothing about the spec and is no
        bound; it is only never tried again.
        """
        hi = min((k for k, v in self.full.items() if v[0]), default=None)
        lo = max((k for k, v in self.full.items()
                  if not v[0] and v[1] is not None and (hi is None or k < hi)), default=1)
        return lo, hi

    def untried(self, lower: int, upper: int, near: int) -> int | None:
        """The untried odd length in [lower, upper] nearest to ``near`` (None if none)."""
        near = min(max(near, lower), upper)
        for d in range(0, upper - lower + 1, 2):
            for k in (near - d, near + d):
                if lower <= k <= upper and k not in self.full:
                    return k
        return None

    def done(self, lo: int, hi: int | None) -> bool:
        """Every length between the bounds tried (or, with nothing meeting, up to max_taps)."""
        if hi is not None:
            return self.untried(lo + 2, hi - 2, hi - 2) is None
        return lo >= self.max_taps or self.untried(lo + 2, self.max_taps, self.max_taps) is None

    # -- the prediction

    def slope_of(self, p1, p2, mixed: bool) -> float | None:
        """Secant slope (dB per tap) through two ``(n, margin)`` points, kept near ``slope0``.

        None when the points give no slope: the same length, margins too close
        for a coarse-and-full pair (``mixed``), or a slope that is not positive.
        """
        (n1, m1), (n2, m2) = p1, p2
        if n1 == n2 or (mixed and abs(m2 - m1) < _MIXED_SECANT_DB):
            return None
        s = (m2 - m1) / (n2 - n1)
        if not (s > 0 and math.isfinite(s)):
            return None
        # Two noisy margins close together can give any slope: keep it within
        # a factor of _SLOPE_RANGE of the nominal one.
        return min(max(s, self.slope0 / _SLOPE_LOW), self.slope0 * _SLOPE_RANGE)

    def predict(self) -> tuple[float, int, bool] | None:
        """Length where the margin is predicted to cross 0 dB, the trial it is predicted
        from, and whether that is a full trial and the nominal slope."""
        pts = [(k, v[1], True) for k, v in self.full.items() if v[1] is not None]
        pts += [(k, m, False) for k, m in self.coarse.items() if k not in self.full]
        if not pts:
            return None
        # The trial nearest the crossing (a full one on a tie).
        ref = min(pts, key=lambda p: (abs(p[1]), not p[2]))
        s = None
        meet = [p for p in pts if p[2] and self.full[p[0]][0]]
        miss = [p for p in pts if p[2] and not self.full[p[0]][0]]
        if meet and miss:                       # full trials on both sides
            s = self.slope_of(min(meet)[:2], max(miss)[:2], False)
        if s is None:
            for other in sorted((p for p in pts if p is not ref), key=lambda p: abs(p[1])):
                s = self.slope_of(ref[:2], other[:2], other[2] != ref[2])
                if s is not None:
                    break
        nominal = s is None
        if nominal:
            s = self.slope0
        # The secant's root: m(n) = m_ref + s (n - n_ref) = 0.
        return ref[0] - ref[1] / s, ref[0], nominal and ref[2]

    def predicted(self, lo: int, hi: int | None) -> tuple[int | None, bool]:
        """Next length from :meth:`predict`, and whether to try it coarse.

        ``(None, False)`` when there is no prediction, or it lands beyond a
        bound by more than a step (the margin is not linear there).
        """
        guess = self.predict()
        if guess is None or not math.isfinite(guess[0]):
            return None, False
        root, ref, nominal_full = guess
        # Never jump by more than 4x at once, whatever the prediction says.
        root = min(max(root, ref / 4.0), 4.0 * ref + 8.0)
        far = abs(root - ref) > max(_COARSE_STEP * root, 4.0)
        is_coarse = bool(far) and not self.coarse_is_exact
        if not is_coarse and nominal_full:
            # From one full trial and the nominal slope only: go part of the
            # way (the slope near the crossing is often steeper).
            root = ref + _DAMP * (root - ref)
        nxt = _round_odd(root)
        if nxt < lo - 2 or (hi is not None and nxt > hi + 2):
            return None, False
        return nxt, is_coarse

    def fallback(self, lo: int, hi: int | None) -> int:
        """Next length without a prediction: bisect the bracket, or halve the way down to
        the shortest failed design above ``lo``, or grow from ``lo`` by a doubling step."""
        failed_above = [k for k, v in self.full.items() if v[1] is None and k > lo]
        if hi is not None:
            return _round_odd((lo + hi) / 2)
        if failed_above:
            return _round_odd((lo + min(failed_above)) / 2)
        self.growth = max(2 * self.growth, _ceil_odd(0.05 * lo) + 1)
        return lo + self.growth

    # -- the two stages

    def converge(self, n_start: int) -> None:
        """Stage 1: trials from ``n_start`` until a meeting ``N`` and a missing ``N - 2``."""
        n, is_coarse = min(max(3, _round_odd(n_start)), self.max_taps), False
        while self.steps < _MAX_TRIALS:
            if is_coarse and n in self.coarse_tried:
                is_coarse = False
            if is_coarse or n not in self.full:
                self.run(n, is_coarse)
            lo, hi = self.bounds()
            if self.done(lo, hi):
                return
            if hi is not None and lo in self.full:
                self.widths.append(hi - lo)
            nxt, is_coarse = self.predicted(lo, hi)
            if nxt is None:
                nxt, is_coarse = self.fallback(lo, hi), False
            if len(self.widths) >= 3 and self.widths[-1] * 2 > self.widths[-3]:
                nxt, is_coarse = _round_odd((lo + hi) / 2), False   # slow progress: bisect
            lower, upper = lo + 2, (self.max_taps if hi is None else hi - 2)
            n = self.untried(lower, upper, nxt)
            if n is None:
                return
            if is_coarse and n != min(max(nxt, lower), upper):
                is_coarse = False

    def descend(self) -> None:
        """Stage 2: full trials below the answer while :func:`descent_floor` allows a meet."""
        _, hi = self.bounds()
        extra = 0
        while (hi is not None and extra < _MAX_DESCENT
               and self.steps < _MAX_TRIALS + _MAX_DESCENT):
            floor = descent_floor(self.full, hi, self.slope0)
            k = next((j for j in range(hi - 2, 2, -2) if j not in self.full), None)
            if k is None or k < floor:
                break
            self.run(k, False)
            extra += 1
            _, hi = self.bounds()
        if self.progress is not None:
            self.progress(1.0)

    def result(self):
        """``(n, value, trials)``, or ``(None, (n_best, value), trials)`` if nothing met."""
        _, hi = self.bounds()
        if hi is None:                 # the longest design made, else the longest tried
            best = max((k for k, v in self.full.items() if v[1] is not None),
                       default=max(self.full))
            return None, (best, self.full[best][2]), self.steps
        return hi, self.full[hi][2], self.steps
