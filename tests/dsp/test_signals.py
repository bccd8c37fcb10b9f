"""Test signals against scipy/numpy references and Farina's sweep relations.

Sources: Farina, AES 108th Convention 2000 (exponential sweep, inverse filter,
pink sweep spectrum); scipy.signal.chirp (logarithmic), scipy.signal.windows.hann,
scipy.signal.welch; Kasdin 1995 (1/f noise).
"""

import numpy as np
import pytest
from scipy import signal

from planner.dsp.impulse import fft_convolve
from planner.dsp.signals import (
    exp_sweep, impulse, inverse_of_sweep, inverse_sweep, pink_noise, sweep_rate, white_noise,
)
from planner.errors import CrossplanError

FS = 48000.0


def _slope_db_per_octave(f, power, lo, hi):
    """Least-squares slope of 10 log10(power) against log2(f) on [lo, hi]."""
    m = (f >= lo) & (f <= hi)
    return np.polyfit(np.log2(f[m]), 10 * np.log10(power[m]), 1)[0]


# ---------------------------------------------------------------- sweep

def test_sweep_equals_scipy_logarithmic_chirp():
    # Farina 2000 eq. 3 is scipy.signal.chirp(method='logarithmic') with a
    # sine (phi = -90 deg) start.
    x = exp_sweep(20, 20000, 1.5, FS)
    t = np.arange(len(x)) / FS
    ref = signal.chirp(t, 20, 1.5, 20000, method="logarithmic", phi=-90)
    assert len(x) == 72000
    np.testing.assert_allclose(x, ref, atol=1e-9)  # different but equivalent phase formulas


def test_sweep_spectrum_is_pink():
    # Farina 2000 sec. 3: constant energy per octave, i.e. -3.01 dB/octave
    # power spectrum. Tolerance 0.1 dB/oct: Fresnel ripple of the finite sweep.
    x = exp_sweep(20, 20000, 4.0, FS)
    p = np.abs(np.fft.rfft(x)) ** 2
    f = np.fft.rfftfreq(len(x), 1 / FS)
    assert _slope_db_per_octave(f, p, 100, 10000) == pytest.approx(-10 * np.log10(2), abs=0.1)


def test_sweep_rate_is_farina_l():
    # L = T / ln(w2/w1) (Farina 2000 eq. 3): one octave takes L ln 2 seconds.
    assert sweep_rate(20, 20000, 10.0) == pytest.approx(10.0 / np.log(1000.0), rel=1e-15)


def test_sweep_fades_are_half_hann():
    # Fade-in = rising half of a periodic Hann of twice the length (scipy.signal.windows.hann).
    plain = exp_sweep(50, 10000, 1.0, FS)
    faded = exp_sweep(50, 10000, 1.0, FS, fade_in_s=0.01, fade_out_s=0.02)
    n_in, n_out = 480, 960
    w_in = signal.windows.hann(2 * n_in, sym=False)[:n_in]
    w_out = signal.windows.hann(2 * n_out, sym=False)[:n_out][::-1]
    np.testing.assert_allclose(faded[:n_in], plain[:n_in] * w_in, atol=1e-15)
    np.testing.assert_allclose(faded[-n_out:], plain[-n_out:] * w_out, atol=1e-15)
    np.testing.assert_array_equal(faded[n_in:-n_out], plain[n_in:-n_out])


def test_inverse_spectrum_rises_3db_per_octave():
    # Farina 2000 sec. 3: the inverse filter's envelope gives +6 dB/octave in
    # amplitude relative to the reversed (pink) sweep: +3.01 dB/oct in power.
    inv = inverse_sweep(20, 20000, 4.0, FS)
    p = np.abs(np.fft.rfft(inv)) ** 2
    f = np.fft.rfftfreq(len(inv), 1 / FS)
    assert _slope_db_per_octave(f, p, 100, 10000) == pytest.approx(10 * np.log10(2), abs=0.1)


def test_sweep_times_inverse_is_flat_in_band():
    # Farina 2000: sweep * inverse = a band-limited delayed Dirac. Flat to
    # 0.05 dB from 5 f1 to 0.75 f2 (edge ripple of the finite sweep outside);
    # the 0 dB level is the normalisation at sqrt(f1 f2).
    x = exp_sweep(20, 20000, 2.0, FS, fade_in_s=0.05, fade_out_s=0.01)
    y = fft_convolve(x, inverse_of_sweep(x, 20, 20000, FS))
    h = np.abs(np.fft.rfft(y, 2 ** 19))
    f = np.fft.rfftfreq(2 ** 19, 1 / FS)
    m = (f >= 100) & (f <= 15000)
    assert np.max(np.abs(20 * np.log10(h[m]))) < 0.05


