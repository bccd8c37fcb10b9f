"""Project files: the JSON contract, round trips, unknown keys, bad input, atomic saves."""

import json
import os

import pytest

from planner import engine, project
from planner.errors import ProjectError


def test_example_loads(example):
    p = project.from_dict(example)
    assert [b.name for b in p.bands] == ["woofer", "tweeter"]
    assert p.bands[1].filters[1].params == {"freq": 6000.0, "gain_db": -2.0, "q": 1.4}
    assert p.analysis.crossing_floor_db == -20.0  # documented default


def test_round_trip_equal(example):
    p = project.from_dict(example)
    assert project.loads(project.dumps(p)) == p


def test_unknown_keys_kept_at_every_level(example):
    example["future_top"] = {"x": [1, 2]}
    example["analysis"]["smoothing"] = "1/6 oct"
    example["bands"][0]["driver_offset_mm"] = 12
    example["bands"][0]["filters"][0]["note"] = "subsonic"
    out = json.loads(project.dumps(project.from_dict(example)))
    assert out["future_top"] == {"x": [1, 2]}
    assert out["analysis"]["smoothing"] == "1/6 oct"
    assert out["bands"][0]["driver_offset_mm"] == 12
    assert out["bands"][0]["filters"][0]["note"] == "subsonic"


def test_driver_kept_as_written(example, tmp_path):
    # The driver is read and analysed now, and saved back as written, unknown keys too.
    lines = "".join(f"{f:g} 87 0\n" for f in (10, 100, 1000, 10000, 30000))
    (tmp_path / "woofer.frd").write_text("# freq mag phase\n" + lines)
    example["bands"][0]["driver"] = {"file": "woofer.frd", "offset_mm": 30, "vendor_note": "x"}
    p = project.from_dict(example, tmp_path)
    assert p.bands[0].driver.offset_mm == 30.0 and p.bands[0].driver.data.mag_db[0] == 87.0
    assert json.loads(project.dumps(p))["bands"][0]["driver"] == {
        "file": "woofer.frd", "offset_mm": 30, "vendor_note": "x"}


@pytest.mark.parametrize("mutate, message", [
    (lambda d: d["bands"][1]["filters"].__setitem__(0, {"type": "highpass",
                                                        "family": "butterworth", "order": 2,
                                                        "freq": 30000}),
     r"^bands\[1\]\.filters\[0\]\.freq: 30000 Hz is above Nyquist \(24000 Hz\) for "
     r"sample_rate 48000$"),
    (lambda d: d["bands"][0]["filters"][0].pop("freq"),
     r"^bands\[0\]\.filters\[0\]\.freq: missing"),
    (lambda d: d["bands"][0].__setitem__("gain_db", "loud"),
     r"^bands\[0\]\.gain_db: must be a number, not 'loud'"),
    (lambda d: d["bands"][1]["filters"][1].__setitem__("q", 0),
     r"^bands\[1\]\.filters\[1\]\.q: Q must be above 0, not 0"),
    (lambda d: d["bands"][1]["filters"][1].__setitem__("q", -1.5),
     r"^bands\[1\]\.filters\[1\]\.q: Q must be above 0, not -1.5"),
    (lambda d: d["bands"][0]["filters"][1].__setitem__("order", 5),
     r"^bands\[0\]\.filters\[1\]\.order: 5 is out of range \(allowed: 2, 4, 6, 8\)"),
    (lambda d: d["bands"][0]["filters"][0].__setitem__("order", 12),
     r"^bands\[0\]\.filters\[0\]\.order: 12 is out of range"),
    (lambda d: d["bands"][0]["filters"][0].__setitem__("freq", float("nan")),
     r"^bands\[0\]\.filters\[0\]\.freq: must be a finite number, not nan"),
    (lambda d: d["bands"][0]["filters"][0].__setitem__("type", "wobble"),
     r"^bands\[0\]\.filters\[0\]\.type: unknown filter type 'wobble'; known types: "),
    (lambda d: d["bands"][0]["filters"][0].__setitem__("family", "chebyshev"),
     r"^bands\[0\]\.filters\[0\]\.family: unknown highpass family 'chebyshev'"),
    (lambda d: d.__setitem__("version", 2),
     r"^version: 2 is newer than this crossplan reads \(1\); update crossplan"),
    (lambda d: d.__setitem__("format", "something-else"),
     r"^format: must be 'crossplan-project'"),
    (lambda d: d.pop("sample_rate"), r"^sample_rate: missing"),
    (lambda d: d["analysis"].__setitem__("f_max", 30000),
     r"^analysis\.f_max: 30000 Hz is above Nyquist \(24000 Hz\)"),
    (lambda d: d["bands"][1].__setitem__("name", "woofer"),
     r"^bands\[1\]\.name: 'woofer' is the name of bands\[0\] already"),
    (lambda d: d["bands"][0].__setitem__("invert", "yes"),
     r"^bands\[0\]\.invert: must be true or false, not 'yes'"),
    (lambda d: d.__setitem__("bands", []), r"^bands: must be a non-empty list"),
    (lambda d: d["bands"][0]["filters"][0].__setitem__("freq", True),
     r"^bands\[0\]\.filters\[0\]\.freq: must be a number, not True"),
    (lambda d: d["bands"][0].__setitem__("delay_ms", -1),
     r"^bands\[0\]\.delay_ms: -1 ms must be at least 0 ms"),
])
def test_bad_input_names_the_field(example, mutate, message):
    mutate(example)
    with pytest.raises(ProjectError, match=message):
        project.from_dict(example)


