"""Target curves (planner.targets).

References: the Audio EQ Cookbook (W3C Working Group Note, 2021) low shelf with S = 1,
whose level is the full gain far below its frequency, half the gain (in dB) at it and
0 dB far above; a tilt in dB per octave is DB * log2(f / 1 kHz) by definition.
"""

import numpy as np
import pytest

from planner.errors import ProjectError
from planner.solve import parse_target


def test_flat_is_zero():
    assert np.all(parse_target("flat")([20, 1000, 20000]) == 0)


def test_tilt_per_octave_about_1_khz():
    t = parse_target("tilt:-0.8")
    assert t([1000, 2000, 250]) == pytest.approx([0.0, -0.8, 1.6])


def test_shelf_has_its_gain_below_half_at_its_frequency_and_none_above():
    t = parse_target("shelf:6@100")
    lo, mid, hi = t([1.0, 100.0, 10000.0])
    assert lo == pytest.approx(6.0, abs=0.01)     # 2 decades below: within 0.01 dB
    assert mid == pytest.approx(3.0, abs=1e-9)    # the midpoint, exactly
    assert hi == pytest.approx(0.0, abs=0.01)


def test_tilt_and_shelf_add():
    both = parse_target("tilt:-0.5+shelf:4@80")
    f = np.array([30.0, 1000.0, 8000.0])
    assert both(f) == pytest.approx(parse_target("tilt:-0.5")(f) + parse_target("shelf:4@80")(f))


def test_a_file_is_interpolated_on_log_frequency_and_held_beyond(tmp_path):
    (tmp_path / "t.txt").write_text("# room\n100 4\n1000 0\n10000 -2\n", encoding="utf-8")
    t = parse_target("t.txt", tmp_path)
    assert t([50, 100, np.sqrt(100 * 1000), 1000, 20000]) == pytest.approx([4, 4, 2, 0, -2])


@pytest.mark.parametrize("text, match", [
    ("tilt:x", "write tilt:DB_PER_OCTAVE or shelf:DB@HZ"),
    ("tilt:9", "within -6 .. 6 dB per octave, not 9"),
    ("shelf:4@5", "within 10 .. 20000 Hz, not 5"),
    ("nosuch.txt", "no such file"),
])
def test_bad_targets_are_refused_naming_the_field(text, match, tmp_path):
    with pytest.raises(ProjectError, match=match) as e:
        parse_target(text, tmp_path)
    assert e.value.field == "target"


def test_a_file_with_bad_lines_is_refused_naming_the_line(tmp_path):
    (tmp_path / "bad.txt").write_text("100 1\n50 2\n", encoding="utf-8")
    with pytest.raises(ProjectError, match="bad.txt: line 2"):
        parse_target("bad.txt", tmp_path)


def test_the_magnitude_view_draws_the_target_the_sum_is_checked_against():
    from planner import engine, project
    from planner.present.views import view_series
    from tests.conftest import two_way

    d = two_way(4)
    d["analysis"]["target"] = "tilt:-1"
    r = engine.analyse(project.from_dict(d))
    series, unit, _ = view_series(r, "magnitude")
    (t,) = [s for s in series if s.label == "target tilt:-1"]
    # The tilt's definition, written out: -1 dB per octave about 1 kHz.
    np.testing.assert_allclose(t.y, -1.0 * np.log2(t.x / 1000.0), atol=1e-12)
    assert series[-1].label == "sum"                 # the sum stays last, drawn on top
    d["analysis"].pop("target")
    plain, _, _ = view_series(engine.analyse(project.from_dict(d)), "magnitude")
    assert not any(s.label.startswith("target") for s in plain)
