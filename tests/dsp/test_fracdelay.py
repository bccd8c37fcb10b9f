"""The fractional-delay FIR against the ideal delay e^{-jwD} and against scipy.

Sources: the ideal fractional delay H(w) = e^{-jwD} and its windowed-sinc
approximation (Laakso, Valimaki, Karjalainen and Laine, "Splitting the unit
delay", IEEE Signal Processing Magazine 13(1), 1996); the Kaiser window
(Kaiser 1974) as scipy.signal.windows.kaiser computes it; Kaiser's length
formula as scipy.signal.kaiserord computes it (Oppenheim and Schafer 3rd ed.
eq. 7.62-7.63); scipy.signal.freqz and scipy.signal.group_delay as reference
responses.
"""

import math

import numpy as np
import pytest
from hypothesis import given, settings, strategies as st
from scipy import signal

from planner.dsp import fracdelay as fd
from planner.errors import DesignError

# A dense grid from 0 to 0.45 fs (normalised: fs = 1).
W_EDGE = np.linspace(0.0, 0.45, 4001)


def _freqz(h, f=W_EDGE):
    return signal.freqz(h, worN=f, fs=1.0)[1]


@pytest.fixture(scope="module")
def design():
    return fd.kaiser_design()


@pytest.mark.parametrize("frac", [-0.5, -0.37, -0.25, -0.1, 0.0, 0.01, 0.2, 0.3, 0.48, 0.5])
def test_magnitude_within_001_db_up_to_045_fs(design, frac):
    # The spec of the filter: |H| within 0.01 dB of flat from 0 to 0.45 fs.
    mag_db = 20 * np.log10(np.abs(_freqz(design.fir(frac))))
    assert np.max(np.abs(mag_db)) < 0.01


@pytest.mark.parametrize("frac", [-0.5, -0.37, -0.25, -0.1, 0.0, 0.01, 0.2, 0.3, 0.48, 0.5])
def test_phase_is_the_exact_fractional_delay_up_to_045_fs(design, frac):
    # Against the ideal e^{-jw(M + f)} (Laakso et al. 1996, eq. 3): the phase error
    # stays below asin(1e-4) = 0.0057 deg (the design's complex error); 0.006 deg.
    d = design.latency_samples + frac
    err = np.angle(_freqz(design.fir(frac)) * np.exp(2j * np.pi * W_EDGE * d))
    assert np.max(np.abs(np.degrees(err))) < 0.006


@settings(max_examples=40, deadline=None)
@given(st.floats(-0.5, 0.5, allow_nan=False))
def test_complex_error_below_the_bound_for_any_fraction(frac):
    # |H(w) - e^{-jwD}| <= 1e-4 up to 0.45 fs for every fraction (not only the 21 the
    # design was measured at); scipy.signal.freqz as reference.
    design = fd.kaiser_design()
    d = design.latency_samples + frac
    err = np.abs(_freqz(design.fir(frac)) - np.exp(-2j * np.pi * W_EDGE * d))
    assert np.max(err) <= fd.MAX_ERROR


@pytest.mark.parametrize("frac", [-0.4, 0.25, 0.48])
def test_group_delay_is_m_plus_the_fraction(design, frac):
    # scipy.signal.group_delay up to 0.45 fs: M + f within 0.005 samples. The group delay
    # is the derivative of the phase; a phase error below 1e-4 rad that ripples about
    # N/2 = 28 times faster than w moves it by up to about 1e-4 * 28 = 0.003 samples.
    w, gd = signal.group_delay((design.fir(frac), [1.0]), w=np.linspace(0.001, 0.45, 200),
                               fs=1.0)
    assert np.max(np.abs(gd - (design.latency_samples + frac))) < 0.005


def test_half_sample_shifts_are_a_sinc_times_scipys_kaiser_window(design):
    # For f = +0.5 the taps sit at t = n - N/2, for f = -0.5 at t = n + 1 - N/2: the
    # samples of scipy's symmetric Kaiser window of N + 1 points (T = N/2), without its
    # last or first point, times sinc(t) (Laakso et al. 1996, windowed sinc).
    n, beta = design.taps, design.beta
    win = signal.windows.kaiser(n + 1, beta, sym=True)
    t_plus = np.arange(n) - n / 2
    np.testing.assert_allclose(design.fir(0.5), np.sinc(t_plus) * win[:-1], rtol=0, atol=1e-14)
    np.testing.assert_allclose(design.fir(-0.5), np.sinc(t_plus + 1) * win[1:], rtol=0,
                               atol=1e-14)


