"""Coefficient quantisation against numpy/scipy and the fixed-point definition.

Sources: two's-complement word ranges (numpy.iinfo), IEEE 754 binary32 rounding
(numpy.float32), polynomial roots (numpy.roots), responses (scipy.signal.sosfreqz),
peaking-EQ gain (Audio EQ Cookbook W3C note); the post-shift as in general-purpose
fixed-point biquad code (the accumulator shifted left by k bits runs coefficients
stored divided by 2^k).
"""

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy import signal

from planner.dsp.biquad import peaking
from planner.dsp.quantize import (
    Arith, judge_deviation, parse_arith, peak_internal_gain_db, pole_radius, post_shifts,
    quantize_sos, response_deviation_db, suggest_fixes, unshift,
)
from planner.dsp.sections import scale_sections
from planner.errors import ExportError

FS_HI = 192000.0
#: The fragile case: 30 Hz 8th-order Butterworth highpass at 192 kHz.
FRAGILE = signal.butter(8, 30, "highpass", fs=FS_HI, output="sos")
F_HI = np.geomspace(10, 90000, 1500)


# ---------------------------------------------------------------- parse_arith

@pytest.mark.parametrize("text, dtype", [("q1.15", np.int16), ("q2.30", np.int32),
                                         ("q1.31", np.int32), ("q1.7", np.int8),
                                         ("q4.60", np.int64)])
def test_q_range_equals_twos_complement_word(text, dtype):
    # qM.N is a (M+N)-bit two's-complement integer times 2^-N: its range is
    # numpy.iinfo(intW) scaled by 2^-N, exactly (floats compared with ==).
    a = parse_arith(text)
    info = np.iinfo(dtype)
    assert a.word_bits == info.bits
    assert a.min_value == float(info.min) * 2.0 ** -a.frac_bits
    assert a.max_value == float(info.max) * 2.0 ** -a.frac_bits


def test_q1_23_range_exact():
    # 24-bit word (no numpy type): definition [-2^(M-1), 2^(M-1) - 2^-N].
    a = parse_arith(" Q1.23 ")
    assert (a.kind, a.int_bits, a.frac_bits) == ("fixed", 1, 23)
    assert a.min_value == -1.0 and a.max_value == 1.0 - 2.0 ** -23


def test_float_names_parse():
    assert parse_arith("float64") == Arith("float64")
    assert parse_arith("FLOAT32").name == "float32"


@pytest.mark.parametrize("bad", ["int16", "q0.15", "q1.64", "q1", "float16", "", "q1.-3"])
def test_bad_arith_text_raises(bad):
    with pytest.raises(ExportError, match=r"^arith: .*is not a known format; use 'float64'"):
        parse_arith(bad)


def test_non_string_arith_raises():
    with pytest.raises(ExportError, match=r"arith: 32 is not a format name"):
        parse_arith(32)


# ---------------------------------------------------------------- rounding

@settings(max_examples=300, deadline=None)
@given(n=st.integers(1, 40), m=st.integers(1, 4), data=st.data())
def test_fixed_round_error_at_most_half_lsb(n, m, data):
    # Round to nearest: |q(x) - x| <= 2^-(N+1) for x inside the range, and
    # q(x) is an integer multiple of 2^-N (definition of qM.N).
    a = Arith("fixed", m, n)
    x = data.draw(st.floats(a.min_value, a.max_value, allow_nan=False))
    q, sat = a.quantize(np.array([x]))
    assert not sat[0]
    assert abs(q[0] - x) <= 2.0 ** -(n + 1)
    assert (q[0] * 2.0 ** n) == np.round(q[0] * 2.0 ** n)


def test_fixed_saturates_and_reports():
    # Values beyond the range clip to the ends; a value that rounds past the
    # top (1 - 2^-17 rounds to 1.0 in q1.15) saturates too.
    a = parse_arith("q1.15")
    q, sat = a.quantize(np.array([1.5, -1.0, -1.2, 1 - 2.0 ** -17, 0.25]))
    np.testing.assert_array_equal(q, [1 - 2.0 ** -15, -1.0, -1.0, 1 - 2.0 ** -15, 0.25])
    np.testing.assert_array_equal(sat, [True, False, True, True, False])


@settings(max_examples=300, deadline=None)
@given(st.floats(-1e30, 1e30, allow_nan=False))
def test_float32_rounding_equals_numpy_cast(x):
    # IEEE 754 binary32 round-to-nearest-even, as numpy.float32 casts.
    q, sat = parse_arith("float32").quantize(np.array([x]))
    assert q[0] == float(np.float32(x)) and not sat[0]


def test_float32_overflow_saturates():
    q, sat = parse_arith("float32").quantize(np.array([1e40]))
    assert sat[0] and q[0] == float(np.finfo(np.float32).max)


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


# ---------------------------------------------------------------- deviation

def test_response_deviation_matches_sosfreqz():
    # Reference: max |20 log10 |H_q/H_ref|| from scipy.signal.sosfreqz.
    sos = signal.butter(4, 3000, fs=48000, output="sos")
    q = quantize_sos(sos, "q2.14").effective_sos
    f = np.geomspace(20, 20000, 300)
    ref = 20 * np.log10(np.abs(signal.sosfreqz(q, worN=f, fs=48000)[1]
                               / signal.sosfreqz(sos, worN=f, fs=48000)[1]))
    dev, at = response_deviation_db(sos, q, f, 48000)
    assert dev == pytest.approx(np.max(np.abs(ref)), rel=1e-9)
    assert at == f[np.argmax(np.abs(ref))]


