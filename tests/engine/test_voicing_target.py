"""Deliberate EQ (``voicing``) and target curves (``analysis.target``) in the check.

References computed here, not by crossplan: scipy.signal.butter (Butterworth
sections, bilinear with the cut-off prewarped; a Linkwitz-Riley 4 is a
Butterworth 2 squared, Linkwitz and Riley, JAES 1976), the Audio EQ Cookbook
(R. Bristow-Johnson, W3C Working Group Note) for peaking and shelving
sections written out below, scipy.signal.sosfreqz for every response, and the
target curves' own formulas (a tilt of DB per octave about 1 kHz,
``DB * log2(f / 1000)``).
"""

import json

import numpy as np
import pytest
from scipy import signal

from planner import engine, project
from planner.cli import main
from planner.errors import ProjectError
from tests.conftest import two_way

FS = 48000.0
PRESET = {
    "format": "crossplan-project", "version": 1, "name": "bookshelf", "sample_rate": FS,
    "analysis": {"f_min": 45, "f_max": 20000, "points": 1024, "flatness_db": 1.0,
                 "phase_deg": 20},
    "bands": [
        {"name": "woofer", "filters": [
            {"type": "highpass", "family": "butterworth", "order": 2, "freq": 25},
            {"type": "lowpass", "family": "linkwitz-riley", "order": 4, "freq": 2400}]},
        {"name": "tweeter", "filters": [
            {"type": "highpass", "family": "linkwitz-riley", "order": 4, "freq": 2400},
            {"type": "peaking", "freq": 7500, "gain_db": -0.8, "q": 2.0}]}]}
SHELF = {"type": "high_shelf", "freq": 4000, "gain_db": 3.0, "q": 0.7071}


def _cookbook(kind, f0, gain_db, q=None, slope=None):
    """Audio EQ Cookbook sections (W3C note), normalised to a0 = 1, as one SOS row."""
    a = 10 ** (gain_db / 40)
    w0 = 2 * np.pi * f0 / FS
    c, s = np.cos(w0), np.sin(w0)
    alpha = s / (2 * q) if q is not None else s / 2 * np.sqrt((a + 1 / a) * (1 / slope - 1) + 2)
    r = 2 * np.sqrt(a) * alpha
    if kind == "peaking":
        b = [1 + alpha * a, -2 * c, 1 - alpha * a]
        d = [1 + alpha / a, -2 * c, 1 - alpha / a]
    elif kind == "high_shelf":
        b = [a * ((a + 1) + (a - 1) * c + r), -2 * a * ((a - 1) + (a + 1) * c),
             a * ((a + 1) + (a - 1) * c - r)]
        d = [(a + 1) - (a - 1) * c + r, 2 * ((a - 1) - (a + 1) * c), (a + 1) - (a - 1) * c - r]
    else:  # low_shelf
        b = [a * ((a + 1) - (a - 1) * c + r), 2 * a * ((a - 1) - (a + 1) * c),
             a * ((a + 1) - (a - 1) * c - r)]
        d = [(a + 1) + (a - 1) * c + r, -2 * ((a - 1) + (a + 1) * c), (a + 1) + (a - 1) * c - r]
    return np.array([b + d]) / d[0]


def _lr4(btype, fc):
    bw = signal.butter(2, fc, btype, fs=FS, output="sos")
    return np.vstack([bw, bw])


def _h(sos, f):
    return signal.sosfreqz(sos, worN=f, fs=FS)[1]


def _dev(total, f, target_db=0.0):
    """Largest deviation of 20 log10 |total| from the target (dB, signed)."""
    d = 20 * np.log10(np.abs(total)) - target_db
    return d[np.argmax(np.abs(d))]


def _preset(shelf=None):
    d = json.loads(json.dumps(PRESET))
    if shelf is not None:
        d["bands"][1]["filters"].append(shelf)
    return d


F = np.geomspace(45, 20000, 40000)