def test_nan_in_json_text_is_refused(example):
    text = json.dumps(example).replace('"freq": 35', '"freq": NaN')
    with pytest.raises(ProjectError, match=r"freq: must be a finite number, not nan"):
        project.loads(text)


def test_invalid_json_names_line():
    with pytest.raises(ProjectError, match=r"^file: not valid JSON: .* line 1 column"):
        project.loads("{nope")


def test_missing_file():
    with pytest.raises(ProjectError, match=r"^file: no such file"):
        project.load("/nonexistent/x.json")


def test_save_is_atomic_when_interrupted(example, tmp_path, monkeypatch):
    # A crash between writing and renaming leaves the old file whole and no temp file.
    path = tmp_path / "p.json"
    p = project.from_dict(example)
    project.save(p, path)
    before = path.read_bytes()

    def boom(*a, **k):
        raise OSError("disk full")

    monkeypatch.setattr(os, "replace", boom)
    with pytest.raises(OSError, match="disk full"):
        project.save(p.with_band(0, p.bands[0].__class__(name="other")), path)
    assert path.read_bytes() == before
    assert [f.name for f in tmp_path.iterdir()] == ["p.json"]


def test_save_writes_loadable_file(example, tmp_path):
    path = tmp_path / "out.json"
    p = project.from_dict(example)
    project.save(p, path)
    assert project.load(path) == p


def test_shelf_q_and_slope_both_refused(example):
    example["bands"][1]["filters"].append({"type": "low_shelf", "freq": 100, "gain_db": 3,
                                           "q": 0.7, "slope": 1})
    with pytest.raises(ProjectError, match=r"filters\[2\]\.slope: give q or slope, not both"):
        project.from_dict(example)


def test_allpass_second_order_needs_q(example):
    example["bands"][1]["filters"].append({"type": "allpass", "freq": 1000})
    with pytest.raises(ProjectError, match=r"filters\[2\]\.q: missing; a second-order all-pass"):
        project.from_dict(example)


def test_analysis_arith_canonical_and_saved(example):
    # The target number format is stored in its canonical lower-case name.
    raw = json.loads(json.dumps(example))
    raw["analysis"]["arith"] = " Q1.31 "
    p = project.from_dict(raw)
    assert p.analysis.arith == "q1.31"
    assert project.to_dict(p)["analysis"]["arith"] == "q1.31"


