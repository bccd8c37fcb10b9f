"""Coefficient quantisation with post-shifts against numpy/scipy.

Sources: polynomial roots (numpy.roots), responses (scipy.signal.sosfreqz); the
post-shift as in general-purpose fixed-point biquad code (the accumulator shifted left
by k bits runs coefficients stored divided by 2^k).
"""

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy import signal

from planner.dsp.biquad import peaking
from planner.dsp.fixed import (
    pole_radius, post_shifts, quantize_sos, response_deviation_db, scale_sections, unshift,
)
from planner.errors import ExportError
from tests.dsp.fixed.fixed_refs import FRAGILE, FS_HI, F_HI


# ---------------------------------------------------------------- pole radius

@settings(max_examples=400, deadline=None)
@given(st.floats(-2.5, 2.5), st.floats(-1.5, 1.5))
def test_pole_radius_closed_form_matches_numpy_roots(a1, a2):
    # Reference: numpy.roots of z^2 + a1 z + a2 (companion-matrix eigenvalues).
    r = pole_radius(np.array([[1, 0, 0, 1, a1, a2]]))[0]
    ref = np.max(np.abs(np.roots([1.0, a1, a2])))
    # Double roots are ill-conditioned for numpy.roots (error ~ sqrt(eps)):
    # 1e-7 absolute covers that; elsewhere agreement is ~1e-15.
    assert r == pytest.approx(ref, abs=1e-7)


def test_pole_radius_of_fragile_design_matches_numpy_roots():
    ref = [np.max(np.abs(np.roots(s[3:]))) for s in FRAGILE]
    np.testing.assert_allclose(pole_radius(FRAGILE), ref, rtol=0, atol=1e-12)


def test_quantized_pole_radius_matches_numpy_roots():
    q = quantize_sos(FRAGILE, "q2.30")
    ref = [np.max(np.abs(np.roots(s[3:]))) for s in q.sos]
    np.testing.assert_allclose(q.pole_radius, ref, rtol=0, atol=1e-12)


# ---------------------------------------------------------------- the fragile case

def test_fragile_highpass_fits_q1_15_by_post_shift_but_is_unstable():
    # a1 ~ -1.998 does not fit q1.15's [-1, 1): stored as a1 / 2 with a post-shift of 1
    # it does, but 15 fractional bits (14 effective) move the poles onto the unit circle
    # (Oppenheim and Schafer sec. 6.7: poles near z = 1 in direct-form sections).
    q = quantize_sos(FRAGILE, "q1.15")
    assert q.shifts.tolist() == [1, 1, 1, 1] and not q.overflow.any()
    assert not q.stable and not q.ok


def test_fragile_highpass_unstable_in_q2_14():
    # With the range fixed, 14 fractional bits still move the poles onto the
    # unit circle (radius 1 = not stable).
    q = quantize_sos(FRAGILE, "q2.14")
    assert not q.overflow.any() and q.shifts.tolist() == [0, 0, 0, 0]
    assert not q.stable and np.max(q.pole_radius) >= 1.0


def test_fragile_highpass_survives_q1_31_with_post_shift():
    # 31 fractional bits, the sections stored halved: stable, radius as numpy.roots says.
    q = quantize_sos(FRAGILE, "q1.31")
    assert q.ok and q.shifts.tolist() == [1, 1, 1, 1]
    ref = [np.max(np.abs(np.roots(s[3:]))) for s in q.effective_sos]
    np.testing.assert_allclose(q.pole_radius, ref, rtol=0, atol=1e-9)


def test_fragile_highpass_survives_float64():
    q = quantize_sos(FRAGILE, "float64")
    dev, _ = response_deviation_db(FRAGILE, q.effective_sos, F_HI, FS_HI)
    assert q.ok and dev < 1e-9  # float64 changes nothing


def test_fragile_highpass_float32_deviates_more_than_q2_30():
    # Measured against sosfreqz through response_deviation_db: a 24-bit
    # mantissa is coarser than 30 fractional bits for coefficients near 2.
    d32 = response_deviation_db(FRAGILE, quantize_sos(FRAGILE, "float32").effective_sos,
                                F_HI, FS_HI)[0]
    d30 = response_deviation_db(FRAGILE, quantize_sos(FRAGILE, "q2.30").effective_sos,
                                F_HI, FS_HI)[0]
    assert d32 > d30


# ---------------------------------------------------------------- post-shifts

