"""Audio EQ Cookbook biquads (W3C Working Group Note, 2021) against their definition."""

import numpy as np
import pytest
from scipy import signal

from planner.dsp import biquad
from planner.errors import DesignError

FS = 48000.0


def h_at(sos, f, fs=FS):
    return signal.sosfreqz(sos, worN=np.atleast_1d(np.asarray(f, float)), fs=fs)[1]


def db(h):
    return 20 * np.log10(np.abs(h))


def bilinear_of_analog(b_s, a_s, f0, fs=FS):
    """Reference: the cookbook filters are the bilinear transform of their analog
    prototypes with the centre frequency prewarped (Cookbook, "begin with these
    analog prototypes"); computed here with scipy.signal.bilinear."""
    wa = 2 * fs * np.tan(np.pi * f0 / fs)
    # H(s/wa): scale each power of s.
    nb, na = len(b_s) - 1, len(a_s) - 1
    b = [c / wa ** (nb - i) for i, c in enumerate(b_s)]
    a = [c / wa ** (na - i) for i, c in enumerate(a_s)]
    bz, az = signal.bilinear(b, a, fs=fs)
    return signal.tf2sos(bz, az)


F = np.geomspace(20, 23000, 300)


def test_peaking_gain_at_centre():
    # Cookbook: the peaking EQ has gain dBgain at f0.
    for g in (-12.0, -3.0, 4.5, 9.0):
        assert db(h_at(biquad.peaking(1000, g, 1.4, FS), 1000))[0] == pytest.approx(g, abs=1e-9)


def test_peaking_matches_analog_prototype():
    # Cookbook: H(s) = (s^2 + s (A/Q) + 1) / (s^2 + s / (A Q) + 1).
    g, q = 6.0, 2.0
    a = 10 ** (g / 40)
    ref = bilinear_of_analog([1, a / q, 1], [1, 1 / (a * q), 1], 3000)
    np.testing.assert_allclose(h_at(biquad.peaking(3000, g, q, FS), F), h_at(ref, F), rtol=1e-9)


def test_low_shelf_half_gain_at_freq_and_full_gain_at_dc():
    # Cookbook: the shelf midpoint (f0) is at dBgain/2; DC gain is dBgain.
    s = biquad.low_shelf(200, 8.0, FS, q=0.707)
    assert db(h_at(s, 200))[0] == pytest.approx(4.0, abs=1e-9)
    assert db(h_at(s, 1e-3))[0] == pytest.approx(8.0, abs=1e-6)


def test_high_shelf_half_gain_at_freq_and_full_gain_at_nyquist():
    # Cookbook: high shelf is dBgain/2 at f0 and dBgain at Nyquist.
    s = biquad.high_shelf(5000, -6.0, FS, slope=1.0)
    assert db(h_at(s, 5000))[0] == pytest.approx(-3.0, abs=1e-9)
    assert db(h_at(s, FS / 2 - 1e-6))[0] == pytest.approx(-6.0, abs=1e-6)


def test_low_shelf_matches_analog_prototype():
    # Cookbook: H(s) = A (s^2 + (sqrt(A)/Q) s + A) / (A s^2 + (sqrt(A)/Q) s + 1).
    g, q = -5.0, 0.9
    a = 10 ** (g / 40)
    ref = bilinear_of_analog([a, a * np.sqrt(a) / q, a * a], [a, np.sqrt(a) / q, 1], 300)
    np.testing.assert_allclose(h_at(biquad.low_shelf(300, g, FS, q=q), F), h_at(ref, F),
                               rtol=1e-8)


def test_shelf_slope_one_equals_q_of_one_over_sqrt2():
    # Cookbook: with S = 1, 1/Q = sqrt((A + 1/A)(1/S - 1) + 2) = sqrt(2).
    a = biquad.high_shelf(2000, 5.0, FS, slope=1.0)
    b = biquad.high_shelf(2000, 5.0, FS, q=1 / np.sqrt(2))
    np.testing.assert_allclose(a, b, rtol=1e-12)


def test_notch_depth_and_unity_far_away():
    # Cookbook notch: zeros on the unit circle at f0 (infinite depth), 0 dB at DC and Nyquist.
    s = biquad.notch(1000, 5.0, FS)
    assert db(h_at(s, 1000))[0] < -200
    assert db(h_at(s, [1e-3, FS / 2 - 1e-3])) == pytest.approx([0, 0], abs=1e-6)


def test_bandpass_peak_is_zero_db():
    # Cookbook: "BPF, constant 0 dB peak gain".
    s = biquad.bandpass(800, 3.0, FS)
    assert db(h_at(s, 800))[0] == pytest.approx(0.0, abs=1e-9)
    assert np.max(db(h_at(s, F))) <= 1e-9


def test_allpass_second_order():
    # Cookbook APF: unity magnitude, -180 deg at f0.
    s = biquad.allpass(2000, 0.7, FS)
    np.testing.assert_allclose(np.abs(h_at(s, F)), 1.0, atol=1e-12)
    assert abs(np.degrees(np.angle(h_at(s, 2000)))[0]) == pytest.approx(180.0, abs=1e-6)


def test_allpass_first_order():
    # Zoelzer, DAFX 2nd ed. sec. 2.2: first-order all-pass, -90 deg at the break frequency.
    s = biquad.allpass1(2000, FS)
    np.testing.assert_allclose(np.abs(h_at(s, F)), 1.0, atol=1e-12)
    assert np.degrees(np.angle(h_at(s, 2000)))[0] == pytest.approx(-90.0, abs=1e-6)


def test_cookbook_lowpass_with_butterworth_q_equals_scipy_butter():
    # Cookbook LPF with Q = 1/sqrt(2) is the 2nd-order Butterworth (scipy.signal.butter).
    ref = signal.butter(2, 1200, fs=FS, output="sos")
    np.testing.assert_allclose(h_at(biquad.lowpass2(1200, 1 / np.sqrt(2), FS), F), h_at(ref, F),
                               rtol=1e-9)
    ref = signal.butter(2, 1200, btype="highpass", fs=FS, output="sos")
    np.testing.assert_allclose(h_at(biquad.highpass2(1200, 1 / np.sqrt(2), FS), F), h_at(ref, F),
                               rtol=1e-9)


def test_q_must_be_positive():
    with pytest.raises(DesignError, match=r"q: Q must be above 0, not 0"):
        biquad.peaking(1000, 3, 0, FS)


def test_freq_above_nyquist():
    with pytest.raises(DesignError, match=r"freq: 30000 Hz is at or above Nyquist \(24000 Hz\)"):
        biquad.notch(30000, 2, FS)


def test_shelf_slope_too_steep():
    with pytest.raises(DesignError, match=r"slope: slope 8 is too steep"):
        biquad.low_shelf(100, 12, FS, slope=8.0)


def test_shelf_needs_q_or_slope():
    with pytest.raises(DesignError, match=r"q: give exactly one of q or slope"):
        biquad.low_shelf(100, 3, FS)


def test_gain_must_be_finite():
    with pytest.raises(DesignError, match=r"gain_db: must be a finite number of dB, not nan"):
        biquad.peaking(100, float("nan"), 1, FS)
