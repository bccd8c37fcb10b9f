"""The vectorised band response against scipy.signal.sosfreqz and group_delay."""

import numpy as np
import pytest
from scipy import signal

from planner.dsp.response import band_responses, poly_response, stack_sos

FS = 48000.0
F = np.geomspace(20, 20000, 512)


def _bands():
    return [
        np.vstack([signal.butter(2, 35, "highpass", fs=FS, output="sos"),
                   signal.butter(4, 2200, fs=FS, output="sos")]),
        signal.butter(6, 2200, "highpass", fs=FS, output="sos"),
        np.zeros((0, 6)),
    ]


def test_matches_sosfreqz_with_gain_polarity_delay():
    # Reference: scipy.signal.sosfreqz per band, times gain, polarity and
    # exp(-j w d) for a (fractional) delay of d samples.
    sos = _bands()
    gains, inv, delays = [0.0, -2.5, 3.0], [False, True, False], [0.0, 12.25, 3.5]
    r = band_responses(sos, F, FS, gains_db=gains, delays_samples=delays, invert=inv)
    w = 2 * np.pi * F / FS
    for i, s in enumerate(sos):
        ref = signal.sosfreqz(s, worN=F, fs=FS)[1] if len(s) else np.ones_like(F, complex)
        ref = ref * 10 ** (gains[i] / 20) * (-1 if inv[i] else 1) * np.exp(-1j * w * delays[i])
        np.testing.assert_allclose(r.h[i], ref, rtol=1e-10, atol=1e-14)


def test_group_delay_matches_scipy_group_delay():
    # Reference: scipy.signal.group_delay on the (low-order, well-conditioned) b, a form.
    sos = signal.butter(4, 1000, fs=FS, output="sos")
    b, a = signal.sos2tf(sos)
    _, gd_ref = signal.group_delay((b, a), w=F, fs=FS)
    r = band_responses([sos], F, FS)
    np.testing.assert_allclose(r.group_delay_samples()[0], gd_ref, rtol=1e-6, atol=1e-9)


def test_fractional_delay_group_delay_is_exact():
    # A pure delay of d samples has group delay d at every frequency.
    r = band_responses([np.zeros((0, 6))], F, FS, delays_samples=[7.3])
    np.testing.assert_allclose(r.group_delay_samples()[0], 7.3, rtol=1e-12)


def test_sum_group_delay_matches_numerical_phase_derivative():
    # numpy reference: -d(unwrapped phase)/dw by finite differences on a fine grid.
    lp = signal.butter(2, 2000, fs=FS, output="sos")
    hp = signal.butter(2, 2000, "highpass", fs=FS, output="sos")
    f = np.linspace(100, 10000, 20001)
    r = band_responses([np.vstack([lp, lp]), np.vstack([hp, hp])], f, FS)
    w = 2 * np.pi * f / FS
    num = -np.gradient(np.unwrap(np.angle(r.sum())), w)
    # 1e-4 samples: second-order finite-difference error on this grid.
    np.testing.assert_allclose(r.sum_group_delay_samples()[1:-1], num[1:-1], atol=1e-4)


def test_fir_poly_response_matches_freqz():
    # Reference: scipy.signal.freqz for an FIR.
    taps = signal.firwin(101, 3000, fs=FS)
    np.testing.assert_allclose(poly_response(taps, 2 * np.pi * F / FS),
                               signal.freqz(taps, worN=F, fs=FS)[1], rtol=1e-9, atol=1e-12)


def test_stack_pads_with_identity():
    st = stack_sos([np.ones((2, 6)), np.zeros((0, 6))])
    assert st.shape == (2, 2, 6)
    np.testing.assert_array_equal(st[1], [[1, 0, 0, 1, 0, 0]] * 2)


def test_point_evaluator_matches_sosfreqz_and_freqz_query_by_query():
    # Reference: scipy.signal.sosfreqz of each band's sections and freqz of its FIR taps at
    # each query's own frequency, times gain, polarity and exp(-j w d).
    from planner.dsp.response import PointEvaluator

    sos = _bands()
    firs = [None, signal.firwin(31, 3000, fs=FS), None]
    gains, inv, delays = [0.0, -2.5, 3.0], [False, True, False], [0.0, 12.25, 3.5]
    ev = PointEvaluator(sos, FS, gains_db=gains, delays_samples=delays, invert=inv, firs=firs)
    rng = np.random.default_rng(7)
    bands = rng.integers(0, 3, 200)
    freqs = np.exp(rng.uniform(np.log(20), np.log(23000), 200))
    got = ev(bands, freqs)
    for k in range(len(bands)):
        i, f = bands[k], freqs[k]
        ref = signal.sosfreqz(sos[i], worN=[f], fs=FS)[1][0] if len(sos[i]) else 1.0
        if firs[i] is not None:
            ref = ref * signal.freqz(firs[i], worN=[f], fs=FS)[1][0]
        ref = ref * 10 ** (gains[i] / 20) * (-1 if inv[i] else 1) * np.exp(
            -2j * np.pi * f / FS * delays[i])
        assert got[k] == pytest.approx(ref, rel=1e-9, abs=1e-15)   # float64 rounding


def test_point_evaluator_all_bands_matches_sosfreqz():
    # Reference: scipy.signal.sosfreqz per band, times gain, polarity and exp(-j w d).
    from planner.dsp.response import PointEvaluator

    sos = _bands()
    gains, inv, delays = [0.0, -2.5, 3.0], [False, True, False], [0.0, 12.25, 3.5]
    got = PointEvaluator(sos, FS, gains_db=gains, delays_samples=delays,
                         invert=inv).all_bands(F)
    w = 2 * np.pi * F / FS
    for i, s in enumerate(sos):
        ref = signal.sosfreqz(s, worN=F, fs=FS)[1] if len(s) else np.ones_like(F, complex)
        ref = ref * 10 ** (gains[i] / 20) * (-1 if inv[i] else 1) * np.exp(-1j * w * delays[i])
        np.testing.assert_allclose(got[i], ref, rtol=1e-9, atol=1e-15)


def test_log_derivative_gives_scipy_group_delay():
    # Reference: scipy.signal.group_delay of each band's sections multiplied out (orders
    # small enough for b, a to be exact), plus the band delay in samples.
    from planner.dsp.response import log_derivative

    sos = [signal.butter(4, 2200, fs=FS, output="sos"),
           signal.butter(3, 1000, "highpass", fs=FS, output="sos")]
    delays = [0.0, 12.25]
    f = np.geomspace(200, 20000, 64)
    gd = -np.imag(log_derivative(sos, f, FS, delays_samples=delays))
    for i, s in enumerate(sos):
        b, a = signal.sos2tf(s)
        ref = signal.group_delay((b, a), w=f, fs=FS)[1] + delays[i]
        np.testing.assert_allclose(gd[i], ref, rtol=1e-6, atol=1e-6)   # samples