def test_post_shift_is_smallest_power_of_two_that_fits_all_five():
    # b = [2, -4, 2] in q2.30 (range [-2, 2 - 2^-30]): 2 and -4 do not fit,
    # everything / 2 does (-2 is the most negative value), a1, a2 halved too.
    sos = signal.butter(2, 50, "highpass", fs=48000, output="sos")
    sos[0, :3] = [2.0, -4.0, 2.0]
    q = quantize_sos(sos, "q2.30")
    assert q.shifts.tolist() == [1]
    np.testing.assert_array_equal(q.sos[0, :3], [1.0, -2.0, 1.0])
    assert q.sos[0, 4] == pytest.approx(sos[0, 4] / 2, abs=2.0 ** -31)
    assert not q.saturated.any()


def test_post_shift_preserves_response():
    # The sections as they run (stored times 2^shift) equal the design (reference sosfreqz).
    sos = np.vstack([peaking(12000, 18.0, 0.7, 48000), peaking(8000, 12.0, 1.0, 48000)])
    q = quantize_sos(sos, "q1.31")
    assert q.shifts.tolist() == [2, 1]  # b0 = 2.40 and 1.53 (cookbook formulas)
    f = np.geomspace(20, 20000, 400)
    ref = signal.sosfreqz(sos, worN=f, fs=48000)[1]
    got = signal.sosfreqz(unshift(q.sos, q.shifts), worN=f, fs=48000)[1]
    # 31 fractional bits, 2^-32 per coefficient times 2^2: relative error of order 1e-8.
    np.testing.assert_allclose(got, ref, rtol=1e-6)


def test_post_shift_of_low_cutoff_is_one_bit_in_q1_31():
    # A low cut-off's a1 near -2: general-purpose q1.31 biquad code holds it with a
    # post-shift of one bit (all coefficients halved, the accumulator doubled). The
    # numerators are scaled to peak at full scale first, as export does for fixed point.
    sos = scale_sections(signal.butter(4, 40, fs=96000, output="sos")).sos
    assert post_shifts(sos, "q1.31").tolist() == [1, 1]
    assert post_shifts(sos, "q2.30").tolist() == [0, 0]
    assert post_shifts(sos, "float32").tolist() == [0, 0]


def test_max_coef_error_bounded_by_half_lsb_times_shift():
    # Rounding error <= 2^-(N+1) in the stored scale, times 2^shift in the design's.
    sos = signal.butter(6, 2000, fs=48000, output="sos")
    q = quantize_sos(sos, "q2.22")
    bound = 2.0 ** -23 * 2.0 ** q.shifts.max()
    assert 0 < q.max_coef_error <= bound


def test_zeros_at_minus_one_stay_exact_in_fixed_point():
    # A lowpass numerator k [1, 2, 1] keeps b1 = 2 b0 = 2 b2 after rounding, so its zeros
    # stay at z = -1 (numpy.roots) and the response at Nyquist is exactly 0.
    sos = signal.butter(4, 1000, fs=48000, output="sos")
    sos[:, :3] = [3.3e-3, 6.6e-3, 3.3e-3]     # a factor that is no multiple of the LSB
    for name in ("q1.15", "q2.30", "float32"):
        q = quantize_sos(sos, name)
        b = unshift(q.sos, q.shifts)[:, :3]
        np.testing.assert_array_equal(b[:, 1], 2 * b[:, 0])
        np.testing.assert_array_equal(b[:, 2], b[:, 0])
        np.testing.assert_allclose(np.roots(b[0]), [-1, -1], atol=1e-7)  # double root


def test_section_needing_a_shift_wider_than_the_word_overflows():
    # A coefficient of 1e6 needs 2^20 in q1.15, more than its 16-bit word can shift.
    sos = np.array([[1e6, 0, 0, 1, -0.5, 0.1], [0.5, 0, 0, 1, -0.5, 0.1]])
    q = quantize_sos(sos, "q1.15")
    assert q.overflow.tolist() == [True, False] and not q.ok
    assert not quantize_sos(sos, "q2.30").overflow.any()   # a 32-bit word shifts 19 bits


def test_bad_sos_raises():
    with pytest.raises(ExportError, match=r"sos: must have shape \(n, 6\)"):
        quantize_sos(np.ones((2, 5)), "q1.31")
    with pytest.raises(ExportError, match=r"sos: a0 must be 1"):
        quantize_sos(np.array([[1, 0, 0, 2, 0, 0]]), "q1.31")
    with pytest.raises(ExportError, match=r"sos: coefficients must be finite"):
        quantize_sos(np.array([[np.nan, 0, 0, 1, 0, 0]]), "q1.31")
