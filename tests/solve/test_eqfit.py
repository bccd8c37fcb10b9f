"""EQ balancing (planner.solve.eqfit) against targets made outside crossplan.

References: R. Bristow-Johnson, "Audio EQ Cookbook", W3C Working Group Note 2021 (the
peaking biquad, written out again here and evaluated with scipy.signal.sosfreqz, so the
targets do not come from crossplan's own filters); ISO 266:1997 (nominal third-octave
centres); numpy.linalg.lstsq (brute-force linear least squares on the linearised problem).
"""

import numpy as np
import pytest
from scipy import signal

from planner import engine
from planner import project as pj
from planner.errors import ProjectError
from planner.solve import Target, eqfit, fit, parse_target
from tests.conftest import two_way

ISO_THIRDS = [20, 25, 31.5, 40, 50, 63, 80, 100, 125, 160, 200, 250, 315, 400, 500, 630, 800,
              1000, 1250, 1600, 2000, 2500, 3150, 4000, 5000, 6300, 8000, 10000, 12500, 16000,
              20000]                                   # ISO 266, as printed


def cookbook_peaking(f0, gain_db, q, fs):
    """The W3C note's peakingEQ, written out: A = 10^(g/40), alpha = sin(w0)/(2Q)."""
    a = 10 ** (gain_db / 40)
    w0 = 2 * np.pi * f0 / fs
    al = np.sin(w0) / (2 * q)
    b = [1 + al * a, -2 * np.cos(w0), 1 - al * a]
    d = [1 + al / a, -2 * np.cos(w0), 1 - al / a]
    return np.r_[b, d] / d[0]


def bank_level_db(freqs_hz, gains_db, fs, q):
    sos = np.array([cookbook_peaking(f0, g, q, fs) for f0, g in zip(ISO_THIRDS, gains_db)])
    return 20 * np.log10(np.abs(signal.sosfreqz(sos, worN=freqs_hz, fs=fs)[1]))


def one_band(fs=48000, filters=(), f_max=20000):
    return pj.from_dict({"format": "crossplan-project", "version": 1, "name": "graphic",
                         "sample_rate": fs,
                         "analysis": {"f_min": 20, "f_max": f_max, "points": 1024},
                         "bands": [{"name": "main", "filters": list(filters)}]})


def test_third_octave_bank_recovers_the_gains_that_made_its_target():
    fs = 48000
    q = 1 / (2 * np.sinh(np.log(2) / 2 / 3))           # 1/3 octave (Cookbook): 4.318
    gains = np.random.default_rng(7).uniform(-6, 6, len(ISO_THIRDS))
    f = np.geomspace(10, 23000, 6000)
    lv = bank_level_db(f, gains, fs, q)
    target = Target("known", lambda x: np.interp(np.log(x), np.log(f), lv))
    r = fit(one_band(fs), target, bank="third-octave")
    assert [b for b in r.project.bands[0].filters if b.params["freq"] == 31.5]
    assert len(r.gains_db) == 31
    # The bound: 0.05 dB per gain (interpolating the target costs ~1e-4 dB).
    assert np.max(np.abs(r.gains_db - gains)) <= 0.05
    assert r.rms_error_db <= 0.01 and r.at_limits == []


def test_the_fit_matches_numpy_lstsq_on_the_linearised_problem():
    # Small gains (+-1.5 dB): the level in dB is nearly linear in them, the limits idle.
    p = one_band(filters=[{"type": "peaking", "freq": fc, "gain_db": 0.0, "q": 1.4}
                          for fc in (63, 125, 250, 500, 1000, 2000, 4000, 8000)])
    rng = np.random.default_rng(3)
    f = np.geomspace(20, 20000, 3000)
    wobble = 1.2 * np.sin(np.log(f) * 2.1) + 0.4 * rng.standard_normal(3000).cumsum() / 40
    target = Target("wobble", lambda x: np.interp(np.log(x), np.log(f), wobble))
    r = fit(p, target)
    ch = eqfit._Chain(p, eqfit.free_filters(p), [])
    from planner.dsp.fit import log_weights
    w = np.sqrt(log_weights(ch.f))
    jac = ch.jacobian(np.zeros(8))
    g_ls = np.linalg.lstsq(jac * w[:, None], (target(ch.f) - ch.level(np.zeros(8))) * w,
                           rcond=None)[0]
    # Same problem, two solvers: within 0.1 dB per gain (the nonlinear fit differs from
    # the linearised one by the curvature of dB in gain, a few hundredths here).
    assert np.max(np.abs(r.gains_db - g_ls)) <= 0.1
    # and the nonlinear fit is at least as good on the true response
    err_ls = ch.level(g_ls) - target(ch.f)
    assert r.rms_error_db <= np.sqrt(np.sum(log_weights(ch.f) * err_ls ** 2)) + 1e-3


