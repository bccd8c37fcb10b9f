"""planner.tui.views: what the editor shows, checked against published crossover facts."""

import pytest

from planner import edits, engine, project
from planner.tui import views


def lr4_pair(invert=False, fc=2000.0):
    return project.from_dict({
        "format": "crossplan-project", "version": 1, "name": "lr4", "sample_rate": 48000,
        "analysis": {"f_min": 20, "f_max": 20000, "points": 512},
        "bands": [
            {"name": "low", "filters": [{"type": "lowpass", "family": "linkwitz-riley",
                                          "order": 4, "freq": fc}]},
            {"name": "high", "invert": invert,
             "filters": [{"type": "highpass", "family": "linkwitz-riley", "order": 4,
                          "freq": fc}]}]})


def test_readout_at_the_crossover_reads_minus_6_db_per_band_and_flat_sum():
    # Linkwitz and Riley 1976: each LR4 output is -6.02 dB at the cut-off and the sum is flat.
    r = engine.analyse(lr4_pair())
    d = views.plot_data(r, "magnitude", 0, 2000.0)
    assert d.cursor_hz == 2000.0
    assert views.readout(d) == "at 2 kHz dB: low -6.0 high -6.0 sum +0.0"


def test_phase_difference_view_is_zero_for_lr4_in_phase():
    # Linkwitz and Riley 1976: LR4 low and high outputs are in phase at every frequency.
    r = engine.analyse(lr4_pair())
    d = views.plot_data(r, "phase difference", 0, 2000.0)
    (s,) = d.series
    assert s.x.min() == pytest.approx(500.0, rel=0.02) and s.x.max() == pytest.approx(8000.0,
                                                                                      rel=0.02)
    assert abs(s.y).max() < 1e-6   # degrees; float rounding only


def test_level_difference_view_crosses_zero_at_the_crossover():
    r = engine.analyse(lr4_pair())
    d = views.plot_data(r, "level difference", 1, 2000.0)
    assert views.readout(d) == "at 2 kHz dB: low - high level +0.0"


def test_check_lines_read_fail_as_text_for_inverted_lr4():
    # Linkwitz and Riley 1976: LR4 with one output inverted cancels at the crossover (deep null).
    r = engine.analyse(lr4_pair(invert=True))
    s, x, h = views.check_lines(r)
    assert s.startswith("sum       FAIL")
    assert x.startswith("crossing  FAIL") and "low/high" in x
    assert h.startswith("headroom  ok")


def test_check_lines_when_all_muted():
    p = lr4_pair()
    p = edits.toggle_band(edits.toggle_band(p, 0, "mute"), 1, "mute")
    s, x, _ = views.check_lines(engine.analyse(p))
    assert s == "sum       FAIL every band is muted"


def test_crossing_pair_prefers_the_selected_bands_crossing():
    r = engine.analyse(project.load_preset("three-way"))
    a, b, fc = views.crossing_pair(r, 2)
    assert (a, b) == (1, 2) and fc == pytest.approx(3000.0, rel=0.01)


def test_unknown_view_is_refused():
    r = engine.analyse(lr4_pair())
    with pytest.raises(ValueError, match=r"view must be one of magnitude"):
        views.plot_data(r, "waterfall", 0, 1000.0)


def test_warning_items_point_at_band_and_filter():
    p = edits.set_filter_params(project.load_preset("two-way"), 1, 1, gain_db=8.0)
    items = views.warning_items(engine.analyse(p))
    boost = [w for w in items if "boost" in w.text]
    assert boost and (boost[0].band, boost[0].filter) == (1, 1)


def test_arith_line_ok_reads_worst_deviation_and_internal_peak():
    from planner import export

    p = project.load_preset("two-way")
    rx = export.export_rate(p, p.sample_rate, "float32")
    line = views.arith_line(rx)
    assert line.startswith("arith     ok   float32: max dev ")
    assert len(line) <= 78  # fits the check bar at 80 columns
    assert views.arith_warning_items(rx) == []  # float32 has the range for any internal peak


def test_impulse_view_series_equal_sosfilt_of_a_unit_impulse():
    # scipy.signal.sosfilt as reference: each band's series is its chain's impulse response.
    import numpy as np
    from scipy import signal

    r = engine.analyse(lr4_pair())
    d = views.plot_data(r, "impulse", 0, 2000.0, views.impulse_of(r))
    assert d.time and [s.label for s in d.series] == ["low", "high", "sum"]
    low = d.series[0]
    x = np.zeros(len(low.y))
    x[0] = 1.0
    ref = signal.sosfilt(r.designs[0].sos, x)
    assert np.max(np.abs(low.y - ref)) < 1e-12   # float rounding of two cascades
    assert low.x[1] - low.x[0] == pytest.approx(1000.0 / 48000)   # ms per sample


def test_step_view_of_lr4_sum_settles_at_one():
    # Linkwitz and Riley 1976: the LR4 sum is an all-pass, unity at DC, so its step
    # response settles at 1; the lowpass band alone also settles at 1 (its DC gain).
    r = engine.analyse(lr4_pair())
    d = views.plot_data(r, "step", 0, 2000.0, views.impulse_of(r))
    low, high, total = d.series
    assert low.y[-1] == pytest.approx(1.0, abs=1e-3) and total.y[-1] == pytest.approx(1.0,
                                                                                     abs=1e-3)
    assert abs(high.y[-1]) < 1e-3   # a highpass passes no DC


def test_time_view_readout_names_each_peak():
    r = engine.analyse(lr4_pair())
    d = views.plot_data(r, "impulse", 0, 2000.0, views.impulse_of(r))
    text = views.readout(d)
    assert text.startswith("peak ms/value: low ") and " sum " in text


def test_time_view_without_impulse_raises():
    r = engine.analyse(lr4_pair())
    with pytest.raises(ValueError, match="needs the impulse responses"):
        views.plot_data(r, "step", 0, 2000.0)


def _raised_two_way(db, enforce=False):
    # Linkwitz-Riley and Butterworth bands never exceed 0 dB (Linkwitz and Riley 1976), so each
    # band peaks at its gain.
    p = project.load_preset("two-way")
    for i in range(len(p.bands)):
        p = edits.set_band(p, i, gain_db=db)
    return edits.set_analysis(p, enforce_headroom=enforce)


def test_check_bar_headroom_over_limit_reads_warn():
    s, x, h = views.check_lines(engine.analyse(_raised_two_way(0.2)))
    assert h == "headroom  warn peak dB: woofer +0.2, tweeter +0.2"
    assert "FAIL" not in s + x + h


def test_check_bar_headroom_enforced_reads_fail():
    _, _, h = views.check_lines(engine.analyse(_raised_two_way(0.2, enforce=True)))
    assert h.startswith("headroom  FAIL peak dB: woofer +0.2")


def test_check_bar_follows_the_configured_limit(monkeypatch):
    from planner import config

    monkeypatch.setattr(config, "HEADROOM_LIMIT_DB", 0.5)
    _, _, h = views.check_lines(engine.analyse(_raised_two_way(0.2, enforce=True)))
    assert h.startswith("headroom  ok   peak dB:")
