"""Errors a user can cause end in one line in crossplan's words, never a traceback.

Sources: the exit codes of planner.cli (2 invalid input, 130 Ctrl-C: 128 + SIGINT, the
shell's convention); RFC 8259 sec. 7-8 (JSON ``\\uXXXX`` escapes may spell a lone
surrogate, which is no Unicode character); POSIX errno names (EISDIR, ENOTDIR, EACCES).
"""

import io
import json
import sys

import numpy as np
import pytest
from scipy.io import wavfile

from planner import cli
from planner.cli import main
from tests.conftest import two_way


def _one_line_error(capsys, *argv, code=2):
    rc = main([str(a) for a in argv])
    err = capsys.readouterr().err
    assert rc == code, err
    lines = err.splitlines()
    if argv[0] == "export" and len(lines) == 2:
        # export ends every run with one line saying whether anything was written
        assert lines[1].startswith("nothing written: "), err
        lines = lines[:1]
    assert "Traceback" not in err and len(lines) == 1 and err.endswith("\n"), err
    return err


def _with(field_path, value_text):
    """two_way() as JSON text with the value at ``field_path`` replaced by ``value_text``."""
    d = two_way()
    o = d
    for k in field_path[:-1]:
        o = o[k]
    o[field_path[-1]] = "@@"
    return json.dumps(d).replace('"@@"', value_text)


@pytest.mark.parametrize("path,value,expected", [
    (("bands", 0, "filters", 0, "order"), str(10 ** 400), r"bands\[0\]\.filters\[0\]\.order: "
                                                        r"must be a finite number, not 1000"),
    (("bands", 0, "filters", 0, "freq"), "1e400", r"bands\[0\]\.filters\[0\]\.freq: must be a "
                                                 r"finite number, not inf"),
    (("bands", 0, "gain_db"), str(10 ** 400), r"bands\[0\]\.gain_db: must be a finite number, "
                                              r"not 1000.*\(too large\)"),
    (("bands", 1, "delay_ms"), "-" + "9" * 400, r"bands\[1\]\.delay_ms: must be a finite number"),
    (("sample_rate",), str(10 ** 400), r"sample_rate: must be a finite number"),
    (("analysis", "points"), str(10 ** 400), r"analysis\.points: must be a finite number"),
])
def test_huge_numbers_refused_with_the_field(write_project, capsys, path, value, expected):
    import re

    err = _one_line_error(capsys, "check", write_project(_with(path, value)))
    assert re.search(expected, err), err


def test_lone_surrogate_in_a_band_name_refused_at_load(write_project, capsys):
    text = json.dumps(two_way()).replace('"low"', '"lo\\ud800w"')
    err = _one_line_error(capsys, "check", write_project(text))
    assert "bands[0].name: 'lo\\ud800w' holds a lone surrogate" in err


def test_text_the_terminal_cannot_encode_is_escaped(write_project, monkeypatch):
    d = two_way()
    d["bands"][0]["name"] = "低音"
    p = write_project(d)
    buf = io.BytesIO()
    monkeypatch.setattr(sys, "stdout", io.TextIOWrapper(buf, encoding="ascii"))
    assert main(["check", str(p)]) == 0
    sys.stdout.flush()
    assert "\\u4f4e\\u97f3" in buf.getvalue().decode("ascii")


@pytest.mark.parametrize("fmt", ["json", "csv", "text", "wav"])
def test_raw_biquad_exports_in_every_format(write_project, tmp_path, capsys, fmt):
    d = two_way()
    d["bands"][1]["filters"].append({"type": "biquad", "rate": 48000,
                                     "coeffs": [0.5, -0.4, 0.1, -0.3, 0.05]})
    rc = main(["export", str(write_project(d)), "--format", fmt, "--out", str(tmp_path / "o")])
    # Exit 1: the added section makes the sum miss the flatness check; the files are written.
    assert rc == 1 and "Traceback" not in capsys.readouterr().err
    assert (tmp_path / "o" / "test-2-way-manifest.json").exists()


def test_unstable_raw_biquad_refused_in_one_line(write_project, tmp_path, capsys):
    d = two_way()
    d["bands"][1]["filters"].append({"type": "biquad", "rate": 48000, "coeffs": [1, 0, 0, 0, 1.5]})
    err = _one_line_error(capsys, "export", write_project(d), "--out", tmp_path / "o")
    assert "bands[1].filters[1].coeffs: section 1 has a pole at radius 1.22" in err


def test_export_into_a_file_refused(write_project, tmp_path, capsys):
    (tmp_path / "afile").write_text("x")
    err = _one_line_error(capsys, "export", write_project(two_way()), "--out", tmp_path / "afile")
    assert f"out: cannot make the folder '{tmp_path / 'afile'}': is a file, where a folder" in err


def test_export_over_a_folder_refused(write_project, tmp_path, capsys):
    (tmp_path / "o" / "test-2-way-48000.json").mkdir(parents=True)
    err = _one_line_error(capsys, "export", write_project(two_way()), "--out", tmp_path / "o")
    assert "test-2-way-48000.json': is a folder, where a file is expected" in err


def test_render_into_a_file_refused(write_project, tmp_path, capsys):
    (tmp_path / "afile").write_text("x")
    err = _one_line_error(capsys, "render", write_project(two_way()), "--impulse", "--out",
                          tmp_path / "afile")
    assert "is a file, where a folder is expected" in err


def test_render_a_folder_as_input_refused(write_project, tmp_path, capsys):
    err = _one_line_error(capsys, "render", write_project(two_way()), tmp_path, "--out",
                          tmp_path / "o")
    assert "is a folder, not a WAV file" in err


