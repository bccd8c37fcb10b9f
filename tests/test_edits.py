"""planner.edits: every edit returns a new, checked project; every refusal names its field."""

import numpy as np
import pytest
from scipy import signal

from planner import edits as E, project
from planner import engine
from planner.errors import ProjectError


@pytest.fixture
def p():
    return project.load_preset("two-way")   # woofer [BW2 hp 25, LR4 lp 2400], tweeter [LR4 hp 2400, peak]


# -- bands ---------------------------------------------------------------------------------

def test_add_band_appends_an_empty_named_band(p):
    q = E.add_band(p)
    assert [b.name for b in q.bands] == ["woofer", "tweeter", "band 3"]
    assert q.bands[2].filters == ()
    assert len(p.bands) == 2          # the old project is untouched


def test_add_band_refuses_a_taken_name(p):
    with pytest.raises(ProjectError, match=r"bands\[2\]\.name: 'woofer' is the name of bands\[0\]"):
        E.add_band(p, name="woofer")


def test_remove_band(p):
    q = E.remove_band(p, 0)
    assert [b.name for b in q.bands] == ["tweeter"]


def test_remove_the_only_band_is_refused(p):
    with pytest.raises(ProjectError, match=r"bands: cannot remove the only band"):
        E.remove_band(E.remove_band(p, 0), 0)


def test_remove_a_missing_band_is_refused(p):
    with pytest.raises(ProjectError, match=r"bands: no band 5: the project has bands 0\.\.1"):
        E.remove_band(p, 5)


def test_move_band(p):
    q = E.move_band(p, 1, -1)
    assert [b.name for b in q.bands] == ["tweeter", "woofer"]


def test_move_band_past_the_end_is_refused(p):
    with pytest.raises(ProjectError, match=r"bands: cannot move band 1 by \+1"):
        E.move_band(p, 1, +1)


def test_duplicate_band_copies_the_chain(p):
    q = E.duplicate_band(p, 0)
    assert [b.name for b in q.bands] == ["woofer", "woofer copy", "tweeter"]
    assert q.bands[1].filters == p.bands[0].filters
    r = E.duplicate_band(q, 0)
    assert r.bands[1].name == "woofer copy 2"


def test_set_band_gain_delay_name(p):
    q = E.set_band(p, 1, gain_db=-2.5, delay_ms=0.12, name="dome")
    b = q.bands[1]
    assert (b.gain_db, b.delay_ms, b.name) == (-2.5, 0.12, "dome")


def test_set_band_refuses_negative_delay(p):
    with pytest.raises(ProjectError, match=r"bands\[0\]\.delay_ms: -1 ms must be at least 0 ms"):
        E.set_band(p, 0, delay_ms=-1.0)


def test_set_band_refuses_unknown_setting(p):
    with pytest.raises(ProjectError, match=r"bands\[0\]\.colour: is not a band setting"):
        E.set_band(p, 0, colour="red")


@pytest.mark.parametrize("flag", ["invert", "mute", "solo"])
def test_toggle_band_flips_and_back(p, flag):
    q = E.toggle_band(p, 1, flag)
    assert getattr(q.bands[1], flag) is True
    assert getattr(E.toggle_band(q, 1, flag).bands[1], flag) is False


def test_toggle_band_refuses_unknown_flag(p):
    with pytest.raises(ProjectError, match=r"flag: must be one of invert, mute, solo"):
        E.toggle_band(p, 0, "loud")


def test_solo_changes_which_bands_sum(p):
    assert E.toggle_band(p, 1, "solo").active() == [False, True]


# -- filters -------------------------------------------------------------------------------

def test_add_filter_default_is_a_neutral_peaking_eq(p):
    q = E.add_filter(p, 0)
    f = q.bands[0].filters[-1]
    assert (f.type, f.params["gain_db"]) == ("peaking", 0.0)


def test_add_filter_at_index(p):
    q = E.add_filter(p, 1, {"type": "notch", "freq": 3000, "q": 5}, index=0)
    assert q.bands[1].filters[0].type == "notch"


def test_add_filter_refuses_a_bad_filter(p):
    with pytest.raises(ProjectError, match=r"bands\[1\]\.filters\[2\]\.q: Q must be above 0"):
        E.add_filter(p, 1, {"type": "notch", "freq": 3000, "q": 0})