def test_response_deviation_floor_ignores_stopband():
    sos = signal.butter(4, 3000, fs=48000, output="sos")
    q = sos.copy()
    q[-1, 2] *= 1.001       # one zero moved off z = -1: the deep stop band changes most
    f = np.geomspace(20, 20000, 300)
    dev_all = response_deviation_db(sos, q, f, 48000)[0]
    dev_pass, at = response_deviation_db(sos, q, f, 48000, floor_db=-20)
    # A 3 kHz 4th-order Butterworth is at -20 dB near 5.3 kHz (|H|^2 = 1/(1+(f/fc)^8)).
    assert dev_pass < dev_all and at < 5400


def test_deviation_grid_above_nyquist_raises():
    with pytest.raises(ExportError, match=r"freqs_hz: must be finite frequencies in \[0, 24000\]"):
        response_deviation_db(FRAGILE, FRAGILE, [100, 30000], 48000)


# ---------------------------------------------------------------- judging the deviation

def test_judge_deviation_in_range_is_the_db_ratio():
    # Inside 40 dB of the peak: max |20 log10 |H_q / H_ref|| (sosfreqz as reference).
    sos = signal.butter(4, 3000, fs=48000, output="sos")
    q = quantize_sos(sos, "q2.14").effective_sos
    f = np.geomspace(20, 20000, 600)
    ref = signal.sosfreqz(sos, worN=f, fs=48000)[1]
    got = signal.sosfreqz(q, worN=f, fs=48000)[1]
    d = judge_deviation(ref, got, f)
    inside = 20 * np.log10(np.abs(ref)) >= -40
    expect = np.max(np.abs(20 * np.log10(np.abs(got[inside] / ref[inside]))))
    assert d.in_range_db == pytest.approx(expect, rel=1e-12)


def test_judge_deviation_ignores_a_large_relative_change_deep_down():
    # 2.9 dB at -90 dB is an error of |10^(-90/20) (10^(2.9/20) - 1)| = -98.0 dB re the
    # peak: below the -80 dB floor, so it does not fail; the same change at -30 dB does.
    f = np.array([100.0, 1000.0, 10000.0])
    ref = np.array([1.0, 10 ** (-30 / 20), 10 ** (-90 / 20)])
    deep = ref * np.array([1.0, 1.0, 10 ** (2.9 / 20)])
    d = judge_deviation(ref, deep, f)
    assert d.in_range_db == pytest.approx(0.0, abs=1e-12) and d.ok(0.1)
    assert d.floor_error_db == pytest.approx(20 * np.log10(10 ** -4.5 * (10 ** 0.145 - 1)),
                                             abs=1e-9)
    near = ref * np.array([1.0, 10 ** (2.9 / 20), 1.0])
    assert not judge_deviation(ref, near, f).ok(0.1)


# ---------------------------------------------------------------- internal gain

def test_peak_internal_gain_matches_cumulative_sosfreqz():
    # Reference: max over the grid of |sosfreqz(sos[:k])| in dB, k = 1..n.
    sos = np.vstack([peaking(100, 9.0, 1.0, 48000), signal.butter(4, 2000, fs=48000,
                                                                  output="sos")])
    f = np.geomspace(20, 20000, 800)
    pk = peak_internal_gain_db(sos, f, 48000)
    for k in range(1, len(sos) + 1):
        ref = 20 * np.log10(np.abs(signal.sosfreqz(sos[:k], worN=f, fs=48000)[1]))
        assert pk.gain_db[k - 1] == pytest.approx(ref.max(), abs=1e-9)
        assert pk.at_hz[k - 1] == f[np.argmax(ref)]


def test_headroom_of_peaking_boost_is_its_gain():
    # Audio EQ Cookbook (W3C note): a peaking EQ's gain at f0 is gain_db.
    f = np.array([500.0, 1000.0, 2000.0])
    pk = peak_internal_gain_db(peaking(1000, 6.0, 1.4, 48000), f, 48000)
    assert pk.headroom_db == pytest.approx(6.0, abs=1e-9)


# ---------------------------------------------------------------- suggestions

def test_suggest_names_the_section_that_needs_too_wide_a_shift():
    sos = np.array([[1e6, 0, 0, 1, -0.5, 0.1]])
    s = suggest_fixes(sos, "q1.15", 48000, np.geomspace(20, 20000, 100))
    assert any("section(s) 1: a coefficient (1e+06) needs a post-shift wider than q1.15's "
               "16-bit word" in x for x in s)


def test_suggest_lower_rate_for_poles_near_one():
    s = suggest_fixes(FRAGILE, "q2.22", FS_HI, F_HI)
    assert any("lower sample rate" in x and "48000 Hz" in x for x in s)
    # The wider format named must really hold the design (checked here with sosfreqz).
    name = next(x.split()[0] for x in s if "holds this design" in x)
    q = quantize_sos(FRAGILE, name)
    assert q.ok and response_deviation_db(FRAGILE, q.effective_sos, F_HI, FS_HI,
                                          floor_db=-40)[0] <= 0.1


def test_suggest_nothing_when_format_holds():
    sos = signal.butter(4, 1000, fs=48000, output="sos")
    assert suggest_fixes(sos, "q2.30", 48000, np.geomspace(20, 20000, 400)) == []
    assert suggest_fixes(FRAGILE, "q1.31", FS_HI, F_HI) == []


def test_bad_sample_rate_raises():
    with pytest.raises(ExportError, match=r"fs_hz: must be a positive number of Hz, not 0"):
        peak_internal_gain_db(FRAGILE, [100.0], 0)