def test_check_a_folder_refused(tmp_path, capsys):
    err = _one_line_error(capsys, "check", tmp_path)
    assert "file: cannot read" in err


def test_new_over_a_folder_refused(tmp_path, capsys):
    (tmp_path / "d").mkdir()
    err = _one_line_error(capsys, "new", tmp_path / "d", "--force")
    assert f"'{tmp_path / 'd'}': is a folder, where a file is expected" in err


def test_new_below_a_file_refused(tmp_path, capsys):
    (tmp_path / "afile").write_text("x")
    err = _one_line_error(capsys, "new", tmp_path / "afile" / "n.json")
    assert "a part of the path is a file, where a folder is expected" in err


def test_measure_out_a_folder_refused(write_project, tmp_path, capsys):
    assert main(["render", str(write_project(two_way())), "--sweep", "--seconds", "1",
                 "--out", str(tmp_path)]) == 0
    capsys.readouterr()
    (tmp_path / "d").mkdir()
    rc = main(["measure", str(tmp_path / "sweep.wav"), "--sweep", str(tmp_path / "sweep.wav"),
               "--out", str(tmp_path / "d"), "--gate-ms", "0.5"])
    err = capsys.readouterr().err
    assert rc == 2 and "Traceback" not in err
    assert err.splitlines()[-1] == f"crossplan: '{tmp_path / 'd'}': is a folder, where a file " \
                                   "is expected"


def _peaking():
    d = two_way()
    d["bands"][1]["filters"].append({"type": "peaking", "freq": 5000, "gain_db": 3, "q": 1})
    return d


@pytest.mark.parametrize("cmd,project", [(["align"], two_way(invert=True)),
                                         (["fit", "--target", "flat"], _peaking())])
def test_solvers_out_a_folder_refused(write_project, tmp_path, capsys, cmd, project):
    (tmp_path / "d").mkdir()
    err = _one_line_error(capsys, *cmd, write_project(project), "--out", tmp_path / "d",
                          "--overwrite")
    assert f"'{tmp_path / 'd'}': is a folder, where a file is expected" in err


def test_read_only_folder_refused(write_project, tmp_path, capsys, monkeypatch):
    # The tests may run as root, for whom chmod does not stop writes: the refusal the
    # system gives is stood in for by the same PermissionError at the temporary file.
    import errno
    import os

    real_open = os.open

    def refuse(path, flags, *a, **k):
        if str(path).endswith(".tmp") and flags & os.O_CREAT:
            raise PermissionError(errno.EACCES, os.strerror(errno.EACCES), str(path))
        return real_open(path, flags, *a, **k)

    monkeypatch.setattr(os, "open", refuse)
    err = _one_line_error(capsys, "export", write_project(two_way()), "--out", tmp_path / "o")
    assert "test-2-way-48000.json': permission denied" in err


def test_ctrl_c_during_start_up_is_one_line_and_130(monkeypatch, capsys):
    def interrupted(name, *a):
        raise KeyboardInterrupt

    monkeypatch.setattr(cli.importlib, "import_module", interrupted)
    rc = main(["check", "x.json"])
    assert rc == 130 and capsys.readouterr().err == "crossplan: interrupted\n"


def test_long_input_name_shortened_with_a_hash(write_project, tmp_path, capsys):
    long_a, long_b = "a" * 240 + "1", "a" * 240 + "2"
    for n in (long_a, long_b):
        wavfile.write(tmp_path / f"{n}.wav", 48000, np.zeros(480, dtype=np.float32))
        assert main(["render", str(write_project(two_way())), str(tmp_path / f"{n}.wav"),
                     "--out", str(tmp_path / "o")]) == 0
    names = sorted(p.name for p in (tmp_path / "o").iterdir())
    assert len(names) == 6 and all(len(n.encode()) < 255 for n in names)


def test_long_band_names_get_distinct_short_files(write_project, tmp_path, capsys):
    d = two_way()
    d["bands"][0]["name"] = "w" * 300 + "a"
    d["bands"][1]["name"] = "w" * 300 + "b"
    assert main(["render", str(write_project(d)), "--impulse", "--out", str(tmp_path)]) == 0
    names = sorted(p.name for p in tmp_path.iterdir() if p.suffix == ".wav")
    assert len(names) == 4 and all(len(n) < 100 for n in names)


def test_band_named_sum_keeps_the_summed_file(write_project, tmp_path, capsys):
    d = two_way()
    d["bands"][0]["name"] = "sum"
    assert main(["render", str(write_project(d)), "--impulse", "--out", str(tmp_path)]) == 0
    out = capsys.readouterr().out
    assert "impulse-sum-1.wav (band sum)" in out and "impulse-sum.wav (sum of the active" in out


def test_non_ascii_band_names_get_distinct_files(write_project, tmp_path, capsys):
    d = two_way()
    d["bands"][0]["name"], d["bands"][1]["name"] = "低音", "高音"
    assert main(["export", str(write_project(d)), "--format", "wav", "--out", str(tmp_path)]) == 0
    assert len({p.name for p in tmp_path.glob("*.wav")}) == 2


def test_out_of_memory_is_one_line(write_project, monkeypatch, capsys):
    from planner import engine

    def too_big(*a, **k):
        raise MemoryError

    monkeypatch.setattr(engine, "analyse", too_big)
    err = _one_line_error(capsys, "check", write_project(two_way()))
    assert err.startswith("crossplan: out of memory")
