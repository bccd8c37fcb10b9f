"""EQ gain fitting against known answers and numpy's own least squares.

Sources: ISO 266 nominal frequencies and the ISO 3 R10 preferred numbers (1, 1.25, 1.6, 2,
2.5, 3.15, 4, 5, 6.3, 8: values from memory of the standard); IEC 61260-1 base-ten band
centres 1000 * 10^(k/10) Hz; the Audio EQ Cookbook W3C note (peaking filters; bandwidth
and Q) and the constant-Q relation Q = sqrt(2^N) / (2^N - 1) for an N-octave band (common
practice, no published source); numpy.linalg.lstsq (the brute-force linear least squares);
scipy.signal.sosfreqz (the filters' responses); Linkwitz and Riley 1976 (an LR4 split sums
flat in magnitude).
"""

import numpy as np
import pytest
from scipy import signal

from planner.dsp import fit, iir
from planner.dsp.biquad import peaking
from planner.errors import DesignError

FS = 48000.0
F = np.geomspace(20, 20000, 800)
R10 = np.array([1.0, 1.25, 1.6, 2.0, 2.5, 3.15, 4.0, 5.0, 6.3, 8.0])


def _nearest_preferred(x):
    e = np.floor(np.log10(x))
    m = x / 10 ** e
    cands = np.concatenate([R10, [10.0]])
    return cands[np.argmin(np.abs(np.log(cands / m)))] * 10 ** e


def test_iso_third_octave_centres_are_the_exact_centres_rounded_to_preferred_numbers():
    exact = fit.band_centres_hz(3, 20, 20000)
    assert len(exact) == len(fit.ISO_THIRD_OCTAVE_HZ) == 31
    got = [_nearest_preferred(x) for x in exact]
    np.testing.assert_allclose(got, fit.ISO_THIRD_OCTAVE_HZ, rtol=1e-12)
    assert fit.band_centres_hz(3)[17] == pytest.approx(1000.0, rel=1e-12)


def test_q_of_a_third_octave_band():
    # Cookbook 1/Q = 2 sinh(ln2/2 BW), and the constant-Q form sqrt(2^N) / (2^N - 1).
    n = 1 / 3
    assert fit.q_of_bandwidth(n) == pytest.approx(np.sqrt(2 ** n) / (2 ** n - 1), rel=1e-12)
    assert fit.q_of_bandwidth(1.0) == pytest.approx(np.sqrt(2), rel=1e-12)
    with pytest.raises(DesignError, match="bandwidth: must be above 0 octaves, not 0"):
        fit.q_of_bandwidth(0)


Q3 = fit.q_of_bandwidth(1 / 3)


def _filter_db(c, g, q=Q3, f=F):
    """Level of one cookbook peaking filter, by scipy.signal.sosfreqz."""
    return 20 * np.log10(np.abs(signal.sosfreqz(peaking(min(c, 0.45 * FS), g, q, FS),
                                                worN=f, fs=FS)[1]))


def _bank_db(gains, centres=fit.ISO_THIRD_OCTAVE_HZ):
    """Level of a chain of cookbook peaking filters: the sum of their levels in dB."""
    return np.sum([_filter_db(c, g) for c, g in zip(centres, gains)], axis=0)


def _bank_jac(gains, centres=fit.ISO_THIRD_OCTAVE_HZ, h=0.01):
    """Column k: filter k's own level slope (the chain's level is a sum over filters)."""
    return np.stack([(_filter_db(c, g + h) - _filter_db(c, g - h)) / (2 * h)
                     for c, g in zip(centres, gains)], axis=1)


def test_graphic_eq_recovers_the_gains_that_made_its_target():
    # 31 third-octave filters overlap strongly (Q 4.3): a target made by the same bank
    # with known gains is matched and those gains come back within 0.05 dB.
    rng = np.random.default_rng(7)
    known = rng.uniform(-9, 9, 31)
    target = _bank_db(known)
    r = fit.fit_gains(_bank_db, F, target, np.zeros(31), (-12, 12), jacobian=_bank_jac)
    assert np.max(np.abs(r.gains_db - known)) < 0.05
    assert abs(r.max_error_db) < 0.01 and r.at_limit == []


def test_the_fit_is_no_worse_than_numpy_lstsq_on_the_same_linearised_problem():
    # Brute force: the Jacobian at 0 dB and numpy.linalg.lstsq. The fit (bounded linear
    # step, then the exact nonlinear problem) ends with no larger squared error.
    rng = np.random.default_rng(3)
    target = _bank_db(rng.uniform(-6, 6, 31)) + rng.normal(0, 0.3, len(F))
    base, jac = fit.linearised(_bank_db, np.zeros(31))      # central differences, generic
    g_ls = np.linalg.lstsq(jac, target - base, rcond=None)[0]
    r = fit.fit_gains(_bank_db, F, target, np.zeros(31), (-20, 20), jacobian=_bank_jac)
    sse_ls = np.sum((_bank_db(g_ls) - target) ** 2)
    assert np.sum(r.error_db ** 2) <= sse_ls * (1 + 1e-9)
    # Where the linear problem is exact (small gains), both agree closely.
    small = _bank_db(0.3 * np.sin(np.arange(31)))
    g_small = np.linalg.lstsq(jac, small - base, rcond=None)[0]
    r_small = fit.fit_gains(_bank_db, F, small, np.zeros(31), (-20, 20), jacobian=_bank_jac)
    assert np.max(np.abs(r_small.gains_db - g_small)) < 0.02


