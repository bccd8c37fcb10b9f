"""Project-level checks: sums, crossings, floor, headroom, warnings, mute and solo."""

import numpy as np
import pytest

from planner import engine, project
from planner.presets import names as preset_names, text as preset_text
from planner.project import load_preset
from tests.conftest import two_way


def analyse(d):
    return engine.analyse(project.from_dict(d))


def test_lr4_pair_passes_flat_and_in_phase():
    # Linkwitz 1976: LR4 sums to an all-pass: flat, in phase at the crossover.
    r = analyse(two_way(4))
    assert r.ok
    assert abs(r.max_dev_db) < 1e-6
    [c] = r.checked_crossings
    assert c.bands == ("low", "high")
    assert c.freq_hz == pytest.approx(2000, rel=1e-6)
    assert c.phase_diff_deg == pytest.approx(0, abs=1e-3)
    assert c.level_db == pytest.approx(-6.02, abs=0.01)


def test_lr2_not_inverted_fails_with_hint():
    # Linkwitz 1976: LR2 outputs are 180 deg apart; the sum nulls at fc.
    r = analyse(two_way(2))
    assert not r.ok and not r.flat_ok and not r.phase_ok
    assert abs(r.checked_crossings[0].phase_diff_deg) == pytest.approx(180, abs=1e-3)
    assert any("180 deg apart at 2 kHz: invert high: that brings them to 0.0 deg apart, checked"
               in w.text for w in r.warnings)


def test_lr2_inverted_passes():
    r = analyse(two_way(2, invert=True))
    assert r.ok
    assert abs(r.max_dev_db) < 1e-6


def test_butterworth3_sums_flat_but_fails_phase():
    # Odd-order Butterworth: flat magnitude, outputs 90 deg apart (Linkwitz 1976).
    r = analyse(two_way(3, family="butterworth"))
    assert r.flat_ok and not r.phase_ok
    assert abs(r.checked_crossings[0].phase_diff_deg) == pytest.approx(90, abs=1e-3)
    assert any("90 deg apart" in w.text for w in r.warnings)


def test_crossing_below_floor_is_information_only():
    # Woofer (LR4 at 300 Hz) meets the tweeter (LR4 at 4 kHz) far down: listed, never failing.
    d = two_way(4, fc=300)
    d["bands"].append({"name": "top", "filters": [
        {"type": "highpass", "family": "linkwitz-riley", "order": 4, "freq": 4000}]})
    d["bands"][1]["filters"].append({"type": "lowpass", "family": "linkwitz-riley",
                                     "order": 4, "freq": 4000})
    r = analyse(d)
    low_top = [c for c in r.crossings if c.bands == ("low", "top")]
    assert low_top and all(not c.checked and c.ok for c in low_top)
    assert low_top[0].level_db < -20
    assert all(c.bands != ("low", "top") for c in r.checked_crossings)


def test_floor_setting_moves_the_line():
    d = two_way(4)
    d["analysis"]["crossing_floor_db"] = -3.0  # the -6 dB crossing is now below the floor
    r = analyse(d)
    assert r.checked_crossings == [] and r.crossings[0].checked is False


def test_muted_band_left_out_of_sum():
    d = two_way(4)
    d["bands"][1]["mute"] = True
    r = analyse(d)
    np.testing.assert_allclose(r.sum_h, r.responses.h[0])
    assert r.crossings == []
    assert not r.flat_ok  # the lowpass alone is not flat


def test_solo_sums_only_soloed():
    d = two_way(4)
    d["bands"][0]["solo"] = True
    r = analyse(d)
    assert r.active == [True, False]


def test_all_muted_fails_plainly():
    d = two_way(4)
    for b in d["bands"]:
        b["mute"] = True
    r = analyse(d)
    assert not r.ok
    assert r.warnings[0].text == "every band is muted: nothing is summed"


def test_headroom_and_boost_warning():
    d = two_way(4)
    d["bands"][0]["filters"].append({"type": "peaking", "freq": 100, "gain_db": 9.0, "q": 2})
    r = analyse(d)
    assert r.bands[0].peak_gain_db == pytest.approx(9.0, abs=0.05)  # cookbook: gain at f0
    codes = {w.code for w in r.warnings}
    assert {"headroom", "boost"} <= codes
    boost = next(w for w in r.warnings if w.code == "boost")
    assert (boost.band, boost.filter) == (0, 1)


