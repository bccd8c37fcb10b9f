"""Shared references of the FIR tests: scipy.signal responses, measures and spec sweeps."""

import numpy as np
from scipy import signal

from planner.dsp import fir

FS = 48000.0


def freqz(h, f, fs=FS):
    """Reference response: scipy.signal.freqz on an explicit grid."""
    return signal.freqz(h, worN=np.atleast_1d(np.asarray(f, dtype=float)), fs=fs)[1]


def ref_measure(h, spec, fs=FS, points=20001):
    """Ripple and attenuation (dB) measured with scipy.signal.freqz, edges included.

    Independent of fir.measure_spec: a linspace grid per band instead of an FFT.
    """
    if spec.kind == "lowpass":
        passes, stops = [(0, spec.pass_hz)], [(spec.stop_hz, fs / 2)]
    elif spec.kind == "highpass":
        passes, stops = [(spec.pass_hz, fs / 2)], [(0, spec.stop_hz)]
    else:
        passes = [tuple(spec.pass_hz)]
        stops = [(0, spec.stop_hz[0]), (spec.stop_hz[1], fs / 2)]
    pm = np.concatenate([np.abs(freqz(h, np.linspace(a, b, points), fs)) for a, b in passes])
    sm = np.concatenate([np.abs(freqz(h, np.linspace(a, b, points), fs)) for a, b in stops])
    return 20 * np.log10(pm.max() / pm.min()), -20 * np.log10(sm.max())


def deviations(ripple_db, atten_db):
    # Common definition of peak-to-peak ripple, (1 + dp) / (1 - dp) = 10^(R/20),
    # and stop-band deviation ds = 10^(-A/20) (common practice, no single source).
    r = 10 ** (ripple_db / 20)
    return (r - 1) / (r + 1), 10 ** (-atten_db / 20)


# A sampled peak between grid points reads low by a relative amount of the
# order of (grid step * taps)^2 of the ripple: below 1e-4 dB on these grids.
GRID_DB = 1e-4


def sweep_spec(kind, ripple_db, atten_db, tw_fs, fs=FS):
    """A spec with its (lower) pass edge at 0.15 fs and a transition of ``tw_fs * fs``.

    Lowpass: pass to 0.15 fs; highpass: pass from 0.15 fs + tw; bandpass:
    pass 0.15-0.30 fs with the stop edges one transition outside.
    """
    t = tw_fs * fs
    if kind == "lowpass":
        return fir.FirSpec(kind, 0.15 * fs, 0.15 * fs + t, ripple_db, atten_db)
    if kind == "highpass":
        return fir.FirSpec(kind, 0.15 * fs + t, 0.15 * fs, ripple_db, atten_db)
    return fir.FirSpec(kind, (0.15 * fs, 0.30 * fs), (0.15 * fs - t, 0.30 * fs + t),
                       ripple_db, atten_db)


SWEEP = [(k, r, a, t) for k in fir.KINDS for r in (0.01, 0.1, 1.0) for a in (40.0, 70.0, 100.0)
         for t in (0.005, 0.02, 0.1)]
SWEEP_IDS = [f"{k}-{r:g}dB-{a:g}dB-{t:g}fs" for k, r, a, t in SWEEP]


def delayed_impulse(n):
    d = np.zeros(n)
    d[(n - 1) // 2] = 1.0
    return d
