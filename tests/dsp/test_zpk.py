"""planner.dsp.zpk: the IIR design steps in numpy, against scipy.signal (reference library).

The module follows scipy.signal's buttap, lp2lp_zpk, lp2hp_zpk, bilinear_zpk and zpk2sos
(pairing "nearest") operation for operation, so its sections must equal scipy's to the
last bit: compared over every Butterworth order, both kinds, cut-offs from 5 Hz to 0.49 of
the rate and rates from 8 to 192 kHz, and over scipy's Bessel prototypes (the one step
crossplan leaves to scipy).
"""

import numpy as np
import pytest
from scipy import signal

from planner.dsp import iir, zpk

RATES = (8000.0, 44100.0, 48000.0, 96000.0, 192000.0)


def _ours(z, p, k, kind, wo, fs):
    z, p, k = (zpk.lp2lp_zpk if kind == "lowpass" else zpk.lp2hp_zpk)(z, p, k, wo=wo)
    return zpk.zpk2sos(*zpk.bilinear_zpk(z, p, k, fs=fs))


def _scipys(z, p, k, kind, wo, fs):
    z, p, k = (signal.lp2lp_zpk if kind == "lowpass" else signal.lp2hp_zpk)(z, p, k, wo=wo)
    return signal.zpk2sos(*signal.bilinear_zpk(z, p, k, fs=fs))


@pytest.mark.parametrize("order", range(1, 9))
def test_the_butterworth_prototype_is_scipys(order):
    z, p, k = zpk.buttap(order)
    zs, ps, ks = signal.buttap(order)
    assert np.array_equal(p, ps) and len(z) == len(zs) == 0 and k == ks


@pytest.mark.parametrize("kind", ["lowpass", "highpass"])
@pytest.mark.parametrize("order", range(1, 9))
def test_butterworth_sections_equal_scipys_bit_for_bit(order, kind):
    for fs in RATES:
        for f in np.geomspace(5.0, 0.49 * fs, 23):
            wa = iir.prewarp(f, fs)
            ours = _ours(*zpk.buttap(order), kind, wa, fs)
            theirs = _scipys(*signal.buttap(order), kind, wa, fs)
            assert np.array_equal(ours, theirs), (order, kind, fs, f)


@pytest.mark.parametrize("norm", ["phase", "delay", "mag"])
@pytest.mark.parametrize("order", range(1, 9))
def test_bessel_prototypes_through_our_steps_equal_scipys(order, norm):
    # The prototype is scipy's own (besselap); the transforms and the pairing are ours.
    for kind in ("lowpass", "highpass"):
        for fs in (48000.0, 192000.0):
            for f in np.geomspace(10.0, 0.45 * fs, 9):
                z, p, k = signal.besselap(order, norm=norm)
                assert np.array_equal(_ours(z, p, k, kind, 2 * np.pi * f, fs),
                                      _scipys(z, p, k, kind, 2 * np.pi * f, fs))


def test_the_designs_are_scipys_own():
    # The public designs against scipy.signal.butter (its own chain of the same steps).
    for order in range(1, 9):
        for kind in ("lowpass", "highpass"):
            ours = iir.butterworth_sos(kind, order, 2200.0, 48000.0)
            theirs = signal.butter(order, 2200.0, btype=kind, fs=48000.0, output="sos")
            np.testing.assert_allclose(ours, theirs, rtol=1e-13, atol=1e-16)
            # 1e-13: butter prewarps with its own expression of the same tangent


def test_an_empty_system_is_one_gain_section():
    assert np.array_equal(zpk.zpk2sos([], [], 0.5), signal.zpk2sos([], [], 0.5))


def test_an_improper_system_is_refused():
    with pytest.raises(ValueError, match="fewer poles than zeros"):
        zpk.bilinear_zpk([1.0, 2.0], [3.0], 1.0, fs=48000.0)