def test_analysis_arith_absent_is_not_written(example):
    assert "arith" not in project.to_dict(project.from_dict(example))["analysis"]


def test_analysis_arith_bad_names_field(example):
    raw = json.loads(json.dumps(example))
    raw["analysis"]["arith"] = "q0.5"
    with pytest.raises(ProjectError, match=r"analysis\.arith: 'q0\.5' is not a known format"):
        project.from_dict(raw)


def _impossible_fir(example):
    raw = json.loads(json.dumps(example))
    raw["bands"][0]["filters"][1] = {"type": "lowpass", "family": "fir", "method": "remez",
                                     "freq": 2200, "transition_hz": 100, "atten_db": 80,
                                     "max_taps": 101}
    return raw


def test_designing_refuses_an_fir_spec_that_cannot_be_met(example):
    # Kaiser 1974: about 1600 taps are needed for 80 dB over 100 Hz at 48 kHz.
    p = project.from_dict(_impossible_fir(example))
    with pytest.raises(ProjectError, match=r"bands\[0\]\.filters\[1\]\.taps: .*max_taps 101"):
        engine.design_project(p)


def test_loading_checks_fields_but_leaves_the_design_to_the_analysis(example):
    p = project.from_dict(_impossible_fir(example))
    assert p.bands[0].filters[1].params["max_taps"] == 101
    raw = _impossible_fir(example)
    raw["bands"][0]["filters"][1]["taps"] = 100   # a field error is still refused
    with pytest.raises(ProjectError, match=r"bands\[0\]\.filters\[1\]\.taps"):
        project.from_dict(raw)


def test_analysis_enforce_headroom_defaults_to_false(example):
    assert project.from_dict(example).analysis.enforce_headroom is False   # documented default


def test_analysis_enforce_headroom_loaded_saved_and_kept(example):
    example["analysis"]["enforce_headroom"] = True
    p = project.from_dict(example)
    assert p.analysis.enforce_headroom is True
    assert project.to_dict(p)["analysis"]["enforce_headroom"] is True
    assert project.loads(project.dumps(p)) == p
    assert "enforce_headroom" not in p.analysis.extra   # a known field, not an unknown key


def test_analysis_enforce_headroom_must_be_true_or_false(example):
    example["analysis"]["enforce_headroom"] = "yes"
    with pytest.raises(ProjectError,
                       match=r"^analysis\.enforce_headroom: must be true or false, not 'yes'"):
        project.from_dict(example)


def test_save_keeps_a_backup_of_the_previous_version(example, tmp_path):
    path = tmp_path / "p.json"
    p = project.from_dict(example)
    project.save(p, path)
    first = path.read_bytes()
    project.save(p.with_band(0, p.bands[0].__class__(name="other")), path)
    assert (tmp_path / "p.json.bak").read_bytes() == first


def test_save_refuses_a_file_changed_since_it_was_read(example, tmp_path):
    from planner.errors import CrossplanError, ProjectChangedError

    path = tmp_path / "p.json"
    project.save(project.from_dict(example), path)
    opened = project.read(path)
    other = json.loads(path.read_text())
    other["name"] = "saved by someone else"
    path.write_text(json.dumps(other))
    with pytest.raises(ProjectChangedError, match=r"^file: '.*p\.json' changed on disk since "
                                                  r"it was loaded \(\d+ -> \d+ bytes"):
        project.save(opened.project, path, expect=opened.fingerprint)
    assert json.loads(path.read_text())["name"] == "saved by someone else"
    assert issubclass(ProjectChangedError, CrossplanError)
    project.save(opened.project, path, expect=opened.fingerprint, force=True)
    assert project.load(path) == opened.project


