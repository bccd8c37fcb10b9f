"""Driver objects of a project file and measurement files, read and refused in plain words.

Sources: the plain-text measurement layout (frequency, magnitude, phase; comment lines) is
common practice, no published standard; what crossplan measure writes
(planner.dsp.response_text.format_response_text) must load unchanged.
"""

import json

import numpy as np
import pytest

from planner import project
from planner.dsp.response_text import format_response_text
from planner.errors import ProjectError
from tests.conftest import EXAMPLE

F = np.geomspace(10, 24000, 200)


def _doc(driver, band=0, **analysis):
    d = json.loads(json.dumps(EXAMPLE))
    d["bands"][band]["driver"] = driver
    d["analysis"].update(analysis)
    return d


def _write(tmp_path, name, text):
    (tmp_path / name).write_text(text, encoding="utf-8")
    return name


def test_a_model_driver_is_read_with_its_defaults():
    p = project.from_dict(_doc({"model": "closed-box", "fc": 55}))
    d = p.bands[0].driver
    assert d.model == "closed-box" and d.params["qtc"] == 0.707 and d.resonance_hz == 55
    assert d.offset_mm == 0.0 and d.position_mm is None and p.has_drivers


def test_what_crossplan_measure_writes_loads_as_a_driver_file(tmp_path):
    text = format_response_text(F, -3 + 0 * F, 10 * np.log10(F), ["a measurement", "gated"])
    _write(tmp_path, "woofer.txt", text)
    p = project.from_dict(_doc({"file": "woofer.txt"}), tmp_path)
    data = p.bands[0].driver.data
    np.testing.assert_allclose(data.freqs_hz, F, rtol=1e-7)   # 8 significant digits written
    assert data.phase_deg is not None and data.sha256.startswith("sha256:")


def test_a_file_is_read_relative_to_the_project_file(tmp_path):
    sub = tmp_path / "drivers"
    sub.mkdir()
    (sub / "tw.txt").write_text(format_response_text(F, 0 * F))
    (tmp_path / "p.json").write_text(json.dumps(_doc({"file": "drivers/tw.txt"})))
    p = project.load(tmp_path / "p.json")
    assert p.bands[0].driver.data.path == "drivers/tw.txt"
    assert p.source_dir == str(tmp_path.resolve())


@pytest.mark.parametrize("lines, message", [
    ("20 80\n30 81\n25 82\n40 80\n50 80\n", r"w\.txt: line 4: frequency 25 Hz must be above the "
                                              r"previous line's 30 Hz"),
    ("20 80\n30 81\n30 82\n40 80\n50 80\n", r"w\.txt: line 4: frequency 30 Hz must be above"),
    ("20 80\n30 eighty\n40 80\n50 80\n60 80\n", r"w\.txt: line 3: expected numbers"),
    ("20 80\n30 80\n40 80\n", r"w\.txt: has 3 data lines; a response needs at least 5"),
    ("20,5 80,25\n30,5 80,25\n", r"w\.txt: line 2: decimal commas are not read"),
    # Three columns, a tab, a sign, a comma-separated line before: still named by line.
    ("20,80,0\n30,81,0\n40,5\t-80,25\t1,5\n", r"w\.txt: line 4: decimal commas are not read"),
    ("+20,5 -80,25 \n", r"w\.txt: line 2: decimal commas are not read"),
])
def test_malformed_files_are_refused_naming_file_and_line(tmp_path, lines, message):
    _write(tmp_path, "w.txt", "# a header\n" + lines)     # line numbers count it
    with pytest.raises(ProjectError, match=r"bands\[0\]\.driver\.file: " + message):
        project.from_dict(_doc({"file": "w.txt"}), tmp_path)


def test_a_file_that_does_not_cover_the_analysis_range_is_refused_unless_allowed(tmp_path):
    _write(tmp_path, "w.txt", format_response_text(np.geomspace(40, 18000, 50), np.zeros(50)))
    with pytest.raises(ProjectError, match=r"driver\.file: w\.txt: covers 40 \.\. 18000 Hz but "
                                           r"the analysis range is 20 \.\. 20000 Hz"):
        project.from_dict(_doc({"file": "w.txt"}), tmp_path)
    p = project.from_dict(_doc({"file": "w.txt", "extrapolate": True}), tmp_path)
    assert p.bands[0].driver.extrapolate


def test_a_missing_file_is_named():
    with pytest.raises(ProjectError, match=r"bands\[0\]\.driver\.file: nope\.txt: no such file"):
        project.from_dict(_doc({"file": "nope.txt"}))


@pytest.mark.parametrize("driver, message", [
    ({}, r"driver\.model: give either model"),
    ({"model": "horn"}, r"driver\.model: must be one of closed-box, vented-box, tweeter, flat"),
    ({"model": "closed-box"}, r"driver\.fc: missing; a closed-box driver needs fc"),
    ({"model": "closed-box", "fc": 50, "role": "bass"}, r"driver\.role: must be one of woofer"),
    ({"model": "flat", "breakup_hz": 5000}, r"driver\.breakup_db: missing; a break-up peak"),
    ({"model": "flat", "min_phase": "yes"}, r"driver\.min_phase: must be true or false"),
])
def test_bad_driver_objects_name_the_field(driver, message):
    with pytest.raises(ProjectError, match=r"bands\[0\]\." + message):
        project.from_dict(_doc(driver))


def test_a_measured_driver_takes_no_model_fields(tmp_path):
    _write(tmp_path, "w.txt", format_response_text(F, 0 * F))
    with pytest.raises(ProjectError, match=r"driver\.sensitivity_db: a measured driver's levels"):
        project.from_dict(_doc({"file": "w.txt", "sensitivity_db": 87}), tmp_path)


def test_driver_target_and_acoustics_survive_a_save(tmp_path):
    d = _doc({"model": "tweeter", "fc": 900, "role": "tweeter", "note": "kept"}, band=1)
    d["bands"][1]["target"] = [{"type": "highpass", "family": "linkwitz-riley", "order": 4,
                                "freq": 2200}]
    d["acoustics"] = {"temperature_c": 25, "distance_m": 3, "custom": 1}
    p = project.from_dict(d)
    out = json.loads(project.dumps(p))
    assert out["bands"][1]["driver"] == d["bands"][1]["driver"]
    assert out["bands"][1]["target"][0]["freq"] == 2200
    assert out["acoustics"]["temperature_c"] == 25 and out["acoustics"]["custom"] == 1
    assert project.from_dict(out) == p
