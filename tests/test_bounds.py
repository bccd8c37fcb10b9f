"""Bounds on the work a project can ask for: bands, grid points, FIR lengths per method.

The limits are rules of this project (planner/config.py: the reasons and the measured
costs beside them; benchmarks/bench_bounds.py measures the worst accepted cases); what
is checked here is that each is refused at its field with the limit and the value, that
the value at the limit is accepted, and that the grid stays within config.grid_cap.
"""

import json

import numpy as np
import pytest

from planner import config, engine, project
from planner.cli import main
from planner.dsp import fir
from planner.errors import DesignError, ProjectError
from tests.conftest import two_way


def _bands(n):
    f = np.geomspace(30, 18000, n)
    return [{"name": f"b{k}", "filters": [{"type": "lowpass", "family": "butterworth",
                                           "order": 2, "freq": float(f[k])}]}
            for k in range(n)]


def test_more_than_64_bands_refused_at_load():
    d = two_way()
    d["bands"] = _bands(config.MAX_BANDS + 1)
    with pytest.raises(ProjectError, match=r"^bands: 65 bands is more than the 64 a project "
                                           r"may have"):
        project.from_dict(d)


def test_64_bands_check_and_keep_the_grid_cap():
    d = two_way()
    d["bands"] = _bands(config.MAX_BANDS)
    r = engine.analyse(project.from_dict(d))
    assert len(r.freqs_hz) <= config.grid_cap(d["analysis"]["points"], config.MAX_BANDS)


def test_points_above_the_limit_refused_in_the_file():
    d = two_way()
    d["analysis"]["points"] = config.MAX_POINTS + 1
    with pytest.raises(ProjectError, match=r"analysis.points: 65537 must be at most 65536"):
        project.from_dict(d)


def test_cli_points_option_takes_the_file_limit(write_project, capsys):
    assert main(["check", str(write_project(two_way())), "--points", "10000000"]) == 2
    assert "crossplan: points: 10000000 points is outside 16 .. 65536, the limits of " \
           "analysis.points" in capsys.readouterr().err


def test_cli_points_below_the_limit_refused(write_project, capsys):
    assert main(["check", str(write_project(two_way())), "--points", "3"]) == 2
    assert "points: 3 points is outside 16 .. 65536" in capsys.readouterr().err


def test_max_points_grid_keeps_its_cap():
    p = project.from_dict(two_way())
    r = engine.analyse(p, points=config.MAX_POINTS)
    assert config.MAX_POINTS <= len(r.freqs_hz) <= config.grid_cap(config.MAX_POINTS, 2)


def test_measure_points_option_bounded(tmp_path, capsys):
    from scipy.io import wavfile

    wavfile.write(tmp_path / "s.wav", 48000, np.zeros(100, dtype=np.float32))
    assert main(["measure", str(tmp_path / "s.wav"), "--sweep", str(tmp_path / "s.wav"),
                 "--f1", "20", "--f2", "20000", "--points", "10000000",
                 "--out", str(tmp_path / "o.txt")]) == 2
    assert "points: must be 2 .. 65536 points, not 10000000" in capsys.readouterr().err


def _fir(method, **kw):
    d = two_way()
    d["bands"][0]["filters"] = [dict({"type": "lowpass", "family": "fir", "method": method,
                                      "freq": 2000}, **kw)]
    return d


@pytest.mark.parametrize("method,field,value,limit", [
    ("lsq", "max_taps", 32767, 8191),
    ("lsq", "taps", 8193, 8191),
    ("remez", "max_taps", 16385, 16383),
    ("remez", "taps", 32767, 16383),
])
def test_fir_taps_beyond_the_method_limit_refused(method, field, value, limit):
    d = _fir(method, transition_hz=5, **{field: value})
    with pytest.raises(ProjectError, match=rf"bands\[0\]\.filters\[0\]\.{field}: {value} taps "
                                           rf"is above the limit of {limit} taps for the "
                                           rf"{method} method"):
        project.from_dict(d)


def test_fir_limit_names_the_other_methods():
    with pytest.raises(ProjectError, match=r"another method \(window up to 32767, remez up to "
                                           r"16383\)"):
        project.from_dict(_fir("lsq", transition_hz=5, max_taps=32767))


def test_fir_at_the_limit_accepted_by_the_loader():
    project.from_dict(_fir("lsq", transition_hz=200, max_taps=8191))
    project.from_dict(_fir("remez", transition_hz=200, max_taps=16383))


def test_split_taps_beyond_the_method_limit_refused():
    d = two_way()
    for k, b in enumerate(d["bands"]):
        b["filters"] = [{"type": "split", "family": "fir", "crossovers": [2000], "band": k,
                         "taps": 9001, "method": "lsq", "transition_hz": 100}]
    with pytest.raises(ProjectError, match=r"bands\[0\]\.filters\[0\]\.taps: 9001 taps is above "
                                           r"the limit of 8191 taps for the lsq method"):
        project.from_dict(d)


def test_dsp_search_refuses_max_taps_beyond_the_limit():
    spec = fir.FirSpec("lowpass", 1000, 1100, 0.1, 60)
    with pytest.raises(DesignError, match=r"max_taps: 16385 taps is above the limit of 8191 "
                                          r"taps for the lsq method"):
        fir.min_taps_least_squares(spec, 48000, max_taps=16385)


def test_dsp_fixed_length_remez_refuses_beyond_the_limit():
    spec = fir.FirSpec("lowpass", 1000, 1100, 0.1, 60)
    with pytest.raises(DesignError, match=r"taps: 16385 taps is above the limit of 16383"):
        fir.equiripple_fir(spec, 48000, 16385)


def test_compare_max_taps_beyond_remez_limit_is_one_line(write_project, capsys):
    d = _fir("window", taps=255)
    rc = main(["compare", str(write_project(json.loads(json.dumps(d)))), "--max-taps", "32767"])
    err = capsys.readouterr().err
    assert "Traceback" not in err
    assert rc == 2 and "max_taps: 32767 taps is above the limit of 16383 taps for the remez" \
        in err


def test_many_bands_take_fewer_points():
    # 2016 pairs of 64 bands: 2**23 // 2016 = 4161 points at most (config.MAX_PAIR_POINTS).
    d = two_way()
    d["bands"] = _bands(64)
    d["analysis"]["points"] = 4162
    with pytest.raises(ProjectError, match=r"analysis.points: 4162 points is more than the 4161 "
                                           r"a project of 64 bands may have"):
        project.from_dict(d)
    d["analysis"]["points"] = 4161
    project.from_dict(d)


def test_cli_points_for_many_bands_take_the_same_limit():
    d = two_way()
    d["bands"] = _bands(64)
    with pytest.raises(ProjectError, match=r"points: 5000 points is outside 16 .. 4161"):
        engine.analyse(project.from_dict(d), points=5000)