def test_remove_filter(p):
    q = E.remove_filter(p, 0, 0)
    assert [f.type for f in q.bands[0].filters] == ["lowpass"]


def test_remove_missing_filter_is_refused(p):
    with pytest.raises(ProjectError, match=r"bands\[0\]\.filters: no filter 9"):
        E.remove_filter(p, 0, 9)


def test_move_filter(p):
    q = E.move_filter(p, 0, 0, +1)
    assert [f.type for f in q.bands[0].filters] == ["lowpass", "highpass"]


def test_move_filter_before_the_start_is_refused(p):
    with pytest.raises(ProjectError, match=r"bands\[0\]\.filters: cannot move filter 0 by -1"):
        E.move_filter(p, 0, 0, -1)


def test_duplicate_filter(p):
    q = E.duplicate_filter(p, 1, 1)
    assert q.bands[1].filters[1] == q.bands[1].filters[2] == p.bands[1].filters[1]


def test_toggle_bypass(p):
    q = E.toggle_bypass(p, 1, 1)
    assert q.bands[1].filters[1].bypass
    assert not E.toggle_bypass(q, 1, 1).bands[1].filters[1].bypass


def test_set_filter_params(p):
    q = E.set_filter_params(p, 0, 1, freq=2500.0)
    assert q.bands[0].filters[1].params["freq"] == 2500.0
    assert p.bands[0].filters[1].params["freq"] == 2400.0


def test_set_filter_freq_above_nyquist_is_refused(p):
    with pytest.raises(ProjectError,
                       match=r"bands\[0\]\.filters\[1\]\.freq: 30000 Hz is above Nyquist \(24000 Hz\)"):
        E.set_filter_params(p, 0, 1, freq=30000.0)


def test_set_filter_q_zero_is_refused(p):
    with pytest.raises(ProjectError, match=r"bands\[1\]\.filters\[1\]\.q: Q must be above 0, not 0"):
        E.set_filter_params(p, 1, 1, q=0.0)


def test_set_filter_order_out_of_range_is_refused(p):
    # Linkwitz-Riley orders are even (Linkwitz and Riley 1976: cascaded Butterworth pairs).
    with pytest.raises(ProjectError, match=r"bands\[0\]\.filters\[1\]\.order: 3 is out of range"):
        E.set_filter_params(p, 0, 1, order=3)


def test_set_filter_params_refuses_type_change(p):
    with pytest.raises(ProjectError, match=r"use set_filter_type"):
        E.set_filter_params(p, 0, 1, type="notch")


def test_set_filter_params_none_removes_a_param(p):
    q = E.set_filter_type(p, 1, 1, "high_shelf")
    q = E.set_filter_params(q, 1, 1, q=None, slope=1.0)
    assert "q" not in q.bands[1].filters[1].params
    assert q.bands[1].filters[1].params["slope"] == 1.0


def test_set_filter_type_keeps_freq_and_family(p):
    q = E.set_filter_type(p, 0, 1, "highpass")
    f = q.bands[0].filters[1]
    assert (f.type, f.family, f.params["order"], f.params["freq"]) == \
        ("highpass", "linkwitz-riley", 4, 2400.0)


def test_set_filter_type_to_peaking_fills_gain_and_q(p):
    q = E.set_filter_type(p, 0, 1, "peaking")
    f = q.bands[0].filters[1]
    assert f.family is None
    assert dict(f.params) == {"freq": 2400.0, "gain_db": 0.0, "q": pytest.approx(2 ** -0.5)}


def test_set_filter_type_family_change_drops_bad_order(p):
    q = E.set_filter_params(p, 0, 0, order=3)  # butterworth 3
    q = E.set_filter_type(q, 0, 0, "highpass", "linkwitz-riley")
    assert q.bands[0].filters[0].params["order"] == 4


def test_set_filter_type_unknown_is_refused(p):
    with pytest.raises(ProjectError, match=r"bands\[0\]\.filters\[1\]\.type: unknown filter type 'wobble'"):
        E.set_filter_type(p, 0, 1, "wobble")