def test_save_refuses_a_file_removed_since_it_was_read(example, tmp_path):
    from planner.errors import ProjectChangedError

    path = tmp_path / "p.json"
    project.save(project.from_dict(example), path)
    opened = project.read(path)
    path.unlink()
    with pytest.raises(ProjectChangedError, match=r"^file: '.*p\.json' is gone; not saved"):
        project.save(opened.project, path, expect=opened.fingerprint)


def test_save_with_the_fingerprint_it_returned_goes_through(example, tmp_path):
    path = tmp_path / "p.json"
    p = project.from_dict(example)
    fp = project.save(p, path)
    assert fp == project.fingerprint(path)
    fp2 = project.save(p.with_band(0, p.bands[0].__class__(name="x")), path, expect=fp)
    assert fp2.sha256 != fp.sha256


def test_same_bytes_written_again_is_not_a_change(example, tmp_path):
    # Another session saving the very same content loses nothing: no refusal.
    path = tmp_path / "p.json"
    p = project.from_dict(example)
    fp = project.save(p, path)
    data = path.read_bytes()
    path.write_bytes(data)
    os.utime(path, ns=(fp.mtime_ns + 10**9, fp.mtime_ns + 10**9))
    project.save(p, path, expect=fp)


# -- the solvers' defaults: the "solve" section ----------------------------------------

def test_solve_defaults_are_crossplans_and_not_written(example):
    # Without a "solve" section the solvers keep crossplan's defaults (the documented
    # ones: delay and polarity, 2 ms, +/-3 dB, 1/4 octave, fit +/-12 dB), and none is written.
    p = project.from_dict(example)
    assert (p.solve.vary, p.solve.max_delay_ms, p.solve.trim_db, p.solve.freq_octaves,
            p.solve.limit_db) == (("delay", "invert"), 2.0, 3.0, 0.25, 12.0)
    assert "solve" not in json.loads(project.dumps(p))


def test_solve_loaded_saved_and_unknown_keys_kept(example):
    example["solve"] = {"vary": ["gain", "delay"], "max_delay_ms": 6, "limit_db": 3,
                        "note": "sub 2 m behind"}
    p = project.from_dict(example)
    assert p.solve.vary == ("gain", "delay") and p.solve.max_delay_ms == 6.0
    out = json.loads(project.dumps(p))["solve"]
    assert out == {"vary": ["gain", "delay"], "max_delay_ms": 6.0, "trim_db": 3.0,
                   "freq_octaves": 0.25, "limit_db": 3.0, "note": "sub 2 m behind"}
    assert project.loads(project.dumps(p)) == p


@pytest.mark.parametrize("solve,message", [
    ({"vary": "delay"}, r"^solve\.vary: must be a list of some of 'delay', 'invert', 'gain', "
                        r"'freq', 'allpass', not 'delay'"),
    ({"vary": []}, r"^solve\.vary: must be a list"),
    ({"vary": ["delay", "loudness"]}, r"^solve\.vary: .*not \['delay', 'loudness'\]"),
    ({"vary": ["delay", "delay"]}, r"^solve\.vary: names one twice"),
    ({"max_delay_ms": -1}, r"^solve\.max_delay_ms: -1 ms must be at least 0 ms"),
    ({"max_delay_ms": 2000}, r"^solve\.max_delay_ms: 2000 ms must be at most 1000 ms"),
    ({"trim_db": 41}, r"^solve\.trim_db: 41 dB must be at most 40 dB"),
    ({"freq_octaves": "1/4"}, r"^solve\.freq_octaves: must be a number, not '1/4'"),
    ({"limit_db": 0}, r"^solve\.limit_db: 0 dB must be at least 0\.1 dB"),
    ([], r"^solve: must be an object"),
])
def test_solve_bad_values_name_the_field(example, solve, message):
    example["solve"] = solve
    with pytest.raises(ProjectError, match=message):
        project.from_dict(example)