def test_no_fraction_is_a_plain_delay_of_m(design):
    # sinc(n - M) is the unit impulse at M whatever the window.
    h = design.fir(0.0)
    ref = np.zeros(design.taps)
    ref[design.latency_samples] = 1.0
    np.testing.assert_allclose(h, ref, rtol=0, atol=1e-15)


def test_length_is_odd_and_near_kaisers_estimate(design):
    # scipy.signal.kaiserord for -20 log10(1e-4 / 2) = 86 dB over a transition of
    # 0.45 .. 0.55 fs (0.2 of Nyquist); the measured spec may ask a few more taps.
    numtaps, _ = signal.kaiserord(-20 * math.log10(fd.MAX_ERROR / 2), 0.2)
    assert design.taps % 2 == 1
    assert numtaps <= design.taps <= numtaps + 8
    assert design.latency_samples == (design.taps - 1) // 2


def test_bounds_follow_from_the_measured_error(design):
    # |1 + e| in dB and asin(e): the complex error bounds magnitude and phase.
    assert design.measured_error <= fd.MAX_ERROR
    assert design.magnitude_bound_db == pytest.approx(20 * math.log10(1 + design.measured_error))
    assert design.magnitude_bound_db < 0.01
    assert design.phase_bound_deg == pytest.approx(math.degrees(math.asin(design.measured_error)))


def test_a_looser_spec_is_shorter():
    # Kaiser 1974: fewer taps for less attenuation.
    assert fd.kaiser_design(0.45, 1e-3).taps < fd.kaiser_design(0.45, 1e-4).taps


def test_delay_error_measures_a_known_error():
    # A plain delay of 3 samples measured against a delay of 3.5: |1 - e^{-jw/2}| at
    # w = 2 pi 0.45 (= 2 sin(w/4), the largest over the band).
    h = np.zeros(7)
    h[3] = 1.0
    assert fd.delay_error(h, 3.5) == pytest.approx(2 * math.sin(2 * math.pi * 0.45 / 4),
                                                   rel=1e-9)


@pytest.mark.parametrize("d,ref", [(0.48, 0), (0.5, 1), (0.52, 1), (10.3, 10), (10.5, 11),
                                   (10.7, 11), (12.0, 12), (0.0, 0)])
def test_nearest_whole_rounds_halves_up(d, ref):
    # Round half up, floor(d + 0.5) (not Python's half-to-even round()).
    assert fd.nearest_whole(d) == ref


def test_fraction_out_of_range_refused():
    with pytest.raises(DesignError, match=r"fraction: must lie in \[-0.5, 0.5\] samples .* "
                                          r"not 0.7"):
        fd.fractional_delay_fir(0.7, 57, 8.0)


def test_fraction_not_a_number_refused():
    with pytest.raises(DesignError, match=r"fraction: must be a number of samples, not 'x'"):
        fd.fractional_delay_fir("x", 57, 8.0)


@pytest.mark.parametrize("taps", [56, 1, 2.5, True])
def test_even_or_short_taps_refused(taps):
    with pytest.raises(DesignError, match=r"taps: must be an odd whole number of taps >= 3"):
        fd.fractional_delay_fir(0.2, taps, 8.0)


def test_negative_beta_refused():
    with pytest.raises(DesignError, match=r"beta: must be a number >= 0, not -1"):
        fd.fractional_delay_fir(0.2, 57, -1.0)


@pytest.mark.parametrize("edge", [0.0, 0.5, 0.7])
def test_edge_out_of_range_refused(edge):
    with pytest.raises(DesignError, match=r"edge: must lie in \(0, 0.5\) of the sample rate"):
        fd.kaiser_design(edge, 1e-4)


def test_error_bound_out_of_range_refused():
    with pytest.raises(DesignError, match=r"max_error: must lie in \(0, 0.5\), not 0"):
        fd.kaiser_design(0.45, 0.0)
