"""Crossings beside sharp features, against an independent root search.

Reference: each band rebuilt from its designed sections and evaluated by
scipy.signal.sosfreqz, crossings bracketed by a dense scan and refined by
scipy.optimize.brentq (tests/refs.py); Audio EQ Cookbook (W3C note) notches, peaks and
shelves; Linkwitz and Riley 1976 crossovers.
"""

import json

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from planner import config, engine, presets, project
from planner.dsp import analysis as an
from tests import refs


def two_way_with(*tweeter_extra, fs=48000, phase_deg=None, woofer_extra=()):
    """The two-way preset (LR4 at 2.4 kHz) with filters added to the tweeter (and woofer)."""
    d = json.loads(presets.text("two-way"))
    for b in d["bands"]:          # the whole chain, its EQ dip included (not set aside)
        for f in b["filters"]:
            f.pop("voicing", None)
    d["sample_rate"] = fs
    d["bands"][0]["filters"] += list(woofer_extra)
    d["bands"][1]["filters"] += list(tweeter_extra)
    if phase_deg is not None:
        d["analysis"]["phase_deg"] = phase_deg
    return project.from_dict(d)


def _reference(r, i=0, j=1):
    a = r.project.analysis
    return refs.crossings(r.designs[i], r.designs[j], r.project.sample_rate, a.f_min, a.f_max)


@pytest.mark.parametrize("fs", [44100, 48000, 96000, 192000])
@pytest.mark.parametrize("q", [10, 30, 100])
@pytest.mark.parametrize("f_notch", [2600.0, 3000.0, 4000.0, 5000.0])
def test_crossings_beside_a_notch_match_brentq(fs, q, f_notch):
    r = engine.analyse(two_way_with({"type": "notch", "freq": f_notch, "q": q}, fs=fs))
    ref = _reference(r)
    got = [c for c in r.crossings if c.band_index == (0, 1)]
    assert len(got) == len(ref)
    for c, (f, ph, lv) in zip(got, ref):
        # brentq with xtol 1e-14 in log f: the two roots of one function agree to ~1e-9.
        assert c.freq_hz == pytest.approx(f, rel=1e-7)
        assert c.phase_diff_deg == pytest.approx(ph, abs=0.01)     # deg
        assert c.level_db == pytest.approx(lv, abs=1e-4)           # dB
        if c.checked:
            assert c.ok == (abs(ph) <= r.project.analysis.phase_deg)


@pytest.mark.parametrize("q, limit_deg", [(100, 60.0), (30, 80.0)])
def test_a_crossing_beyond_the_limit_beside_a_notch_fails(q, limit_deg):
    # Beside a notch at 4 kHz the tweeter's phase turns fast: the bands cross near 3.99 kHz
    # about 85 deg apart (brentq reference), beyond the limit.
    r = engine.analyse(two_way_with({"type": "notch", "freq": 4000.0, "q": q},
                                    phase_deg=limit_deg))
    ref = [t for t in _reference(r) if t[2] >= r.project.analysis.crossing_floor_db]
    bad = [t for t in ref if abs(t[1]) > limit_deg]
    assert bad, "the reference has a crossing beyond the limit"
    for f, ph, _ in bad:
        c = min(r.checked_crossings, key=lambda c: abs(np.log(c.freq_hz / f)))
        assert c.freq_hz == pytest.approx(f, rel=1e-7)
        assert not c.ok
    assert not r.phase_ok and not r.ok


def test_reported_crossings_have_the_bands_level_beside_a_q100_notch():
    r = engine.analyse(two_way_with({"type": "notch", "freq": 3500.0, "q": 100}))
    assert len(r.crossings) == 3
    for c in r.crossings:
        i, j = c.band_index
        g = refs.level_difference_db(r.designs[i], r.designs[j], c.freq_hz, 48000)[0]
        assert abs(g) <= config.CROSSING_LEVEL_TOL_DB


def test_each_crossing_is_refined_on_its_own_two_bands_only():
    # A 4-band project: every call of the evaluator asks only for the pairs being refined.
    p = project.load_preset("three-way")
    r0 = engine.analyse(p)
    pairs = {c.band_index for c in r0.crossings}
    seen = []
    point = engine.point_evaluator(r0.designs, p.sample_rate)

    def spy(bands, freqs):
        bands = np.asarray(bands)
        half = len(bands) // 2
        seen.append(set(zip(bands[:half].tolist(), bands[half:].tolist())))
        return point(bands, freqs)

    cs = an.find_crossings(r0.freqs_hz, r0.responses.h, evaluate=spy)
    assert seen and all(s <= pairs for s in seen)
    assert [(c.a, c.b) for c in cs] == [c.band_index for c in r0.crossings]


def test_a_touch_at_a_grid_point_is_one_crossing():
    # Two rows equal at one grid point and apart on both sides cross there exactly once.
    f = np.array([100.0, 200.0, 400.0])
    h = np.array([[1.0, 0.5, 0.25], [0.25, 0.5, 1.0]], complex)
    cs = an.find_crossings(f, h, evaluate=an.per_point(
        lambda x: np.vstack([100 / x, x / 400]).astype(complex)))
    assert [c.freq_hz for c in cs] == [pytest.approx(200.0)]


# -- the invariant over random projects ---------------------------------------------------

_RATES = [44100, 48000, 88200, 96000, 176400, 192000]