def test_shallow_tweeter_highpass_warns():
    d = two_way(1, family="butterworth", fc=3000)
    r = analyse(d)
    assert any(w.code == "shallow-highpass" and w.band == 1 for w in r.warnings)


def test_band_delay_shifts_crossing_phase():
    # A delay of d ms turns the phase at f by -360 f d / 1000 deg (pure delay).
    d = two_way(4)
    d["bands"][1]["delay_ms"] = 0.05
    r = analyse(d)
    c = r.checked_crossings[0]
    # the crossing itself stays at 2 kHz (magnitudes unchanged)
    assert c.freq_hz == pytest.approx(2000, rel=1e-6)
    assert c.phase_diff_deg == pytest.approx(360 * 2000 * 0.05e-3, abs=1e-3)


def test_group_delay_of_lr4_sum_is_positive_and_finite():
    r = analyse(two_way(4))
    gd = r.sum_group_delay_ms()
    assert np.all(np.isfinite(gd)) and gd.min() > 0


def test_json_shape(example):
    r = engine.analyse(project.from_dict(example))
    d = r.to_dict()
    assert set(d) >= {"ok", "sample_rate", "sum", "crossovers", "bands", "warnings"}
    assert set(d["sum"]) >= {"max_dev_db", "at_hz"}
    assert set(d["crossovers"][0]) >= {"bands", "freq_hz", "phase_diff_deg", "level_db", "ok"}
    assert d["crossovers"][0]["bands"] == ["woofer", "tweeter"]
    assert set(d["bands"][0]) >= {"name", "peak_gain_db"}


def test_design_cache_returns_read_only_arrays(example):
    p = project.from_dict(example)
    d = engine.design_filter(p.bands[0].filters[0], 48000)
    assert engine.design_filter(p.bands[0].filters[0], 48000) is d
    with pytest.raises(ValueError):
        d.sos[0, 0] = 1.0


@pytest.mark.parametrize("name", preset_names())
def test_every_preset_loads_and_passes(name):
    r = engine.analyse(load_preset(name))
    assert r.ok, [w.text for w in r.warnings]


# -- headroom: a warning by default, a check when analysis.enforce_headroom is set ----------

def _both_bands_up(db, enforce=None):
    """The two-way preset with both bands raised by ``db`` dB.

    Its bands are Linkwitz-Riley and Butterworth filters (never above 0 dB: Butterworth 1930,
    Linkwitz 1976) and a -0.8 dB dip, so each band's peak gain is its band gain.
    """
    import json

    d = json.loads(preset_text("two-way"))
    for b in d["bands"]:
        b["gain_db"] = db
    if enforce is not None:
        d["analysis"]["enforce_headroom"] = enforce
    return d


def test_headroom_above_limit_warns_and_the_result_stays_ok():
    r = analyse(_both_bands_up(0.2))
    h = r.check("headroom")
    assert (h.state, h.enforced, h.text) == ("warn", False, "warn")
    assert [r.bands[i].name for i in h.figures["over"]] == ["woofer", "tweeter"]
    assert r.ok and not r.headroom_ok
    assert r.bands[0].peak_gain_db == pytest.approx(0.2, abs=0.01)   # the band gain (see above)
    assert any(w.code == "headroom" for w in r.warnings)


def test_headroom_enforced_fails_the_result():
    r = analyse(_both_bands_up(0.2, enforce=True))
    h = r.check("headroom")
    assert (h.state, h.enforced, h.text) == ("fail", True, "FAIL")
    assert not r.ok
    assert r.flat_ok and r.phase_ok        # only headroom fails


def test_headroom_at_or_below_limit_is_ok_even_when_enforced():
    # 0.04 dB is under the 0.05 dB limit of planner.config (common practice, no published source).
    r = analyse(_both_bands_up(0.04, enforce=True))
    assert r.check("headroom").state == "ok" and r.ok
    assert not any(w.code == "headroom" for w in r.warnings)


