"""Crossing search, flatness and helpers, on filters with published properties."""

import numpy as np
import pytest
from scipy import signal

from planner.dsp import analysis as an
from planner.dsp.response import band_responses

FS = 48000.0


def _pair(lp, hp, f):
    return band_responses([lp, hp], f, FS)


def test_lr4_crossing_found_exactly():
    # Linkwitz 1976: LR4 outputs cross at the cut-off, -6.02 dB, in phase.
    lp = np.vstack([signal.butter(2, 2200, fs=FS, output="sos")] * 2)
    hp = np.vstack([signal.butter(2, 2200, "highpass", fs=FS, output="sos")] * 2)
    f = an.log_grid(20, 20000, 200)  # coarse grid: the refinement must do the work
    r = _pair(lp, hp, f)
    cs = an.find_crossings(f, r.h, evaluate=an.per_point(lambda x: _pair(lp, hp, x).h))
    assert len(cs) == 1
    c = cs[0]
    assert c.freq_hz == pytest.approx(2200, rel=1e-6)
    assert c.level_db == pytest.approx(-6.0206, abs=1e-3)
    assert c.phase_diff_deg == pytest.approx(0.0, abs=1e-4)


def test_butterworth_third_order_crossing_is_90_degrees():
    # Odd-order Butterworth outputs are in quadrature (Linkwitz 1976), -3.01 dB at fc.
    lp = signal.butter(3, 1000, fs=FS, output="sos")
    hp = signal.butter(3, 1000, "highpass", fs=FS, output="sos")
    f = an.log_grid(20, 20000, 300)
    cs = an.find_crossings(f, _pair(lp, hp, f).h, evaluate=an.per_point(lambda x: _pair(lp, hp, x).h))
    assert abs(cs[0].phase_diff_deg) == pytest.approx(90.0, abs=1e-3)
    assert cs[0].level_db == pytest.approx(-3.0103, abs=1e-3)


def test_no_crossing_between_identical_slopes_apart():
    # Two lowpasses: the lower one is always below; no crossing.
    a = signal.butter(2, 500, fs=FS, output="sos")
    b = signal.butter(2, 5000, fs=FS, output="sos")
    f = an.log_grid(20, 20000, 100)
    assert an.find_crossings(f, _pair(a, b, f).h) == []


def test_log_grid_adds_extra_points_inside_range():
    f = an.log_grid(20, 20000, 10, extra_hz=[2200, 5, 30000])
    assert 2200 in f and 5 not in f and 30000 not in f
    assert np.all(np.diff(f) > 0)


def test_wrap_deg():
    np.testing.assert_allclose(an.wrap_deg([190, -190, 180, -180, 540]), [-170, 170, 180, 180, 180])


def test_flatness_reports_signed_worst_and_where():
    f = np.array([10.0, 100.0, 1000.0])
    h = 10 ** (np.array([0.5, -2.0, 1.0]) / 20)
    dev, at, ripple = an.flatness(f, h)
    assert (dev, at) == (pytest.approx(-2.0), 100.0)
    assert ripple == pytest.approx(3.0)


def test_crossings_beside_a_q100_notch_match_brentq():
    # scipy.signal.iirnotch (Q 100 at 3.2 kHz) on the highpass of an LR4 pair (Linkwitz 1976):
    # every crossing equals scipy.optimize.brentq on the level difference (sosfreqz),
    # bracketed by a dense scan.
    from scipy import optimize

    from planner.dsp.response import PointEvaluator

    lp = np.vstack([signal.butter(2, 2200, fs=FS, output="sos")] * 2)
    b, a = signal.iirnotch(3200, 100, fs=FS)
    hp = np.vstack([signal.butter(2, 2200, "highpass", fs=FS, output="sos")] * 2
                   + [np.concatenate([b, a])])
    f = an.log_grid(20, 20000, 300, extra_hz=[3200])
    cs = an.find_crossings(f, _pair(lp, hp, f).h, evaluate=PointEvaluator([lp, hp], FS))

    def g(x):
        fx = np.exp(np.atleast_1d(x))
        return (an.db(signal.sosfreqz(lp, worN=fx, fs=FS)[1])
                - an.db(signal.sosfreqz(hp, worN=fx, fs=FS)[1]))

    xs = np.log(np.geomspace(20, 20000, 200_000))
    gs = g(xs)
    k = np.nonzero(np.sign(gs[:-1]) * np.sign(gs[1:]) < 0)[0]
    ref = [np.exp(optimize.brentq(lambda x: g(x)[0], xs[j], xs[j + 1], xtol=1e-14)) for j in k]
    assert len(cs) == len(ref) == 3
    for c, fr in zip(cs, ref):
        assert c.freq_hz == pytest.approx(fr, rel=1e-7)   # two root searches of one function
        assert abs(g(np.log(c.freq_hz))[0]) < 1e-4        # dB: the bands are level there
