"""Alignment (planner.solve.alignment) against known answers computed outside crossplan.

References: S. H. Linkwitz, "Active Crossover Networks for Noncoincident Drivers",
J. Audio Eng. Soc. 24 (1976) (an LR4 pair sums flat, in phase, when the bands'
delays match; LR4 LP + HP is the 2nd-order all-pass with Q = 1/sqrt(2) at the
crossover, so a 3-way's woofer needs that all-pass at the upper crossover); the
Butterworth pair of order 2 sums flat only with one band inverted (the same paper);
the speed of sound 331.3 sqrt(1 + T/273.15) m/s (ideal gas, handbook formula). Sums
are rebuilt independently with scipy.signal (tests/refs.py).
"""

import copy

import numpy as np
import pytest

from planner import engine
from planner import project as pj
from planner.errors import ProjectError
from planner.solve import Bounds, align, parse_target
from tests import refs
from tests.conftest import two_way


def independent_dev_db(project, n=4000):
    """Largest deviation (dB) of the active bands' sum from 0 dB, by scipy.signal on a log grid."""
    r = engine.analyse(project)
    f = np.geomspace(project.analysis.f_min, project.analysis.f_max, n)
    s = sum(refs.band_h(d, f, project.sample_rate) for d, on in zip(r.designs, r.active) if on)
    return float(np.max(np.abs(20 * np.log10(np.abs(s)))))


@pytest.mark.parametrize("fs, fc, offset_ms, band", [
    (48000, 2000.0, 0.137, 0), (48000, 2000.0, 0.3, 1), (96000, 800.0, 0.61, 0),
    (44100, 3100.0, 0.05, 1), (192000, 120.0, 1.5, 1)])
def test_lr4_known_delay_offset_is_recovered_within_one_sample(fs, fc, offset_ms, band):
    d = two_way(order=4, fc=fc, fs=fs)
    d["analysis"]["f_min"] = max(20, fc / 20)
    d["bands"][band]["delay_ms"] = offset_ms
    p = pj.from_dict(d)
    a = align(p, bounds=Bounds(max_delay_ms=3.0))
    assert a.improved
    rel = a.project.bands[1].delay_ms - a.project.bands[0].delay_ms
    assert abs(rel) * fs / 1000 <= 1.0              # the bound: one sample
    assert independent_dev_db(a.project) <= 0.1      # and the sum flat within 0.1 dB
    assert a.project.bands[0].invert is False and a.project.bands[1].invert is False


def test_butterworth2_pair_not_inverted_gets_the_inversion():
    p = pj.from_dict(two_way(order=2, family="butterworth"))
    a = align(p)
    assert a.improved
    assert a.project.bands[0].invert != a.project.bands[1].invert
    # Inverted, the BW2 pair's sum peaks +3.01 dB at the crossover (|1 + w^2| / |1 - w^2 +
    # j sqrt2 w| = sqrt 2 at w = 1): the known flat-ish result, no delay needed.
    assert independent_dev_db(a.project) == pytest.approx(3.0103, abs=0.01)
    assert all(b.delay_ms == 0 for b in a.project.bands)


def test_linkwitz_riley2_pair_needs_the_inversion_too():
    # LR2 LP + HP with one band inverted is all-pass (flat), not inverted a notch at fc.
    a = align(pj.from_dict(two_way(order=2)))
    assert a.project.bands[0].invert != a.project.bands[1].invert
    assert independent_dev_db(a.project) <= 0.01


def test_every_polarity_pattern_of_a_three_way_is_tried():
    d = pj.to_dict(pj.load_preset("three-way"))
    d["bands"][1]["invert"] = True                  # the mid flipped by mistake
    a = align(pj.from_dict(d), vary=("invert",))
    assert [b.invert for b in a.project.bands] == [False, False, False]
    assert a.changes == ["mid: invert true -> false"]
    assert independent_dev_db(a.project) <= 0.5


def test_an_acoustic_offset_is_delayed_away_by_its_path_difference():
    # Flat drivers, the tweeter's acoustic centre 25 mm behind the woofer's: the woofer
    # must wait 25 mm / c. c = 331.3 sqrt(1 + 20/273.15) = 343.2 m/s (the handbook form;
    # crossplan's linear form differs by 0.05 %, far below one sample).
    d = two_way(order=4, fc=2500.0, fs=96000)
    d["bands"][0]["driver"] = {"model": "flat", "offset_mm": 0}
    d["bands"][1]["driver"] = {"model": "flat", "offset_mm": 25}
    a = align(pj.from_dict(d))
    want_ms = 25e-3 / (331.3 * np.sqrt(1 + 20 / 273.15)) * 1e3
    got_ms = a.project.bands[0].delay_ms - a.project.bands[1].delay_ms
    assert abs(got_ms - want_ms) * 96 <= 1.0        # within one sample at 96 kHz
    assert a.after.max_dev_db == pytest.approx(0.0, abs=0.1)


def test_a_project_already_aligned_comes_back_unchanged():
    p = pj.load_preset("fir-three-way")
    a = align(p, vary=("delay", "invert", "gain"))
    assert not a.improved and a.project is p and a.changes == []
    assert a.after is a.before


def test_the_result_is_never_worse_than_the_input():
    for name in ("two-way", "three-way", "sub-sat", "desk-2way", "ported-3way"):
        a = align(pj.load_preset(name), vary=("delay", "invert", "gain"))
        assert a.objective_after <= a.objective_before
        if a.improved:
            assert a.after.max_dev_db is not None


