"""Crossover points (planner.crossovers): the filters on both sides found and moved as one."""

import json

import pytest

from planner import crossovers, edits, engine, project
from planner import project as pj
from planner.crossovers import crossover_points, move_crossover
from planner.errors import ProjectError


def test_the_three_way_has_two_points_the_upper_with_its_all_pass():
    p = pj.load_preset("three-way")
    pts = crossover_points(p)
    assert [x.freq_hz for x in pts] == [350, 3000]
    roles = sorted((m.band, m.role) for m in pts[1].members)
    assert roles == [(0, "allpass"), (1, "lowpass"), (2, "highpass")]
    assert pts[0].describe(p) == "350 Hz (woofer / mid / tweeter)"   # the tweeter's all-pass


def test_moving_a_point_moves_every_member_in_one_edit():
    p = pj.load_preset("three-way")
    q = move_crossover(p, crossover_points(p)[1], 3300.0)
    assert q.bands[0].filters[1].params["freq"] == 3300          # the all-pass
    assert q.bands[1].filters[1].params["freq"] == 3300          # mid lowpass
    assert q.bands[2].filters[0].params["freq"] == 3300          # tweeter highpass
    assert q.bands[1].filters[0].params["freq"] == 350           # the other point stays


def test_a_split_s_crossover_moves_in_every_band_of_it():
    p = pj.load_preset("fir-three-way")
    pts = crossover_points(p)
    assert [x.freq_hz for x in pts] == [300, 2800]
    q = move_crossover(p, pts[0], 320.0)
    assert all(b.filters[0].params["crossovers"] == (320.0, 2800) or
               list(b.filters[0].params["crossovers"]) == [320.0, 2800] for b in q.bands)


def test_a_lone_filter_is_not_a_point():
    d = pj.to_dict(pj.load_preset("two-way"))
    d["bands"][1]["filters"][0]["freq"] = 2500                   # sides no longer meet
    assert [x.freq_hz for x in crossover_points(pj.from_dict(d))] == []


def test_a_frequency_a_filter_refuses_is_refused_by_its_path():
    p = pj.load_preset("three-way")
    with pytest.raises(ProjectError, match="Nyquist"):
        move_crossover(p, crossover_points(p)[1], 60000.0)


# -- named crossovers in the file ----------------------------------------------------------

LINKED = {
    "format": "crossplan-project", "version": 1, "name": "x3", "sample_rate": 48000,
    "crossovers": {"upper": {"freq": 3000, "note": "kept"}},
    "bands": [
        {"name": "woofer", "filters": [
            {"type": "lowpass", "family": "linkwitz-riley", "order": 4, "freq": 350},
            {"type": "allpass", "crossover": "upper", "q": 0.7071}]},
        {"name": "mid", "filters": [
            {"type": "highpass", "family": "linkwitz-riley", "order": 4, "freq": 350},
            {"type": "lowpass", "family": "linkwitz-riley", "order": 4, "crossover": "upper"}]},
        {"name": "tweeter", "filters": [
            {"type": "highpass", "family": "linkwitz-riley", "order": 4, "freq": 2000,
             "crossover": "upper"}]}]}


def _linked():
    return project.from_dict(json.loads(json.dumps(LINKED)))


def test_linked_filters_take_the_crossovers_freq_over_their_own():
    p = _linked()
    assert [p.bands[i].filters[j].params["freq"] for i, j in p.linked("upper")] == [3000] * 3
    assert p.bands[2].filters[0].crossover == "upper"


def test_saving_keeps_the_link_and_the_crossovers_unknown_keys():
    back = project.to_dict(_linked())
    assert back["crossovers"] == {"upper": {"freq": 3000, "note": "kept"}}
    assert back["bands"][1]["filters"][1]["crossover"] == "upper"
    assert back["bands"][1]["filters"][1]["freq"] == 3000   # older readers still get a freq
    assert project.from_dict(back) == _linked()