@st.composite
def crossover_projects(draw):
    fs = draw(st.sampled_from(_RATES))
    fc = draw(st.floats(150.0, 5000.0))
    family = draw(st.sampled_from(["butterworth", "linkwitz-riley", "bessel", "cookbook",
                                   "fir"]))
    if family == "butterworth":
        spec = {"order": draw(st.integers(1, 8))}
    elif family == "linkwitz-riley":
        spec = {"order": draw(st.sampled_from([2, 4, 6, 8]))}
    elif family == "bessel":
        spec = {"order": draw(st.integers(1, 8)),
                "norm": draw(st.sampled_from(["phase", "delay", "mag"]))}
    elif family == "cookbook":
        spec = {"q": draw(st.floats(0.5, 1.5))}
    else:
        spec = {"taps": draw(st.sampled_from([63, 127, 255])),
                "window": draw(st.sampled_from(["hann", "hamming", "blackman"]))}

    def xo(kind):
        return {"type": kind, "family": family, "freq": fc, **spec}

    def feature():
        kind = draw(st.sampled_from(["notch", "notch", "peaking", "low_shelf", "high_shelf"]))
        f = fc * draw(st.floats(0.8, 4.0))
        if kind == "notch":
            return {"type": "notch", "freq": min(f, 0.45 * fs), "q": draw(st.floats(10, 100))}
        g = draw(st.floats(-12.0, 12.0))
        if kind == "peaking":
            return {"type": "peaking", "freq": min(f, 0.45 * fs), "gain_db": g,
                    "q": draw(st.floats(0.5, 20.0))}
        return {"type": kind, "freq": min(f, 0.45 * fs), "gain_db": g,
                "q": draw(st.floats(0.5, 1.0))}

    woofer = [xo("lowpass")] + [feature() for _ in range(draw(st.integers(0, 1)))]
    tweeter = [xo("highpass")] + [feature() for _ in range(draw(st.integers(1, 3)))]
    bands = [{"name": "woofer", "filters": woofer, "gain_db": draw(st.floats(-3, 3)),
              "delay_ms": draw(st.sampled_from([0.0, 0.05, 0.21]))},
             {"name": "tweeter", "filters": tweeter, "invert": draw(st.booleans()),
              "gain_db": draw(st.floats(-6, 3))}]
    if draw(st.booleans()):
        # a third band: a subwoofer a few octaves down, crossing both others
        bands.insert(0, {"name": "sub", "filters": [
            {"type": "lowpass", "family": "linkwitz-riley", "order": 4,
             "freq": max(25.0, fc / draw(st.floats(2.0, 8.0)))}]})
    return {"format": "crossplan-project", "version": 1, "name": "random", "sample_rate": fs,
            "analysis": {"f_min": 20, "f_max": 20000, "points": draw(st.sampled_from(
                [256, 1024]))}, "bands": bands}


@settings(max_examples=200, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(crossover_projects())
def test_every_reported_crossing_has_both_bands_within_0_01_db(d):
    r = engine.analyse(project.from_dict(d))
    fs = r.project.sample_rate
    for c in r.crossings:
        i, j = c.band_index
        g = refs.level_difference_db(r.designs[i], r.designs[j], c.freq_hz, fs)[0]
        assert abs(g) <= config.CROSSING_LEVEL_TOL_DB, (c, g)


def test_bands_with_a_zero_at_one_frequency_cross_only_where_their_levels_meet():
    # Both bands notched at 150 Hz (cookbook notches, Q 10 and 11) on a first-order
    # Butterworth pair crossing there: at 150 Hz both are zero and their difference is
    # rounding noise, a jump and not a crossing. The crossings are those of brentq.
    d = {"format": "crossplan-project", "version": 1, "name": "twin notches",
         "sample_rate": 44100, "analysis": {"f_min": 20, "f_max": 20000, "points": 256},
         "bands": [{"name": "woofer", "filters": [
             {"type": "lowpass", "family": "butterworth", "freq": 150.0, "order": 1},
             {"type": "notch", "freq": 150.0, "q": 10.0}]},
             {"name": "tweeter", "filters": [
                 {"type": "highpass", "family": "butterworth", "freq": 150.0, "order": 1},
                 {"type": "notch", "freq": 150.0, "q": 11.0}]}]}
    r = engine.analyse(project.from_dict(d))
    ref = _reference(r)
    assert len(r.crossings) == len(ref)
    for c, (f, ph, _) in zip(r.crossings, ref):
        assert c.freq_hz == pytest.approx(f, rel=1e-7)
        assert c.phase_diff_deg == pytest.approx(ph, abs=0.01)


def test_deep_stop_band_crossings_of_an_fir_split_are_level_too():
    # The fir-three-way preset (1023-tap Blackman split): its bands' stop-band lobes cross
    # down to about -200 dB, where float64 rounding limits how level they can be found; every
    # crossing still has its bands within 0.01 dB (scipy.signal.freqz of the taps).
    r = engine.analyse(project.load_preset("fir-three-way"))
    deep = [c for c in r.crossings if c.level_db < -150]
    assert deep
    for c in r.crossings:
        i, j = c.band_index
        g = refs.level_difference_db(r.designs[i], r.designs[j], c.freq_hz, 48000)[0]
        assert abs(g) <= config.CROSSING_LEVEL_TOL_DB