def test_a_delay_bound_that_stops_the_search_is_named():
    d = two_way(order=4, fc=2000.0)
    d["bands"][0]["delay_ms"] = 0.4                  # the tweeter would need 0.4 ms
    a = align(pj.from_dict(d), bounds=Bounds(max_delay_ms=0.1), vary=("delay",))
    # The woofer may lose its delay (it keeps its own 0.4 ms as its limit), so the
    # search takes it away instead: no bound is needed then.
    assert a.project.bands[0].delay_ms == pytest.approx(0.0, abs=1000 / 48000)
    d["bands"][0]["delay_ms"] = 0.0
    d["bands"][0]["driver"] = {"model": "flat", "offset_mm": 0}
    d["bands"][1]["driver"] = {"model": "flat", "offset_mm": 100}   # 0.29 ms late
    a = align(pj.from_dict(d), bounds=Bounds(max_delay_ms=0.1), vary=("delay",))
    assert a.project.bands[0].delay_ms <= 0.1 + 1e-9
    assert any("delay at its limit" in x for x in a.at_bounds)


def test_trims_stay_within_their_bound_and_say_so():
    d = two_way(order=4, fc=2000.0)
    d["bands"][1]["gain_db"] = -6.0
    a = align(pj.from_dict(d), vary=("gain",), bounds=Bounds(trim_db=2.0))
    assert a.project.bands[1].gain_db - (-6.0) == pytest.approx(2.0, abs=1e-3)
    assert any("trim at its limit" in x for x in a.at_bounds)
    a = align(pj.from_dict(d), vary=("gain",), bounds=Bounds(trim_db=8.0))
    assert a.project.bands[1].gain_db - a.project.bands[0].gain_db == pytest.approx(0, abs=0.05)


def test_a_misplaced_all_pass_moves_back_to_the_upper_crossover():
    # Linkwitz-Riley: the woofer's all-pass must match LR4 at the upper split, 3 kHz.
    d = pj.to_dict(pj.load_preset("three-way"))
    d["bands"][2]["filters"] = d["bands"][2]["filters"][:1]   # the woofer's all-pass alone
    d["bands"][0]["filters"][1]["freq"] = 2400.0
    p = pj.from_dict(d)
    assert not engine.analyse(p).ok or engine.analyse(p).worst_crossing.phase_diff_deg > 10
    a = align(p, vary=("allpass",), bounds=Bounds(freq_octaves=0.5))
    got = a.project.bands[0].filters[1].params["freq"]
    assert got == pytest.approx(3000.0, rel=0.03)
    assert a.after.ok


def test_moving_a_crossover_moves_both_sides_within_the_bound():
    d = two_way(order=4, fc=2000.0)
    d["bands"][1]["filters"].append({"type": "peaking", "freq": 2600, "gain_db": 2.5, "q": 1.0})
    p = pj.from_dict(d)
    a = align(p, vary=("freq",), bounds=Bounds(freq_octaves=0.3))
    lp = a.project.bands[0].filters[0].params["freq"]
    hp = a.project.bands[1].filters[0].params["freq"]
    assert lp == hp
    assert 2000 * 2 ** -0.3 - 1e-6 <= lp <= 2000 * 2 ** 0.3 + 1e-6
    assert a.objective_after <= a.objective_before


def test_only_the_named_frequencies_move():
    d = pj.to_dict(pj.load_preset("three-way"))
    d["bands"][2]["gain_db"] = 1.0
    a = align(pj.from_dict(d), vary=("freq",), bounds=Bounds(move_hz=(350.0,)))
    assert a.project.bands[2].filters[0].params["freq"] == 3000


def test_a_target_tilt_is_followed():
    # With a tilt target the trims lean the bands: the tweeter goes down.
    p = pj.from_dict(two_way(order=4, fc=2000.0))
    a = align(p, vary=("gain",), target_fn=parse_target("tilt:-1"), bounds=Bounds(trim_db=6))
    assert a.project.bands[1].gain_db < a.project.bands[0].gain_db - 1.0


def test_bad_variables_and_bounds_are_refused_by_name():
    p = pj.from_dict(two_way())
    with pytest.raises(ProjectError, match="vary: must be some of delay"):
        align(p, vary=("tilt",))
    with pytest.raises(ProjectError, match="max_delay_ms: must be within 0 .. 1000"):
        Bounds(max_delay_ms=-1)
    with pytest.raises(ProjectError, match="freq_octaves"):
        Bounds(freq_octaves=float("nan"))


def test_the_input_project_is_not_changed():
    d = two_way()
    d["bands"][0]["delay_ms"] = 0.2
    p = pj.from_dict(d)
    before = copy.deepcopy(pj.to_dict(p))
    align(p)
    assert pj.to_dict(p) == before


def test_the_one_band_delay_scan_scores_as_the_full_batch():
    # The scan makes the other bands' sum once; its objective must be the batch's (the
    # same rows written out in full), to rounding.
    from planner import engine
    from planner.solve.alignment import _Problem

    d = two_way(order=4, fc=2000.0)
    d["bands"][1]["delay_ms"] = 0.1
    r = engine.analyse(pj.from_dict(d))
    prob = _Problem(r, np.zeros(len(r.freqs_hz)))
    base = np.array([2e-4, 0.0])
    gains, signs = np.array([0.7, -1.2]), np.array([1.0, -1.0])
    cands = np.linspace(0.0, 1e-3, 41)
    for k in range(2):
        rows = np.repeat(base[None], len(cands), axis=0)
        rows[:, k] = cands
        full = prob.batch(rows, gains, signs)
        np.testing.assert_allclose(prob.scan(k, cands, base, gains, signs), full, rtol=1e-12)