def test_a_notch_no_bank_can_reach_reports_its_residual_and_why():
    # A -12 dB dip 1/50 octave wide at 1.1 kHz: far narrower than a third-octave filter.
    f = np.geomspace(20, 20000, 8000)
    dip = -12 * np.exp(-0.5 * (np.log2(f / 1100) / (1 / 100)) ** 2)
    r = fit(one_band(), Target("dip", lambda x: np.interp(np.log(x), np.log(f), dip)),
            bank="third-octave")
    assert r.max_at_hz == pytest.approx(1100, rel=0.02)
    assert r.max_error_db > 5                    # the residual is reported, not hidden
    assert "narrower than any filter" in r.why
    # The reported error is the true one: the written project's level, by scipy.
    rep = engine.analyse(r.project)
    des = rep.designs[0]
    h = signal.sosfreqz(np.asarray(des.sos), worN=[r.max_at_hz], fs=48000)[1]
    true_err = 20 * np.log10(abs(h[0])) - float(np.interp(np.log(r.max_at_hz), np.log(f), dip))
    assert r.max_error_db == pytest.approx(true_err, abs=1e-6)


def test_gains_at_their_limits_are_named():
    r = fit(one_band(filters=[{"type": "peaking", "freq": 1000, "gain_db": 0, "q": 1}]),
            parse_target("shelf:-20@1000"), limit_db=6)
    assert r.gains_db[0] == pytest.approx(-6.0, abs=1e-6)
    assert r.at_limits and "bands[0].filters[0].gain_db at -6.00 dB" in r.at_limits[0]


def test_minimax_lowers_the_worst_error():
    p = one_band(filters=[{"type": "peaking", "freq": fc, "gain_db": 0, "q": 1.4}
                          for fc in (125, 500, 2000, 8000)])
    t = parse_target("tilt:-0.7")
    ls, mm = fit(p, t), fit(p, t, minimax=True)
    assert abs(mm.max_error_db) <= abs(ls.max_error_db) + 1e-9
    assert mm.result.method == "minimax"


def test_split_gains_recombine_a_two_way_flat():
    d = two_way(order=4, fc=2000.0)
    d["bands"][1]["gain_db"] = 4.0
    r = fit(pj.from_dict(d), parse_target("flat"), split=True)
    g = [b.gain_db for b in r.project.bands]
    assert g[1] - g[0] == pytest.approx(0.0, abs=0.05)
    assert abs(r.after.max_dev_db) <= 0.1


def test_a_woofer_eq_above_its_lowpass_is_left_alone():
    d = two_way(order=4, fc=1000.0)
    d["bands"][0]["filters"].append({"type": "peaking", "freq": 8000, "gain_db": 0, "q": 2})
    d["bands"][0]["filters"].append({"type": "peaking", "freq": 300, "gain_db": 0, "q": 2})
    r = fit(pj.from_dict(d), parse_target("tilt:-0.3"), bands=[0])
    assert r.left_alone == ["bands[0].filters[1].gain_db"]
    assert r.project.bands[0].filters[1].params["gain_db"] == 0.0


def test_a_filter_marked_fit_false_is_not_touched():
    p = one_band(filters=[{"type": "peaking", "freq": 1000, "gain_db": 2, "q": 1, "fit": False},
                          {"type": "peaking", "freq": 3000, "gain_db": 0, "q": 1}])
    r = fit(p, parse_target("flat"))
    assert r.names == ["bands[0].filters[1].gain_db"]
    assert r.project.bands[0].filters[0].params["gain_db"] == 2
    assert pj.to_dict(r.project)["bands"][0]["filters"][0]["fit"] is False   # kept


def test_nothing_to_fit_and_bad_requests_are_refused_by_name():
    with pytest.raises(ProjectError, match="bands: no EQ gains to fit"):
        fit(pj.from_dict(two_way()), parse_target("flat"))
    with pytest.raises(ProjectError, match="bank: a bank goes into one band"):
        fit(pj.from_dict(two_way()), parse_target("flat"), bank="octave")
    with pytest.raises(ProjectError, match="bank: must be one of octave, third-octave"):
        fit(one_band(), parse_target("flat"), bank="sixth", bands=[0])
    with pytest.raises(ProjectError, match="limit_db: must be within 0 .. 30 dB"):
        fit(one_band(), parse_target("flat"), bank="octave", limit_db=0)
    with pytest.raises(ProjectError, match="at least two active bands"):
        fit(one_band(), parse_target("flat"), split=True)


def test_the_octave_bank_uses_the_iso_centres_within_range_and_below_nyquist():
    p = eqfit.add_bank(one_band(fs=44100), 0, "third-octave")
    assert [f.params["freq"] for f in p.bands[0].filters][-1] == 16000   # 20 kHz > 0.45 fs
    p = eqfit.add_bank(one_band(fs=32000, f_max=15000), 0, "octave")
    got = [f.params["freq"] for f in p.bands[0].filters]
    assert got == [31.5, 63, 125, 250, 500, 1000, 2000, 4000, 8000]   # 16 kHz: > f_max
    assert p.bands[0].filters[0].params["q"] == pytest.approx(1.4142, abs=1e-4)