def _preset_reference(with_shelf):
    woofer = _h(np.vstack([signal.butter(2, 25, "high", fs=FS, output="sos"),
                           _lr4("low", 2400)]), F)
    tw = [_lr4("high", 2400), _cookbook("peaking", 7500, -0.8, q=2.0)]
    if with_shelf:
        tw.append(_cookbook("high_shelf", 4000, 3.0, q=0.7071))
    return woofer + _h(np.vstack(tw), F)


def test_a_deliberate_shelf_marked_voicing_passes():
    r = engine.analyse(project.from_dict(_preset({**SHELF, "voicing": True})))
    assert r.ok and r.check("sum").state == "ok"
    # Judged on the sum with the shelf set aside: scipy's sum without it (dense grid;
    # 0.01 dB: the check refines its extremes to 0.05 dB at worst, far better here).
    assert r.max_dev_db == pytest.approx(_dev(_preset_reference(False), F), abs=0.01)
    # The voiced sum is reported: scipy's sum with the shelf, about +3 dB at the top.
    assert r.voiced["max_dev_db"] == pytest.approx(_dev(_preset_reference(True), F), abs=0.01)
    assert r.voiced["max_dev_db"] > 2.5
    assert r.voiced["filters"] == ["tweeter: high shelf +3.0 dB 4 kHz"]


def test_the_same_shelf_unmarked_fails():
    r = engine.analyse(project.from_dict(_preset(dict(SHELF))))
    assert not r.ok and r.check("sum").state == "fail" and r.voiced is None
    assert r.max_dev_db == pytest.approx(_dev(_preset_reference(True), F), abs=0.01)


def test_voicing_is_set_aside_for_the_crossing_phase_too():
    # A shelf that turns the tweeter's phase at the crossing: the crossing of the bands with
    # it set aside is the plain LR4 pair's, in phase (Linkwitz and Riley 1976).
    shelf = {"type": "high_shelf", "freq": 2400, "gain_db": 6.0, "q": 0.7071, "voicing": True}
    r = engine.analyse(project.from_dict(_preset(shelf)))
    plain = engine.analyse(project.from_dict(_preset()))
    (c,) = r.checked_crossings
    (c0,) = plain.checked_crossings
    assert c.freq_hz == pytest.approx(c0.freq_hz, rel=1e-6)
    assert c.phase_diff_deg == pytest.approx(c0.phase_diff_deg, abs=1e-6)
    unmarked = dict(shelf, voicing=False)
    (cu,) = engine.analyse(project.from_dict(_preset(unmarked))).checked_crossings
    assert abs(cu.phase_diff_deg - c0.phase_diff_deg) > 5   # the shelf does turn it


def test_headroom_still_sees_the_voicing_boost():
    r = engine.analyse(project.from_dict(_preset({**SHELF, "voicing": True})))
    assert r.bands[1].peak_gain_db == pytest.approx(
        20 * np.log10(np.abs(_h(np.vstack([_lr4("high", 2400),
                                           _cookbook("peaking", 7500, -0.8, q=2.0),
                                           _cookbook("high_shelf", 4000, 3.0, q=0.7071)]),
                                F)).max()), abs=0.01)


def _tilted(target="tilt:-0.3"):
    d = two_way(4, fc=2400.0)
    d["analysis"]["target"] = target
    eq = [{"type": "low_shelf", "freq": 1000, "gain_db": 1.5, "slope": 0.2},
          {"type": "high_shelf", "freq": 1000, "gain_db": -1.5, "slope": 0.2}]
    for b in d["bands"]:
        b["filters"] += [dict(x) for x in eq]
    return d


def test_a_tilt_target_with_a_matching_eq_passes():
    r = engine.analyse(project.from_dict(_tilted()))
    assert r.ok
    f = np.geomspace(20, 20000, 40000)
    eq = np.vstack([_cookbook("low_shelf", 1000, 1.5, slope=0.2),
                    _cookbook("high_shelf", 1000, -1.5, slope=0.2)])
    total = (_h(np.vstack([_lr4("low", 2400), eq]), f)
             + _h(np.vstack([_lr4("high", 2400), eq]), f))
    ref = _dev(total, f, -0.3 * np.log2(f / 1000))
    assert r.max_dev_db == pytest.approx(ref, abs=0.01)
    assert abs(ref) < 1.0