def test_naive_slider_setting_is_worse_than_the_fit():
    # "Each slider to the error at its centre" ignores the overlap of neighbours: a smooth
    # +6 dB rise over 300 Hz .. 3 kHz set that way overshoots by the neighbours' skirts.
    inside = np.clip(np.log2(F / 300) / np.log2(10), 0, 1) * (F < 3000)
    target = 6.0 * np.sin(np.pi * inside) ** 2
    naive = np.interp(np.log(fit.ISO_THIRD_OCTAVE_HZ), np.log(F), target)
    naive_rms = np.sqrt(np.mean((_bank_db(naive) - target) ** 2))
    r = fit.fit_gains(_bank_db, F, target, np.zeros(31), (-12, 12), jacobian=_bank_jac)
    # Measured: naive 0.83 dB rms (2.9 dB worst), the fit 0.16 dB rms.
    assert naive_rms > 0.5 and r.rms_error_db < 0.25 * naive_rms


def test_a_target_no_bank_can_reach_reports_its_residual():
    # A 1/20-octave notch of -20 dB at 1.1 kHz: narrower than any third-octave filter.
    target = np.where(np.abs(np.log2(F / 1100)) < 1 / 40, -20.0, 0.0)
    r = fit.fit_gains(_bank_db, F, target, np.zeros(31), (-12, 12), jacobian=_bank_jac)
    assert r.max_error_db > 5.0 and abs(r.max_at_hz - 1100) < 40
    assert r.rms_error_db > 0.5


def test_gains_at_their_limits_are_named():
    target = np.full(len(F), 20.0)              # +20 dB everywhere, limits +-6 dB
    r = fit.fit_gains(_bank_db, F, target, np.zeros(31), (-6, 6), jacobian=_bank_jac)
    assert len(r.at_limit) > 20 and np.all(r.gains_db <= 6 + 1e-9)


def test_minimax_lowers_the_worst_deviation_and_never_raises_it():
    target = np.where(F > 3000, -4.0, 0.0) + 1.5 * np.sin(np.log(F))
    ls = fit.fit_gains(_bank_db, F, target, np.zeros(31), (-12, 12), jacobian=_bank_jac)
    mm = fit.minimax_gains(_bank_db, F, target, ls.gains_db, (-12, 12), jacobian=_bank_jac)
    assert abs(mm.max_error_db) <= abs(ls.max_error_db) + 1e-12
    assert abs(mm.max_error_db) < abs(ls.max_error_db) * 0.95 and mm.method == "minimax"


def test_split_band_gains_fit_their_sum_to_a_target():
    # A 3-way LR4 split (Linkwitz and Riley 1976: flat sum) with band gains of -3, +2,
    # -1 dB: fitting the three gains to the sum the split makes with them finds them.
    bands = [iir.linkwitz_riley_sos("lowpass", 4, 300, FS),
             np.vstack([iir.linkwitz_riley_sos("highpass", 4, 300, FS),
                        iir.linkwitz_riley_sos("lowpass", 4, 3000, FS)]),
             iir.linkwitz_riley_sos("highpass", 4, 3000, FS)]
    # The low band goes through the 3 kHz pair's all-pass (its LR4 lowpass plus highpass),
    # so that the three sum flat in magnitude (Linkwitz and Riley 1976).
    h_ap = signal.sosfreqz(iir.linkwitz_riley_sos("lowpass", 4, 3000, FS), worN=F, fs=FS)[1] \
        + signal.sosfreqz(iir.linkwitz_riley_sos("highpass", 4, 3000, FS), worN=F, fs=FS)[1]
    h = np.array([signal.sosfreqz(s, worN=F, fs=FS)[1] for s in bands])
    h[0] *= h_ap

    def level(g):
        return 20 * np.log10(np.abs((10 ** (np.asarray(g) / 20))[:, None] * h).sum(axis=0))

    known = np.array([-3.0, 2.0, -1.0])
    r = fit.fit_gains(level, F, level(known), np.zeros(3), (-10, 10))
    np.testing.assert_allclose(r.gains_db, known, atol=0.01)
    flat = fit.fit_gains(level, F, np.zeros(len(F)), known, (-10, 10))
    np.testing.assert_allclose(flat.gains_db, 0.0, atol=0.01)
    assert abs(flat.max_error_db) < 0.01


def test_bad_limits_and_target_shapes_are_refused():
    with pytest.raises(DesignError, match="gain_limits_db: each lower gain limit must be below"):
        fit.fit_gains(_bank_db, F, np.zeros(len(F)), np.zeros(31), (6, -6))
    with pytest.raises(DesignError, match="target: the target has 3 points, the grid 800"):
        fit.fit_gains(_bank_db, F, np.zeros(3), np.zeros(31))