def test_set_filter_type_unknown_family_is_refused(p):
    with pytest.raises(ProjectError, match=r"bands\[0\]\.filters\[1\]\.family: unknown lowpass family"):
        E.set_filter_type(p, 0, 1, "lowpass", "chebyshev-x")


# -- analysis and sample rate --------------------------------------------------------------

def test_set_analysis(p):
    q = E.set_analysis(p, points=2048, flatness_db=0.5)
    assert (q.analysis.points, q.analysis.flatness_db) == (2048, 0.5)


def test_set_analysis_enforce_headroom(p):
    q = E.set_analysis(p, enforce_headroom=True)
    assert q.analysis.enforce_headroom is True and p.analysis.enforce_headroom is False


def test_set_analysis_enforce_headroom_refuses_a_non_boolean(p):
    with pytest.raises(ProjectError, match=r"analysis\.enforce_headroom: must be true or false, "
                                           r"not 1"):
        E.set_analysis(p, enforce_headroom=1)


def test_set_analysis_refuses_f_max_below_f_min(p):
    with pytest.raises(ProjectError, match=r"analysis\.f_max: 30 Hz must be above f_min \(45 Hz\)"):
        E.set_analysis(p, f_max=30.0)


def test_set_analysis_refuses_unknown_setting(p):
    with pytest.raises(ProjectError, match=r"analysis\.speed: is not an analysis setting"):
        E.set_analysis(p, speed=2)


def test_set_sample_rate_redesigns_at_the_new_rate(p):
    q = E.set_sample_rate(p, 96000)
    assert q.sample_rate == 96000
    # LR4 = two cascaded 2nd-order Butterworth (Linkwitz and Riley 1976); reference: scipy.signal.butter
    lr4 = engine.design_filter(q.bands[0].filters[1], 96000).sos
    bw2 = signal.butter(2, 2400, "low", fs=96000, output="sos")
    f = np.geomspace(100, 20000, 64)
    h = signal.sosfreqz(lr4, worN=f, fs=96000)[1]
    ref = signal.sosfreqz(np.vstack([bw2, bw2]), worN=f, fs=96000)[1]
    np.testing.assert_allclose(h, ref, rtol=1e-9, atol=1e-12)  # same maths, float rounding only


def test_set_sample_rate_lowers_f_max(p):
    q = E.set_sample_rate(p, 32000)
    assert q.analysis.f_max == 16000.0


def test_set_sample_rate_refuses_and_names_filters_above_nyquist(p):
    with pytest.raises(ProjectError, match=r"sample_rate: 8000 Hz puts 1 filter\(s\) at or above its "
                       r"Nyquist frequency \(4000 Hz\): bands\[1\]\.filters\[1\]\.freq \(tweeter,"):
        E.set_sample_rate(p, 8000)


def test_set_sample_rate_refuses_a_silly_rate(p):
    with pytest.raises(ProjectError, match=r"sample_rate: .* must be at least 1000 Hz"):
        E.set_sample_rate(p, 500)


def test_nyquist_problems_lists_every_offender(p):
    bad = E.nyquist_problems(p, 4000)
    assert [b.split(" ")[0] for b in bad] == [
        "bands[0].filters[1].freq", "bands[1].filters[0].freq", "bands[1].filters[1].freq"]


@pytest.mark.parametrize("type_", ["lowpass", "highpass", "bandpass", "split"])
def test_a_filter_made_fir_designs_at_once(type_):
    # The starting FIR of the form (Kaiser window sized by Kaiser 1974 for 60 dB, or a
    # 1023-tap split band) must check and design, not ask for fields first.
    from planner import engine

    p = project.load_preset("two-way")
    q = E.set_filter_type(p, 0, 1, type_, "fir")
    f = q.bands[0].filters[1]
    assert (f.type, f.family) == (type_, "fir")
    assert engine.analyse(q).bands[0].fir_taps > 0