def test_the_same_eq_fails_against_flat():
    r = engine.analyse(project.from_dict(_tilted("flat")))
    assert not r.ok and abs(r.max_dev_db) > 1.0


def test_a_shelf_target_matches_the_cookbook_low_shelf():
    # shelf:4@120 is the analog prototype of the cookbook low shelf (S = 1) at 120 Hz: the
    # digital one follows it closely far below Nyquist.
    d = two_way(4, fc=2400.0)
    d["analysis"]["target"] = "shelf:4@120"
    for b in d["bands"]:
        b["filters"].append({"type": "low_shelf", "freq": 120, "gain_db": 4.0, "slope": 1.0})
    r = engine.analyse(project.from_dict(d))
    assert r.ok and abs(r.max_dev_db) < 0.05


def test_target_and_voicing_round_trip_and_old_files_unchanged(tmp_path):
    d = _preset({**SHELF, "voicing": True})
    d["analysis"]["target"] = "tilt:-0.2"
    d["analysis"]["future_key"] = {"kept": 1}
    p = project.from_dict(d)
    back = project.to_dict(p)
    assert back["analysis"]["target"] == "tilt:-0.2"
    assert back["analysis"]["future_key"] == {"kept": 1}
    assert back["bands"][1]["filters"][-1]["voicing"] is True
    assert project.from_dict(back) == p
    old = project.to_dict(project.from_dict(_preset()))
    assert "target" not in old["analysis"]
    assert all("voicing" not in f for b in old["bands"] for f in b["filters"])


def test_a_bad_target_is_refused_naming_the_field():
    d = _preset()
    d["analysis"]["target"] = "tilt:9"
    with pytest.raises(ProjectError, match=r"analysis\.target: a tilt must be within -6 \.\. 6"):
        project.from_dict(d)
    d["analysis"]["target"] = 3
    with pytest.raises(ProjectError, match=r"analysis\.target: must be a target curve"):
        project.from_dict(d)
    d["analysis"]["target"] = None
    d["bands"][1]["filters"].append({**SHELF, "voicing": "yes"})
    with pytest.raises(ProjectError, match=r"bands\[1\]\.filters\[2\]\.voicing: must be true"):
        project.from_dict(d)


def test_a_target_file_is_read_beside_the_project(tmp_path):
    # A file target, interpolated on log frequency: a flat +0 dB file behaves as flat.
    (tmp_path / "t.txt").write_text("# flat\n20 0\n20000 0\n")
    d = two_way(4, fc=2400.0)
    d["analysis"]["target"] = "t.txt"
    (tmp_path / "p.json").write_text(json.dumps(d))
    r = engine.analyse(project.load(tmp_path / "p.json"))
    assert r.ok and abs(r.max_dev_db) < 0.01


def test_check_and_export_pass_with_voicing(write_project, tmp_path, capsys):
    path = write_project(_preset({**SHELF, "voicing": True}))
    assert main(["check", str(path)]) == 0
    out = capsys.readouterr().out
    assert "(voicing set aside)" in out and "voiced     info +3.00 dB" in out
    assert main(["check", str(path), "--json"]) == 0
    j = json.loads(capsys.readouterr().out)
    assert j["sum"]["voicing_set_aside"] == ["tweeter: high shelf +3.0 dB 4 kHz"]
    assert j["voiced"]["max_dev_db"] > 2.5
    assert main(["export", str(path), "--out", str(tmp_path / "o")]) == 0
    unmarked = write_project(_preset(dict(SHELF)), name="u.json")
    assert main(["export", str(unmarked), "--out", str(tmp_path / "u")]) == 1