def test_old_files_without_crossovers_load_and_save_unchanged():
    d = json.loads(json.dumps(LINKED))
    del d["crossovers"]
    for b in d["bands"]:
        for f in b["filters"]:
            f.pop("crossover", None)
            f.setdefault("freq", 3000)
    back = project.to_dict(project.from_dict(d))
    assert "crossovers" not in back
    assert all("crossover" not in f for b in back["bands"] for f in b["filters"])


def test_a_named_crossover_moves_by_one_value():
    p = _linked()
    (pt,) = [x for x in crossovers.crossover_points(p) if x.name == "upper"]
    q = crossovers.move_crossover(p, pt, 3200.0)
    assert dict(q.crossovers["upper"]) == {"freq": 3200.0, "note": "kept"}
    assert [q.bands[i].filters[j].params["freq"] for i, j in q.linked("upper")] == [3200.0] * 3
    assert q.bands[0].filters[0].params["freq"] == 350      # the other point stays
    assert crossovers.move_named_crossover(p, "upper", 3200.0) == q
    # The moved LR4 pair crosses at the new frequency, 6 dB down (Linkwitz and Riley 1976:
    # each side is a squared Butterworth, -3 dB twice at its cut-off).
    r = engine.analyse(q)
    (c,) = [x for x in r.checked_crossings if x.bands == ("mid", "tweeter")]
    assert c.freq_hz == pytest.approx(3200.0, rel=1e-4)
    assert c.level_db == pytest.approx(-6.02, abs=0.01)


def test_a_found_point_can_be_named_and_then_moved():
    p = _linked()
    pt = crossovers.find_crossover(p, "350")
    q = crossovers.name_crossover(p, pt, "lower")
    assert q.linked("lower") == [(0, 0), (1, 0)]
    moved = crossovers.move_named_crossover(q, "lower", 400.0)
    assert moved.crossovers["lower"]["freq"] == 400.0
    assert [moved.bands[i].filters[0].params["freq"] for i in (0, 1)] == [400.0, 400.0]


def test_a_filters_own_freq_unties_it():
    p = edits.set_filter_params(_linked(), 2, 0, freq=3100.0)
    assert p.bands[2].filters[0].crossover is None
    assert p.bands[2].filters[0].params["freq"] == 3100.0
    assert p.linked("upper") == [(0, 1), (1, 1)]


def test_bad_links_are_refused_naming_the_field():
    d = json.loads(json.dumps(LINKED))
    d["bands"][2]["filters"][0]["crossover"] = "top"
    with pytest.raises(ProjectError, match=r"bands\[2\]\.filters\[0\]\.crossover: no crossover "
                                           r"named 'top' in the project's crossovers \('upper'\)"):
        project.from_dict(d)
    d = json.loads(json.dumps(LINKED))
    d["crossovers"]["upper"]["freq"] = 30000
    with pytest.raises(ProjectError, match=r"crossovers\.upper\.freq: 30000 Hz is at or above "
                                           r"Nyquist"):
        project.from_dict(d)
    with pytest.raises(ProjectError, match=r"crossover: no crossover named or at 'nope'"):
        crossovers.find_crossover(_linked(), "nope")


def test_move_crossover_signature_is_unchanged_for_unnamed_points():
    # Without names, a point still moves filter by filter, as before.
    d = json.loads(json.dumps(LINKED))
    del d["crossovers"]
    for b in d["bands"]:
        for f in b["filters"]:
            if f.pop("crossover", None):
                f["freq"] = 3000
    p = project.from_dict(d)
    pt = crossovers.find_crossover(p, 3000.0)
    assert pt.name is None
    q = crossovers.move_crossover(p, pt, 2800.0)
    assert not q.crossovers
    assert sorted(q.bands[i].filters[j].params["freq"] for i, j in
                  [(m.band, m.filter) for m in pt.members]) == [2800.0] * 3
