"""Deviation of a rounded chain, internal gain and suggested fixes against scipy.signal.

Sources: responses (scipy.signal.sosfreqz), peaking-EQ gain (Audio EQ Cookbook W3C note).
"""

import numpy as np
import pytest
from scipy import signal

from planner.dsp.biquad import peaking
from planner.dsp.fixed import (
    judge_deviation, peak_internal_gain_db, quantize_sos, response_deviation_db, suggest_fixes,
)
from planner.errors import ExportError
from tests.dsp.fixed.fixed_refs import FRAGILE, FS_HI, F_HI


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