def test_changing_an_fir_method_drops_the_fields_it_refuses():
    # window -> remez: the Kaiser start (window, transition_hz, atten_db) becomes a remez
    # spec over the same transition; back to window drops the remez-only ripple.
    p = E.set_filter_type(project.load_preset("two-way"), 0, 1, "lowpass", "fir")
    q = E.set_filter_params(p, 0, 1, method="remez")
    f = q.bands[0].filters[1]
    assert f.params["method"] == "remez" and "window" not in f.params
    assert f.params["transition_hz"] == 1200.0
    q = E.set_filter_params(q, 0, 1, ripple_db=0.5)
    f = E.set_filter_params(q, 0, 1, method="window").bands[0].filters[1]
    assert "ripple_db" not in f.params and f.params["atten_db"] == 60.0


def test_a_split_crossover_changes_in_every_band_of_the_split():
    # The bands of a complementary split sum to a delay only while they share one design
    # (Oppenheim and Schafer 3rd ed. ch. 7): an edit in one band applies to all of them.
    import numpy as np

    p = project.load_preset("fir-three-way")
    q = E.set_filter_params(p, 1, 0, crossovers=[250.0, 3000.0])
    assert [b.filters[0].params["crossovers"] for b in q.bands] == [(250.0, 3000.0)] * 3
    assert [b.filters[0].params["band"] for b in q.bands] == [0, 1, 2]
    r = engine.analyse(q)
    assert abs(r.max_dev_db) < 1e-9 and not [w for w in r.warnings if "split" in w.code]
    assert np.allclose([c.freq_hz for c in r.checked_crossings], [250.0, 3000.0], rtol=0.02)


def test_a_split_band_index_changes_in_that_band_only():
    p = project.load_preset("fir-three-way")
    q = E.set_filter_params(p, 2, 0, band=1)
    assert [b.filters[0].params["band"] for b in q.bands] == [0, 1, 1]
    assert any(w.code == "split-doubled" for w in engine.analyse(q).warnings)


# -- project name ----------------------------------------------------------------------------

def test_set_name_renames_and_strips(p):
    q = E.set_name(p, "  Porch, 2-way ")
    assert q.name == "Porch, 2-way" and p.name != q.name
    assert project.to_dict(q)["name"] == "Porch, 2-way"


@pytest.mark.parametrize("bad", ["", "   "])
def test_set_name_refuses_an_empty_name(p, bad):
    with pytest.raises(ProjectError, match="name: must not be empty"):
        E.set_name(p, bad)


def test_the_exports_are_named_after_the_new_name(p, tmp_path):
    from planner import export
    res = export.write_export(E.set_name(p, "Porch monitor"), [48000], "json", tmp_path)
    assert [f.name for f in res.files] == ["porch-monitor-48000.json"]
    assert res.manifest.name == "porch-monitor-manifest.json"


# -- drivers ---------------------------------------------------------------------------------

def test_set_driver_source_gives_a_model_with_a_plain_start(p):
    q = E.set_driver_source(p, 1, model="tweeter")
    assert q.bands[1].driver.model == "tweeter" and q.bands[1].driver.params["fc"] == 1000.0
    assert p.bands[1].driver is None


def test_set_driver_changes_the_offset_in_mm(p):
    q = E.set_driver(E.set_driver_source(p, 1, model="tweeter"), 1, offset_mm=12.5)
    assert q.bands[1].driver.offset_mm == 12.5
    assert project.to_dict(q)["bands"][1]["driver"]["offset_mm"] == 12.5


def test_set_driver_is_checked_as_the_file_is(p):
    q = E.set_driver_source(p, 1, model="tweeter")
    with pytest.raises(ProjectError, match=r"bands\[1\]\.driver\.fc: 0 Hz must be above 0 Hz"):
        E.set_driver(q, 1, fc=0)


def test_set_driver_source_refuses_a_missing_file(p):
    with pytest.raises(ProjectError, match=r"bands\[1\]\.driver\.file: nope\.txt: no such file"):
        E.set_driver_source(p, 1, file="nope.txt")


def test_set_driver_needs_a_driver_first(p):
    with pytest.raises(ProjectError, match="the band has no driver"):
        E.set_driver(p, 1, offset_mm=3.0)


def test_set_driver_source_none_removes_the_driver_keeping_nothing_else(p):
    q = E.set_driver_source(E.set_driver_source(p, 1, model="tweeter"), 1)
    assert q.bands[1].driver is None and "driver" not in project.to_dict(q)["bands"][1]
