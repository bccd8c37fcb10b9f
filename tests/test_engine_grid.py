"""The analysis grid sees narrow features: raw biquad notches and peaks against a dense reference.

Reference: each band rebuilt from its sections and evaluated by scipy.signal.sosfreqz on
2^20 points from 0 to Nyquist, the extreme then refined by scipy.optimize.minimize_scalar
(tests/refs.py). Notches by scipy.signal.iirnotch; peaks by the Audio EQ Cookbook's peaking
EQ (R. Bristow-Johnson, W3C Working Group Note), written out here.
"""

import json

import numpy as np
import pytest
from hypothesis import HealthCheck, example, given, settings
from hypothesis import strategies as st
from scipy import signal

from planner import config, engine, presets, project
from planner.engine.analyse import start_grid
from tests import refs


def cookbook_peaking(f0_hz, gain_db, q, fs_hz):
    """b0, b1, b2, a1, a2 of the Audio EQ Cookbook peaking EQ, normalised by a0."""
    a = 10 ** (gain_db / 40)
    w0 = 2 * np.pi * f0_hz / fs_hz
    alpha = np.sin(w0) / (2 * q)
    b = np.array([1 + alpha * a, -2 * np.cos(w0), 1 - alpha * a])
    den = np.array([1 + alpha / a, -2 * np.cos(w0), 1 - alpha / a])
    return [float(x) for x in np.concatenate([b / den[0], den[1:] / den[0]])]


RATES = [44100, 48000, 96000, 192000]
#: Between two points of the two-way preset's 1024-point grid (45 Hz - 20 kHz): a feature
#: there falls between grid points of the plain log grid.
_G = np.geomspace(45, 20000, 1024)
BETWEEN = [float(np.sqrt(_G[k] * _G[k + 1])) for k in (700, 800, 900)]    # 2.9, 5.3, 9.6 kHz


@pytest.mark.parametrize("gain_db", [-6.0, 6.0])
def test_the_reference_peaking_eq_has_its_gain_at_f0(gain_db):
    # Audio EQ Cookbook: the peaking EQ's gain at f0 is A^2 = 10^(gain_db / 20), its maximum
    # (boost) or minimum (cut); checked with scipy.signal.sosfreqz.
    c = cookbook_peaking(5000.0, gain_db, 300.0, 48000)
    sos = np.array([c[:3] + [1.0] + c[3:]])
    f = 5000.0 * np.array([0.999, 1.0, 1.001])
    lv = 20 * np.log10(np.abs(signal.sosfreqz(sos, worN=f, fs=48000)[1]))
    assert lv[1] == pytest.approx(gain_db, abs=1e-9)
    assert np.argmax(np.sign(gain_db) * lv) == 1


def notch(f0, q, fs):
    b, a = signal.iirnotch(f0, q, fs=fs)
    return {"type": "biquad", "rate": fs, "coeffs": [float(b[0]), float(b[1]), float(b[2]),
                                                      float(a[1]), float(a[2])]}


def peak(f0, gain_db, q, fs):
    return {"type": "biquad", "rate": fs, "coeffs": cookbook_peaking(f0, gain_db, q, fs)}


def two_way_with(flt, fs, band=1):
    """The two-way preset (LR4 at 2.4 kHz, 45 Hz - 20 kHz) with a raw biquad in a band."""
    d = json.loads(presets.text("two-way"))
    for b in d["bands"]:          # the whole chain, its EQ dip included (not set aside)
        for f in b["filters"]:
            f.pop("voicing", None)
    d["sample_rate"] = fs
    d["bands"][band]["filters"].append(flt)
    return engine.analyse(project.from_dict(d))


def _true_dev(r):
    a = r.project.analysis
    return refs.max_deviation(r.designs, r.active, r.project.sample_rate, a.f_min, a.f_max)


# 0.05 dB: the accuracy the check promises for max_dev_db against a dense reference.
TOL_DB = 0.05


@pytest.mark.parametrize("fs", RATES)
@pytest.mark.parametrize("q", [30, 100, 300])
def test_raw_notch_deviation_matches_dense_reference(fs, q):
    f0 = [3150.0, BETWEEN[1]][(RATES.index(fs) + q) % 2]
    r = two_way_with(notch(f0, q, fs), fs)
    true, at = _true_dev(r)
    assert r.max_dev_db == pytest.approx(true, abs=TOL_DB)
    assert r.at_hz == pytest.approx(at, rel=1e-4)     # a notch's extreme is sharp
    assert not r.ok                                     # every one is deeper than 1 dB


@pytest.mark.parametrize("fs", RATES)
@pytest.mark.parametrize("q", [30, 100, 300])
def test_raw_peak_deviation_matches_dense_reference(fs, q):
    f0 = BETWEEN[(RATES.index(fs) + q) % 3]
    gain_db = [-6.0, 6.0][(RATES.index(fs) + q) % 2]
    r = two_way_with(peak(f0, gain_db, q, fs), fs)
    true, at = _true_dev(r)
    assert r.max_dev_db == pytest.approx(true, abs=TOL_DB)
    assert r.at_hz == pytest.approx(at, rel=1e-3)


