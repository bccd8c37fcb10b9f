"""Fixed-length optimal designs (equiripple, least squares) and the design cache.

References
----------
.. [3] T. W. Parks and J. H. McClellan, "Chebyshev approximation for
   nonrecursive digital filters with linear phase", IEEE Trans. Circuit
   Theory, vol. CT-19, no. 2, pp. 189-194, 1972.
.. [6] T. W. Parks and C. S. Burrus, "Digital Filter Design", Wiley, 1987,
   ch. 3 (least-squares FIR design).
"""

from __future__ import annotations

import threading
from collections import OrderedDict

import numpy as np
from planner.lazyimport import scipy_module

from planner.dsp.fir.checks import (check_method_taps, check_freq, check_fs, check_kind, check_positive, check_taps,
                                    check_upper_edge)
from planner.dsp.fir.spec import FirSpec, spec_bands, weights
from planner.errors import DesignError

__all__ = ["MAXITER", "REMEZ", "FIRLS", "COARSE_DENSITY", "FULL_DENSITY", "equiripple_fir",
           "least_squares_fir", "cached_design", "clear_design_cache"]

#: Most exchanges of the equiripple designs (scipy.signal.remez's maxiter).
MAXITER = 100

#: Names of the two methods in the design cache.
REMEZ, FIRLS = "remez", "firls"

#: Grid density of the bracketing trials of the equiripple search (half of
#: scipy.signal.remez's default 16, which the final designs use): at 1625
#: taps it costs about 0.75 of a full design, and the attenuation it reaches
#: is within about 0.15 dB of the full design's.
COARSE_DENSITY = 8
#: Full grid density (scipy.signal.remez's default).
FULL_DENSITY = 16
#: Most taps the design cache holds, over all its designs (8 bytes each).
_CACHE_VALUES = 1 << 21


# --------------------------------------------------------------------------
# designs


def equiripple_fir(spec: FirSpec, fs_hz: float, taps: int, maxiter: int = MAXITER,
                   grid_density: int = 16) -> np.ndarray:
    """Parks-McClellan (equiripple) design of ``spec`` at a fixed odd length.

    Weights are ``1`` in the pass band and ``delta_p / delta_s`` in the stop
    band, so that the equal weighted ripple splits as the spec asks. The
    result is not checked against the spec (see :func:`min_taps_equiripple`).
    Designs are kept in the design cache (see :func:`clear_design_cache`):
    the same spec, rate, length and settings are designed once.

    Parameters
    ----------
    spec : FirSpec
    fs_hz : float
    taps : int
        Odd length (type I).
    maxiter, grid_density : int
        Passed to :func:`scipy.signal.remez`. Most designs converge in well
        under 40 exchanges; some steep ones at high attenuation need more,
        and scipy then returns the unconverged design without a word (10 dB
        or more off the spec where a converged one meets it), hence 100.

    Returns
    -------
    ndarray, shape (taps,)
        A fresh array (the cached one is read-only).

    Raises
    ------
    ValueError
        As :func:`scipy.signal.remez` when the exchange does not converge.

    References
    ----------
    .. [3] Parks and McClellan, IEEE Trans. Circuit Theory CT-19(2), 1972.
    """
    spec_bands(spec, fs_hz)
    n = check_method_taps(REMEZ, check_taps(taps, odd=True))
    entry = cached_design(REMEZ, spec, float(fs_hz), n, int(grid_density), int(maxiter))
    if entry.taps is None:
        raise ValueError(entry.error)
    return entry.taps.copy()


def _remez(spec: FirSpec, fs_hz: float, n: int, grid_density: int, maxiter: int) -> np.ndarray:
    bands, desired, is_pass, _ = spec_bands(spec, fs_hz)
    edges = [f for b in bands for f in b]
    return scipy_module("signal").remez(n, edges, desired, weight=weights(spec, is_pass), fs=float(fs_hz),
                        maxiter=maxiter, grid_density=grid_density)


def least_squares_fir(kind: str, freq_hz: float, fs_hz: float, taps: int, transition_hz: float,
                      freq2_hz: float | None = None, stop_weight: float = 1.0) -> np.ndarray:
    """Weighted least-squares linear-phase FIR (scipy.signal.firls).

    The transition of width ``transition_hz`` is centred on each edge; for a
    lowpass at ``f`` the pass band is ``[0, f - tw/2]`` and the stop band
    ``[f + tw/2, fs/2]``.

    Parameters
    ----------
    kind : {"lowpass", "highpass", "bandpass"}
    freq_hz : float
        Edge in Hz (lower edge of a bandpass).
    fs_hz : float
    taps : int
        Odd length.
    transition_hz : float
        Width in Hz of each transition band (excluded from the error).
    freq2_hz : float, optional
        Upper edge of a bandpass.
    stop_weight : float
        Weight of the stop band(s) relative to the pass band.

    Returns
    -------
    ndarray, shape (taps,)

    References
    ----------
    .. [6] Parks and Burrus, "Digital Filter Design", 1987, ch. 3.
    """
    check_kind(kind)
    fs = check_fs(fs_hz)
    n = check_method_taps(FIRLS, check_taps(taps, odd=True))
    tw = check_positive(transition_hz, "transition_hz", "Hz")
    sw = check_positive(stop_weight, "stop_weight", "(relative weight)")
    f1 = check_freq(freq_hz, fs, "freq")
    spec = _centred_spec(kind, f1, fs, tw, freq2_hz)
    try:
        bands, desired, is_pass, _ = spec_bands(spec, fs)
    except DesignError:
        raise DesignError(f"{tw:g} Hz puts a band edge outside (0, {fs / 2:g}) Hz "
                          f"around freq {f1:g} Hz", field="transition_hz") from None
    return _firls(n, bands, desired, [1.0 if p else sw for p in is_pass], fs)


