"""Magnitude specifications of linear-phase FIRs: the spec, its bands and weights, measuring.

Conventions (those of the equiripple and least-squares searches):

* ``ripple_db`` is the peak-to-peak pass-band ripple,
  ``20 log10(max|H| / min|H|)`` over the pass band(s); the matching
  deviation is ``delta_p = (10^(R/20) - 1) / (10^(R/20) + 1)``, so that
  ``(1 + delta_p) / (1 - delta_p) = 10^(R/20)``.
* ``atten_db`` is the stop-band attenuation relative to the nominal pass-band
  gain of 1 (0 dB): ``-20 log10(max|H|)`` over the stop band(s); the matching
  deviation is ``delta_s = 10^(-A/20)``.

These are the deviations of Kaiser's length formula (Kaiser 1974 [2]_,
Oppenheim and Schafer [1]_ sec. 7.7) with the pass band between ``1 - delta_p``
and ``1 + delta_p``.

References
----------
.. [1] A. V. Oppenheim and R. W. Schafer, "Discrete-Time Signal Processing",
   3rd ed., Pearson, 2010, sec. 7.7.
.. [2] J. F. Kaiser, "Nonrecursive digital filter design using the I0-sinh
   window function", Proc. IEEE Int. Symp. Circuits and Systems, 1974,
   pp. 20-23.
.. [3] T. W. Parks and J. H. McClellan, "Chebyshev approximation for
   nonrecursive digital filters with linear phase", IEEE Trans. Circuit
   Theory, vol. CT-19, no. 2, pp. 189-194, 1972.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from planner.dsp.fir.checks import check_atten, check_freq, check_fs, check_kind, check_positive
from planner.dsp.fir.response import fir_response
from planner.errors import DesignError

__all__ = ["FirSpec", "deviations", "spec_bands", "weights", "measure_spec"]

#: Dense measuring grid: FFT points per tap (remez's own grid has about 8
#: points per tap over [0, fs/2] at grid_density 16; this is 4 times denser).
_DENSE_PER_TAP = 64


@dataclass(frozen=True)
class FirSpec:
    """A magnitude specification for a linear-phase FIR.

    Parameters
    ----------
    kind : {"lowpass", "highpass", "bandpass"}
    pass_hz : float or (float, float)
        Pass-band edge in Hz; for a bandpass the (lower, upper) pass edges.
    stop_hz : float or (float, float)
        Stop-band edge in Hz; for a bandpass the (lower, upper) stop edges,
        outside the pass edges.
    ripple_db : float
        Largest peak-to-peak pass-band ripple in dB.
    atten_db : float
        Smallest stop-band attenuation in dB below the nominal 0 dB gain.
    """

    kind: str
    pass_hz: float | tuple[float, float]
    stop_hz: float | tuple[float, float]
    ripple_db: float
    atten_db: float

    def describe(self) -> str:
        """Plain one-line statement of the spec, e.g. for error messages."""
        def edges(v):
            return "-".join(f"{x:g}" for x in np.atleast_1d(v))
        return (f"{self.kind} spec (pass edge {edges(self.pass_hz)} Hz, stop edge "
                f"{edges(self.stop_hz)} Hz, ripple {self.ripple_db:g} dB, "
                f"attenuation {self.atten_db:g} dB)")


def deviations(ripple_db: float, atten_db: float) -> tuple[float, float]:
    """``(delta_p, delta_s)`` of a peak-to-peak ripple and an attenuation (module notes).

    ``delta_p = (r - 1) / (r + 1)`` with ``r = 10^(R/20)``, ``delta_s = 10^(-A/20)``.
    """
    r = 10.0 ** (ripple_db / 20.0)
    return (r - 1.0) / (r + 1.0), 10.0 ** (-atten_db / 20.0)


def spec_bands(spec: FirSpec, fs_hz: float):
    """Check ``spec`` and give its bands.

    Returns
    -------
    bands : list of (float, float)
        Band edges in Hz, from 0 Hz to fs/2, transitions left out.
    desired : list of float
        Gain wanted in each band (1 or 0).
    is_pass : list of bool
        Whether each band is a pass band.
    transition_hz : float
        Width of the transition (the narrower one of a bandpass).
    """
    fs = check_fs(fs_hz)
    check_kind(spec.kind)
    check_positive(spec.ripple_db, "ripple_db", "dB")
    check_atten(spec.atten_db)
    if spec.kind == "bandpass":
        return _bandpass_bands(spec, fs)
    nyq = fs / 2
    fp = check_freq(spec.pass_hz, fs, "pass_hz")
    fst = check_freq(spec.stop_hz, fs, "stop_hz")
    if spec.kind == "lowpass":
        if not fp < fst:
            raise DesignError(f"{fst:g} Hz must be above the pass edge ({fp:g} Hz) "
                              "for a lowpass", field="stop_hz")
        return [(0.0, fp), (fst, nyq)], [1.0, 0.0], [True, False], fst - fp
    if not fst < fp:
        raise DesignError(f"{fst:g} Hz must be below the pass edge ({fp:g} Hz) "
                          "for a highpass", field="stop_hz")
    return [(0.0, fst), (fp, nyq)], [0.0, 1.0], [False, True], fp - fst


def _bandpass_bands(spec: FirSpec, fs: float):
    """:func:`spec_bands` of a bandpass: two edges each, the stop edges outside the pass edges."""
    p = np.atleast_1d(np.asarray(spec.pass_hz, dtype=float))
    s = np.atleast_1d(np.asarray(spec.stop_hz, dtype=float))
    if p.shape != (2,):
        raise DesignError(f"a bandpass needs (lower, upper) pass edges, not {spec.pass_hz!r}",
                          field="pass_hz")
    if s.shape != (2,):
        raise DesignError(f"a bandpass needs (lower, upper) stop edges, not {spec.stop_hz!r}",
                          field="stop_hz")
    for v, fld in ((p[0], "pass_hz"), (p[1], "pass_hz"), (s[0], "stop_hz"), (s[1], "stop_hz")):
        check_freq(v, fs, fld)
    if not p[0] < p[1]:
        raise DesignError(f"lower edge must be below upper edge, not {spec.pass_hz!r}",
                          field="pass_hz")
    if not (s[0] < p[0] and p[1] < s[1]):
        raise DesignError(f"stop edges {spec.stop_hz!r} Hz must lie outside the pass edges "
                          f"{spec.pass_hz!r} Hz", field="stop_hz")
    bands = [(0.0, s[0]), (p[0], p[1]), (s[1], fs / 2)]
    return bands, [0.0, 1.0, 0.0], [False, True, False], min(p[0] - s[0], s[1] - p[1])


def weights(spec: FirSpec, is_pass) -> list[float]:
    """Minimax weight of each band: 1 in a pass band, ``delta_p / delta_s`` in a stop band.

    Weights inversely proportional to the allowed deviations make the equal
    weighted ripple of the optimum split as the spec asks (Parks and
    McClellan 1972 [3]_).

    References
    ----------
    .. [3] Parks and McClellan, IEEE Trans. Circuit Theory CT-19(2), 1972.
    """
    dp, ds = deviations(spec.ripple_db, spec.atten_db)
    return [1.0 if p else dp / ds for p in is_pass]


def measure_spec(taps: np.ndarray, spec: FirSpec, fs_hz: float) -> tuple[float, float]:
    """Measured pass-band ripple and stop-band attenuation of ``taps``.

    The magnitude is taken on a dense grid (a zero-padded FFT of at least
    64 points per tap) plus every band edge exactly.

    Parameters
    ----------
    taps : ndarray, shape (N,)
    spec : FirSpec
        Gives the bands (and is checked).
    fs_hz : float
        Sample rate in Hz.

    Returns
    -------
    ripple_db : float
        ``20 log10(max|H| / min|H|)`` over the pass band(s) (inf if a zero).
    atten_db : float
        ``-20 log10(max|H|)`` over the stop band(s).
    """
    bands, _, is_pass, _ = spec_bands(spec, fs_hz)
    fs = float(fs_hz)
    h = np.asarray(taps, dtype=float)
    nfft = 1 << max(13, int(math.ceil(math.log2(_DENSE_PER_TAP * len(h)))))
    mag = np.abs(np.fft.rfft(h, nfft))
    grid = np.arange(len(mag)) * (fs / nfft)
    edges = np.array([f for b in bands for f in b])
    mag_edges = np.abs(fir_response(h, edges, fs)).reshape(-1, 2)
    pmax, pmin, smax = 0.0, np.inf, 0.0
    for (lo, hi), p, me in zip(bands, is_pass, mag_edges):    # a loop over bands
        sel = mag[(grid >= lo) & (grid <= hi)]
        sel = np.concatenate([sel, me])
        if p:
            pmax, pmin = max(pmax, sel.max()), min(pmin, sel.min())
        else:
            smax = max(smax, sel.max())
    with np.errstate(divide="ignore"):
        ripple = float(20.0 * np.log10(pmax / pmin)) if pmin > 0 else math.inf
        atten = float(-20.0 * np.log10(smax)) if smax > 0 else math.inf
    return ripple, atten