@pytest.mark.parametrize("fs", RATES)
@pytest.mark.parametrize("gain_db", [-2.0, 2.0])
def test_a_narrow_2_db_peak_or_dip_between_grid_points_fails(fs, gain_db):
    f0 = BETWEEN[1 + RATES.index(fs) % 2]
    # Q 300, +/-2 dB at 5.3 or 9.6 kHz in the tweeter: the sum leaves the 1 dB window
    # (dense reference), so the project must fail, though the feature lies between two
    # points of the plain log grid.
    r = two_way_with(peak(f0, gain_db, 300, fs), fs)
    true, _ = _true_dev(r)
    assert abs(true) > 1.0 + TOL_DB
    assert not r.flat_ok and not r.ok
    assert r.max_dev_db == pytest.approx(true, abs=TOL_DB)
    assert any(w.code == "flatness" for w in r.warnings)


@pytest.mark.parametrize("fs", RATES)
def test_a_narrow_boost_shows_in_the_bands_headroom(fs):
    # +6 dB at Q 300 on the woofer's pass band (888 Hz, between grid points): the band's
    # peak, found by exact evaluation, is that of the dense reference: the cookbook's +6 dB
    # at f0 on the LR4 lowpass, 1 / (1 + (f / fc)^4) = -0.16 dB there (Linkwitz 1976).
    r = two_way_with(peak(BETWEEN[0] / 10 ** 0.5, 6.0, 300, fs), fs, band=0)
    assert r.bands[0].peak_gain_db == pytest.approx(refs.band_peak(r.designs[0], fs, 45, 20000),
                                                    abs=TOL_DB)
    assert r.bands[0].peak_gain_db > 5.5
    assert r.check("headroom").state == "warn"


def test_the_grid_is_bounded_whatever_the_number_of_filters():
    # 8 bands, each with 60 narrow raw notches: the grid stays within config.grid_cap.
    fs = 48000
    rng = np.random.default_rng(5)
    bands = []
    for i in range(8):
        flts = [notch(float(f), float(q), fs) for f, q in
                zip(np.exp(rng.uniform(np.log(50), np.log(15000), 60)), rng.uniform(30, 300, 60))]
        bands.append({"name": f"b{i}", "filters": flts})
    d = {"format": "crossplan-project", "version": 1, "name": "many", "sample_rate": fs,
         "analysis": {"points": 1024}, "bands": bands}
    r = engine.analyse(project.from_dict(d))
    assert len(r.freqs_hz) <= config.grid_cap(1024, 8)
    assert np.all(np.diff(r.freqs_hz) > 0)


@pytest.mark.parametrize("name", presets.names())
def test_presets_have_no_narrow_features(name):
    # The presets' filters are wide (Q 2 at most): no feature points; the grid stays bounded.
    p = project.load_preset(name)
    r = engine.analyse(p)
    assert np.array_equal(start_grid(p, r.designs), start_grid(p))
    assert len(r.freqs_hz) <= config.grid_cap(p.analysis.points, len(p.bands))


# -- a sweep -----------------------------------------------------------------------------

@st.composite
def raw_features(draw):
    fs = draw(st.sampled_from(RATES))
    f0 = float(np.exp(draw(st.floats(np.log(200.0), np.log(15000.0)))))
    q = draw(st.floats(30.0, 300.0))
    band = draw(st.integers(0, 1))
    if draw(st.booleans()):
        flt = notch(f0, q, fs)
    else:
        g = draw(st.floats(3.0, 12.0)) * draw(st.sampled_from([-1.0, 1.0]))
        flt = peak(f0, g, q, fs)
    return flt, fs, band


@settings(max_examples=25, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(raw_features())
# Found by the fuzzing: a Q 300 notch at 201 Hz in the woofer against the tweeter's leakage
# there (-86 dB) makes a minimum of the sum about 1e-6 Hz wide, which the reference's
# minimize_scalar alone missed by 0.05 dB (it now zooms in; the check had it right).
@example(case=({"type": "biquad", "rate": 48000,
                "coeffs": [0.9999539405117758, -1.9992137760539983, 0.9999539405117758,
                           -1.9992137760539983, 0.9999078810235515]}, 48000, 0))
def test_sweep_max_deviation_within_0_05_db_of_dense_reference(case):
    flt, fs, band = case
    r = two_way_with(flt, fs, band)
    true, _ = _true_dev(r)
    assert r.max_dev_db == pytest.approx(true, abs=TOL_DB)
    assert r.flat_ok == (abs(true) <= r.project.analysis.flatness_db) or \
        abs(abs(true) - r.project.analysis.flatness_db) < TOL_DB
