"""IIR impulse responses and fast convolution against scipy.signal and numpy.

Sources: scipy.signal.sosfilt (the impulse response), numpy.convolve; Schroeder 1965
(backward-integrated tail energy).
"""

import numpy as np
import pytest
from scipy import signal

from planner.dsp.impulse import fft_convolve, truncate_iir_impulse
from planner.dsp.signals import impulse
from planner.errors import CrossplanError, ExportError

FS = 48000.0


# ---------------------------------------------------------------- IIR impulse

SOS_LOW = signal.butter(4, 100, fs=FS, output="sos")


def test_truncated_impulse_equals_sosfilt():
    # Reference: scipy.signal.sosfilt of a unit impulse of the same length.
    h = truncate_iir_impulse(SOS_LOW, FS)
    ref = signal.sosfilt(SOS_LOW, impulse(len(h), FS))
    np.testing.assert_allclose(h, ref, rtol=1e-12, atol=1e-300)


def test_truncation_is_first_sample_with_tail_below_floor():
    # Schroeder 1965 backward integral on a long sosfilt reference: the tail
    # after the cut is below the floor, the tail from one sample earlier is not.
    floor_db = -120.0
    h = truncate_iir_impulse(SOS_LOW, FS, floor_db=floor_db)
    ref = signal.sosfilt(SOS_LOW, impulse(len(h) * 4, FS))
    peak = np.max(ref ** 2)
    assert 10 * np.log10(np.sum(ref[len(h):] ** 2) / peak) < floor_db
    assert 10 * np.log10(np.sum(ref[len(h) - 1:] ** 2) / peak) >= floor_db


def test_truncation_uses_energy_not_single_sample():
    # A lightly damped resonance has samples near zero crossings with |h[n]|^2
    # below the floor long before its energy has decayed: a single-sample
    # test would cut there and lose tail energy above the floor (Schroeder 1965).
    floor_db = -100.0
    sos = signal.tf2sos(*signal.iirpeak(1000, 50, fs=FS))
    h = truncate_iir_impulse(sos, FS, floor_db=floor_db)
    ref = signal.sosfilt(sos, impulse(len(h) * 4, FS))
    peak = np.max(ref ** 2)
    naive = int(np.flatnonzero(ref[1:] ** 2 < 10 ** (floor_db / 10) * peak)[0]) + 1
    assert 10 * np.log10(np.sum(ref[naive:] ** 2) / peak) > floor_db  # naive cut loses energy
    assert len(h) > naive


def test_truncate_unstable_raises():
    with pytest.raises(ExportError, match=r"sos: section 1 has a pole at radius 1.1 >= 1"):
        truncate_iir_impulse(np.array([[1, 0, 0, 1, -1.1, 0]]), FS)


def test_truncate_too_short_raises():
    with pytest.raises(ExportError, match=r"max_seconds: 0.01 s is too short"):
        truncate_iir_impulse(signal.butter(4, 5, fs=FS, output="sos"), FS, max_seconds=0.01)


def test_truncate_positive_floor_raises():
    with pytest.raises(ExportError, match=r"floor_db: must be a negative number of dB, not 6"):
        truncate_iir_impulse(SOS_LOW, FS, floor_db=6)


# ---------------------------------------------------------------- convolution

def test_fft_convolve_equals_numpy_convolve():
    rng = np.random.default_rng(0)
    x, h = rng.standard_normal(20000), rng.standard_normal(3000)
    np.testing.assert_allclose(fft_convolve(x, h), np.convolve(x, h), atol=1e-9)


def test_fft_convolve_bad_mode_raises():
    with pytest.raises(CrossplanError, match=r"mode: must be 'full', 'same' or 'valid', not 'x'"):
        fft_convolve([1.0], [1.0], mode="x")



@pytest.mark.parametrize("kwargs, match", [
    ({"fs_hz": 0.0}, r"fs_hz: must be a positive number of Hz, not 0.0"),
    ({"max_seconds": 0.0}, r"max_seconds: must be a positive number of seconds, not 0.0"),
])
def test_truncate_argument_errors(kwargs, match):
    args = {"fs_hz": FS} | kwargs
    with pytest.raises(ExportError, match=match):
        truncate_iir_impulse(SOS_LOW, **args)