def test_checks_are_one_list_in_order_and_ok_reads_it():
    r = analyse(two_way(2))       # LR2 not inverted: sum and crossing fail (Linkwitz 1976)
    assert [c.name for c in r.checks] == ["sum", "crossings", "headroom"]
    assert [c.state for c in r.checks] == ["fail", "fail", "ok"]
    assert all(c.enforced for c in r.checks[:2])
    assert not r.ok


def test_check_state_must_be_known():
    with pytest.raises(ValueError, match=r"state must be one of ok, warn, fail, not 'bad'"):
        engine.CheckResult("sum", "bad", True, {})


def test_json_headroom_object_and_checks():
    d = analyse(_both_bands_up(0.2)).to_dict()
    assert d["ok"] is True
    h = d["headroom"]
    assert h["ok"] is False and h["enforced"] is False and h["state"] == "warn"
    assert h["limit_db"] == 0.05
    assert h["worst"]["band"] in ("woofer", "tweeter")
    assert h["worst"]["peak_gain_db"] == pytest.approx(0.2, abs=0.01)
    assert h["over"] == ["woofer", "tweeter"]
    assert d["checks"] == [{"name": "sum", "state": "ok", "enforced": True},
                           {"name": "crossings", "state": "ok", "enforced": True},
                           {"name": "headroom", "state": "warn", "enforced": False}]
    e = analyse(_both_bands_up(0.2, enforce=True)).to_dict()
    assert e["ok"] is False and e["headroom"]["enforced"] is True


def test_json_keeps_every_existing_key(example):
    # The JSON of check --json is a contract: keys are added, never removed or renamed.
    d = engine.analyse(project.from_dict(example)).to_dict()
    assert set(d) >= {"ok", "name", "sample_rate", "sum", "crossovers", "crossings_below_floor",
                      "phase_limit_deg", "crossing_floor_db", "bands", "warnings"}
    assert set(d["sum"]) >= {"max_dev_db", "at_hz", "ripple_db", "limit_db", "ok",
                             "group_delay_ms", "latency_samples", "latency_ms",
                             "latencies_agree"}


def test_headroom_limit_lives_in_config_only(monkeypatch):
    # One rule, read by the engine alone: moving it moves the verdict, the JSON and the warning.
    from planner import config

    monkeypatch.setattr(config, "HEADROOM_LIMIT_DB", 0.5)
    r = analyse(_both_bands_up(0.2, enforce=True))
    assert r.check("headroom").state == "ok" and r.ok
    assert r.to_dict()["headroom"]["limit_db"] == 0.5
    assert not any(w.code == "headroom" for w in r.warnings)


@pytest.mark.parametrize("name", ["two-way", "fir-three-way"])
def test_group_delay_in_the_same_pass_matches_scipy(name):
    # analyse(group_delay=True) evaluates the derivative with the responses; each band's
    # group delay is checked against scipy.signal.group_delay of its own sections or taps
    # (reference library), away from the bands' deep stop bands where both are rounding.
    from scipy import signal

    r = engine.analyse(load_preset(name), group_delay=True)
    fs = r.project.sample_rate
    gd = r.responses.group_delay_samples()
    for k, d in enumerate(r.designs):
        level = 20 * np.log10(np.abs(r.responses.h[k]))
        f = r.freqs_hz[level > level.max() - 40]
        if d.fir is not None:
            ref = signal.group_delay((d.fir, [1.0]), w=f, fs=fs)[1]
        else:
            ref = sum(signal.group_delay((s[:3], s[3:]), w=f, fs=fs)[1] for s in d.sos)
        ref = ref + d.delay_samples
        got = gd[k][np.isin(r.freqs_hz, f)]
        # 1e-5 relative (and 1e-6 samples): scipy's polynomial formula loses digits where
        # poles sit near z = 1 (the subsonic highpass: 2e-6 relative measured at 20 Hz).
        np.testing.assert_allclose(got, ref, rtol=1e-5, atol=1e-6)


def test_group_delay_in_the_same_pass_changes_no_figure():
    # The same grid, responses and report whichever pass evaluates the derivative.
    p = load_preset("two-way")
    a, b = engine.analyse(p), engine.analyse(p, group_delay=True)
    np.testing.assert_array_equal(a.freqs_hz, b.freqs_hz)
    np.testing.assert_array_equal(a.responses.h, b.responses.h)
    assert a.to_dict() == b.to_dict()
