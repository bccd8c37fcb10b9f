"""Crossover points (planner.crossovers): the filters on both sides found and moved as one."""

import pytest

from planner import project as pj
from planner.crossovers import crossover_points, move_crossover
from planner.errors import ProjectError


def test_the_three_way_has_two_points_the_upper_with_its_all_pass():
    p = pj.load_preset("three-way")
    pts = crossover_points(p)
    assert [x.freq_hz for x in pts] == [350, 3000]
    roles = sorted((m.band, m.role) for m in pts[1].members)
    assert roles == [(0, "allpass"), (1, "lowpass"), (2, "highpass")]
    assert pts[0].describe(p) == "350 Hz (woofer / mid)"


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