def _centred_spec(kind: str, f1: float, fs: float, tw: float, freq2_hz) -> FirSpec:
    """The bands of :func:`least_squares_fir`: a transition of ``tw`` Hz centred on each edge."""
    if kind == "bandpass":
        f2 = check_upper_edge(freq2_hz, fs)
        if not f2 > f1 + tw:
            raise DesignError(f"{f2:g} Hz must be above freq + transition_hz "
                              f"({f1 + tw:g} Hz)", field="freq2")
        return FirSpec("bandpass", (f1 + tw / 2, f2 - tw / 2), (f1 - tw / 2, f2 + tw / 2), 1, 1)
    if kind == "lowpass":
        return FirSpec(kind, f1 - tw / 2, f1 + tw / 2, 1, 1)
    return FirSpec(kind, f1 + tw / 2, f1 - tw / 2, 1, 1)


def _firls(n, bands, desired, weight, fs):
    edges = [f for b in bands for f in b]
    des = [d for d in desired for _ in range(2)]
    return scipy_module("signal").firls(n, edges, des, weight=weight, fs=fs)


def _least_squares_spec(spec: FirSpec, fs_hz: float, taps: int) -> np.ndarray:
    bands, desired, is_pass, _ = spec_bands(spec, fs_hz)
    return _firls(check_taps(taps, odd=True), bands, desired, weights(spec, is_pass),
                  float(fs_hz))


# --------------------------------------------------------------------------
# design cache (shared by the fixed-length designs and the searches)


class _Entry:
    """One cached design: its taps (read-only) or why it failed, and its measure per spec."""

    __slots__ = ("taps", "error", "measured")

    def __init__(self, taps: np.ndarray | None, error: str = ""):
        self.taps, self.error, self.measured = taps, error, None


class _DesignCache:
    """Designs by (method, spec, rate, taps, settings); the least recently used go first.

    Shared by the command line and the editor's worker threads (one lock
    around the table; two threads asking for the same new design may both
    make it, and the later one is kept).
    """

    def __init__(self, max_values: int):
        self.max_values = max_values
        self._table: OrderedDict[tuple, _Entry] = OrderedDict()
        self._values = 0
        self._lock = threading.Lock()

    def get(self, key: tuple) -> _Entry | None:
        with self._lock:
            e = self._table.get(key)
            if e is not None:
                self._table.move_to_end(key)
            return e

    def put(self, key: tuple, entry: _Entry) -> None:
        size = 0 if entry.taps is None else len(entry.taps)
        with self._lock:
            old = self._table.pop(key, None)
            if old is not None and old.taps is not None:
                self._values -= len(old.taps)
            self._table[key] = entry
            self._values += size
            while self._values > self.max_values and len(self._table) > 1:
                _, e = self._table.popitem(last=False)
                if e.taps is not None:
                    self._values -= len(e.taps)

    def clear(self) -> None:
        with self._lock:
            self._table.clear()
            self._values = 0

    def __len__(self) -> int:
        return len(self._table)


_CACHE = _DesignCache(_CACHE_VALUES)


def clear_design_cache() -> None:
    """Forget every cached equiripple and least-squares design (for timing, or to free memory).

    :func:`equiripple_fir`, :func:`min_taps_equiripple` and
    :func:`min_taps_least_squares` keep their designs, keyed by method,
    spec, sample rate, length and design settings, in one table of at most
    about two million taps (16 MB), the least recently used dropped first.
    """
    _CACHE.clear()


def _spec_key(spec: FirSpec) -> tuple:
    def edges(v):
        return tuple(float(x) for x in np.atleast_1d(np.asarray(v, dtype=float)))
    return (spec.kind, edges(spec.pass_hz), edges(spec.stop_hz), float(spec.ripple_db),
            float(spec.atten_db))


def cached_design(method: str, spec: FirSpec, fs: float, n: int,
                  grid_density: int = FULL_DENSITY, maxiter: int = MAXITER) -> _Entry:
    """The cached design of ``spec`` at ``n`` taps (``spec`` already checked).

    Parameters
    ----------
    method : {REMEZ, FIRLS}
    spec : FirSpec
    fs : float
        Sample rate in Hz.
    n : int
        Odd length.
    grid_density, maxiter : int
        Settings of a remez design (part of its key; firls has none).

    Returns
    -------
    entry
        With ``taps`` (read-only, or None when the design failed), ``error``
        (why it failed) and ``measured`` (``(ripple_db, atten_db)`` once a
        caller has measured it, else None).
    """
    key = (method, _spec_key(spec), fs, n) + ((grid_density, maxiter) if method == REMEZ else ())
    entry = _CACHE.get(key)
    if entry is None:
        entry = _make(method, spec, fs, n, grid_density, maxiter)
        _CACHE.put(key, entry)
    return entry


def _make(method: str, spec: FirSpec, fs: float, n: int, grid_density: int,
          maxiter: int) -> _Entry:
    """A new design, or why it failed (no convergence, a singular system, non-finite taps)."""
    try:
        h = (_remez(spec, fs, n, grid_density, maxiter) if method == REMEZ
             else _least_squares_spec(spec, fs, n))
    except (ValueError, np.linalg.LinAlgError) as exc:   # no convergence / singular
        return _Entry(None, str(exc) or type(exc).__name__)
    if not np.all(np.isfinite(h)):
        return _Entry(None, "non-finite taps")
    h = np.asarray(h, dtype=float)
    h.setflags(write=False)
    return _Entry(h)