def test_sweep_times_inverse_peaks_at_sweep_length():
    # Farina 2000: the linear impulse response appears delayed by the sweep length.
    x = exp_sweep(20, 20000, 1.0, FS)
    y = fft_convolve(x, inverse_sweep(20, 20000, 1.0, FS))
    assert int(np.argmax(np.abs(y))) == len(x) - 1


@pytest.mark.parametrize("args, field", [
    ((0, 1000, 1.0, FS), "f1_hz"),
    ((1000, 500, 1.0, FS), "f2_hz"),
    ((20, 30000, 1.0, FS), "f2_hz"),
    ((20, 20000, -1.0, FS), "duration_s"),
    ((20, 20000, 1.0, 0), "fs_hz"),
])
def test_sweep_bad_arguments_raise(args, field):
    with pytest.raises(CrossplanError, match=rf"^{field}: "):
        exp_sweep(*args)


def test_sweep_fades_longer_than_sweep_raise():
    with pytest.raises(CrossplanError, match=r"fade_out_s: fades of 0.6 s \+ 0.6 s are longer"):
        exp_sweep(20, 20000, 1.0, FS, fade_in_s=0.6, fade_out_s=0.6)


def test_inverse_of_non_array_raises():
    with pytest.raises(CrossplanError, match=r"sweep: must be a 1-D array"):
        inverse_of_sweep(np.ones((3, 3)), 20, 20000, FS)


# ---------------------------------------------------------------- impulse, noise

def test_impulse_position():
    x = impulse(100, FS, delay_ms=1.0)  # 1 ms at 48 kHz = sample 48
    assert x[48] == 1.0 and np.count_nonzero(x) == 1


def test_impulse_delay_outside_raises():
    with pytest.raises(CrossplanError, match=r"delay_ms: 10.0 ms \(sample 480\) is outside 0..99"):
        impulse(100, FS, delay_ms=10.0)


def test_white_noise_rms_and_flat_spectrum():
    # Flat power spectrum (slope 0 dB/oct within 0.2, Welch estimate, 64 averages).
    x = white_noise(2 ** 18, FS, seed=1, rms=0.2)
    assert np.sqrt(np.mean(x * x)) == pytest.approx(0.2, rel=1e-12)
    f, p = signal.welch(x, FS, nperseg=8192)
    assert abs(_slope_db_per_octave(f, p, 50, 20000)) < 0.2


def test_pink_noise_slope_is_minus_3db_per_octave():
    # 1/f power: -3.01 dB/octave (Kasdin 1995). Welch estimate with 8192-point
    # segments (~63 averages): tolerance 0.25 dB/oct for the estimate's scatter.
    x = pink_noise(2 ** 19, FS, seed=7)
    f, p = signal.welch(x, FS, nperseg=8192)
    assert _slope_db_per_octave(f, p, 20, 20000) == pytest.approx(-10 * np.log10(2), abs=0.25)


def test_pink_noise_seed_repeats_and_rms():
    a, b = pink_noise(4096, FS, seed=3, rms=0.5), pink_noise(4096, FS, seed=3, rms=0.5)
    np.testing.assert_array_equal(a, b)
    assert np.sqrt(np.mean(a * a)) == pytest.approx(0.5, rel=1e-12)


def test_noise_bad_length_raises():
    with pytest.raises(CrossplanError, match=r"n_samples: must be a whole number of samples >= 1, not 0"):
        pink_noise(0, FS)


@pytest.mark.parametrize("call, match", [
    (lambda: exp_sweep(20, 20000, 1.0, FS, fade_in_s=-0.1),
     r"fade_in_s: must be 0 or more seconds, not -0.1"),
    (lambda: impulse(2.5, FS), r"n_samples: must be a whole number of samples >= 1, not 2.5"),
    (lambda: white_noise(10, -1), r"fs_hz: must be a positive number of Hz, not -1"),
    (lambda: fft_convolve([], [1.0]), r"x: must be a non-empty 1-D array, not shape \(0,\)"),
])
def test_signal_argument_errors(call, match):
    with pytest.raises(CrossplanError, match=match):
        call()
