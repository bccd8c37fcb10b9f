"""Linear-phase N-band splits whose bands sum to a pure delay.

References
----------
.. [1] A. V. Oppenheim and R. W. Schafer, "Discrete-Time Signal Processing",
   3rd ed., Pearson, 2010, ch. 7 (the delayed impulse is the all-pass of a
   linear-phase type I FIR).
"""

from __future__ import annotations

from typing import Sequence

import numpy as np
from planner.lazyimport import scipy_module

from planner.dsp.fir.checks import check_freq, check_fs, check_positive, check_taps
from planner.dsp.fir.design import MAXITER, least_squares_fir
from planner.dsp.fir.windows import window_fir
from planner.errors import DesignError

__all__ = ["complementary_split"]


def complementary_split(crossovers_hz: Sequence[float], fs_hz: float, taps: int,
                        design: str = "window", window: str = "hann", beta: float | None = None,
                        transition_hz: float | None = None,
                        stop_weight: float = 1.0) -> list[np.ndarray]:
    """Linear-phase N-band split whose bands sum to a pure delay.

    With lowpasses ``L_1 .. L_N`` of the same odd length at the increasing
    crossovers, the bands are ``L_1, L_2 - L_1, ..., L_N - L_{N-1},
    delta - L_N`` (``delta`` the unit impulse at ``(taps-1)/2``): their sum
    telescopes to ``delta``, a delay of ``(taps-1)/2`` samples with flat
    magnitude and no phase error. For one crossover this is the familiar
    "highpass = delay minus lowpass".

    Parameters
    ----------
    crossovers_hz : sequence of float
        Crossover frequencies in Hz, strictly increasing, in (0, fs/2).
    fs_hz : float
    taps : int
        Odd length of every band.
    design : {"window", "equiripple", "least_squares"}
        How the lowpasses are designed: :func:`window_fir` at each crossover
        (``window``, ``beta``), or remez / firls with a transition band of
        ``transition_hz`` centred on each crossover (weight ``stop_weight``
        on the stop band).
    window, beta : see :func:`window_fir`.
    transition_hz : float, optional
        Required for ``"equiripple"`` and ``"least_squares"``.
    stop_weight : float

    Returns
    -------
    list of ndarray
        ``len(crossovers_hz) + 1`` arrays of shape (taps,), lowest band first.

    References
    ----------
    .. [1] Oppenheim and Schafer, 3rd ed., ch. 7 (the delayed impulse is the
       all-pass of a linear-phase type I FIR).
    """
    fs = check_fs(fs_hz)
    n = check_taps(taps, odd=True)
    xo = _check_crossovers(crossovers_hz, fs)
    if design == "window":
        lows = [window_fir("lowpass", f, fs, n, window=window, beta=beta) for f in xo]
    elif design in ("equiripple", "least_squares"):
        lows = _optimal_lowpasses(design, xo, fs, n, transition_hz, stop_weight)
    else:
        raise DesignError(f"must be window, equiripple or least_squares, not {design!r}",
                          field="design")
    delta = np.zeros(n)
    delta[(n - 1) // 2] = 1.0
    nested = [np.zeros(n)] + lows + [delta]
    return [nested[i + 1] - nested[i] for i in range(len(xo) + 1)]


def _check_crossovers(crossovers_hz, fs: float) -> np.ndarray:
    """The crossovers as an array: at least one, each in (0, fs/2), strictly increasing."""
    xo = np.atleast_1d(np.asarray(crossovers_hz, dtype=float))
    if xo.ndim != 1 or len(xo) == 0:
        raise DesignError(f"must be a list of at least one frequency, not {crossovers_hz!r}",
                          field="crossovers")
    for i, f in enumerate(xo):
        check_freq(f, fs, f"crossovers[{i}]")
    if np.any(np.diff(xo) <= 0):
        raise DesignError(f"must be strictly increasing, not {[float(x) for x in xo]!r}",
                          field="crossovers")
    return xo


def _optimal_lowpasses(design: str, xo: np.ndarray, fs: float, n: int, transition_hz,
                       stop_weight) -> list[np.ndarray]:
    """Equiripple (remez) or least-squares (firls) lowpasses, a transition centred on each
    crossover."""
    if transition_hz is None:
        raise DesignError(f"the {design} split needs transition_hz, none given",
                          field="transition_hz")
    tw = check_positive(transition_hz, "transition_hz", "Hz")
    if xo[0] - tw / 2 <= 0 or xo[-1] + tw / 2 >= fs / 2:
        raise DesignError(f"{tw:g} Hz puts a band edge outside (0, {fs / 2:g}) "
                          "Hz around the outer crossovers", field="transition_hz")
    if design == "least_squares":
        return [least_squares_fir("lowpass", f, fs, n, tw, stop_weight=stop_weight) for f in xo]
    sw = check_positive(stop_weight, "stop_weight", "(relative weight)")
    return [scipy_module("signal").remez(n, [0, f - tw / 2, f + tw / 2, fs / 2], [1, 0],
                         weight=[1, sw], fs=fs, maxiter=MAXITER) for f in xo]
