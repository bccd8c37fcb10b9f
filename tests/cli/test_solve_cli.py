"""``crossplan align`` and ``crossplan fit``, in-process: files written, refused, exit codes."""

import json
from pathlib import Path

import pytest

from planner import project as pj
from planner.cli import main
from tests.conftest import two_way


@pytest.fixture
def offset_file(write_project):
    d = two_way(order=4, fc=2000.0)
    d["bands"][0]["delay_ms"] = 0.25
    d["my_notes"] = {"kept": True}                       # an unknown key, kept on saving
    return write_project(d, "spk.json")


def test_align_writes_a_new_file_beside_the_input_and_reports(offset_file, capsys):
    assert main(["align", str(offset_file)]) == 0
    out = capsys.readouterr().out
    assert "before" in out and "after" in out and "low: delay_ms 0.25 -> 0" in out
    new = offset_file.with_name("spk-aligned.json")
    assert f"wrote {new}" in out
    d = json.loads(new.read_text())
    assert d["my_notes"] == {"kept": True}
    assert d["bands"][0]["delay_ms"] == pytest.approx(0, abs=0.021)
    assert json.loads(offset_file.read_text())["bands"][0]["delay_ms"] == 0.25   # untouched
    assert max(len(x) for x in out.splitlines() if not x.startswith("wrote ")) <= 80


def test_align_refuses_to_replace_an_existing_result(offset_file, capsys):
    offset_file.with_name("spk-aligned.json").write_text("{}")
    assert main(["align", str(offset_file)]) == 2
    assert "exists already; use --overwrite" in capsys.readouterr().err
    assert main(["align", str(offset_file), "--overwrite"]) == 0
    assert json.loads(offset_file.read_text())["bands"][0]["delay_ms"] == pytest.approx(
        0, abs=0.021)                                    # --overwrite without --out: FILE


def test_align_json_and_nothing_written_when_nothing_is_better(write_project, capsys):
    f = write_project(pj.to_dict(pj.load_preset("fir-three-way")), "fir.json")
    assert main(["align", str(f), "--json"]) == 0
    d = json.loads(capsys.readouterr().out)
    assert d["improved"] is False and d["written"] is None and d["changes"] == []
    assert set(d["before"]) >= {"ok", "max_dev_db", "crossings", "latency_ms"}
    assert not f.with_name("fir-aligned.json").exists()


def test_align_exit_1_when_the_best_found_still_fails(write_project, capsys):
    d = two_way(order=1, family="butterworth")           # 1st order: +-90 deg at fc
    d["analysis"]["phase_deg"] = 5
    f = write_project(d, "bw1.json")
    code = main(["align", str(f), "--vary", "invert", "--out", str(f.with_name("o.json"))])
    assert code == 1
    assert "FAIL" in capsys.readouterr().out


def test_align_bad_vary_and_bounds_exit_2(offset_file, capsys):
    assert main(["align", str(offset_file), "--vary", "delay,wobble"]) == 2
    assert "vary: must be some of delay" in capsys.readouterr().err
    assert main(["align", str(offset_file), "--max-delay-ms", "-3"]) == 2
    assert main(["align", str(offset_file), "--move", "2k"]) == 2


def test_fit_graphic_eq_with_a_bank_writes_the_bank(write_project, tmp_path, capsys):
    f = write_project({"format": "crossplan-project", "version": 1, "name": "room",
                       "sample_rate": 48000, "analysis": {"f_min": 20, "f_max": 20000},
                       "bands": [{"name": "main", "filters": []}]}, "room.json")
    (tmp_path / "target.txt").write_text("20 4\n100 4\n200 0\n20000 -1\n")
    assert main(["fit", str(f), "--target", "target.txt", "--bank", "octave"]) in (0, 1)
    out = capsys.readouterr().out
    assert "largest error:" in out and "main peak 1 kHz" in out
    d = json.loads(f.with_name("room-fitted.json").read_text())
    assert [x["freq"] for x in d["bands"][0]["filters"]][:3] == [31.5, 63, 125]
    assert "Caution: start at low volume" in out        # a boost: the safety note
    assert max(len(x) for x in out.splitlines() if not x.startswith("wrote ")) <= 80


def test_fit_split_json(offset_file, capsys):
    d = json.loads(offset_file.read_text())
    d["bands"][0]["delay_ms"] = 0
    d["bands"][1]["gain_db"] = 3
    offset_file.write_text(json.dumps(d))
    assert main(["fit", str(offset_file), "--target", "flat", "--split", "--json"]) == 0
    r = json.loads(capsys.readouterr().out)
    assert [g["field"] for g in r["gains"]] == ["bands[0].gain_db", "bands[1].gain_db"]
    assert abs(r["after"]["max_error_db"]) < 0.1
    assert r["written"].endswith("spk-fitted.json")


def test_fit_refusals_exit_2(offset_file, capsys):
    assert main(["fit", str(offset_file), "--target", "flat"]) == 2
    assert "no EQ gains to fit" in capsys.readouterr().err
    assert main(["fit", str(offset_file), "--target", "flat", "--bands", "mid"]) == 2
    assert "no band named 'mid'; the bands are low, high" in capsys.readouterr().err
    assert main(["fit", str(offset_file), "--target", "tilt:big"]) == 2


def test_fit_without_target_follows_the_projects_target(offset_file, capsys):
    # No --target: the project's analysis.target (flat when it has none), as align does.
    d = json.loads(offset_file.read_text())
    d["bands"][0]["delay_ms"] = 0
    d["bands"][1]["gain_db"] = 3
    offset_file.write_text(json.dumps(d))

    def gains(*extra):
        out = str(offset_file.with_name("out.json"))
        code = main(["fit", str(offset_file), "--split", "--json", "--out", out, "--overwrite",
                     *extra])
        assert code in (0, 1)            # 1: the fit is not within the limits
        return json.loads(capsys.readouterr().out)["gains"]

    flat = gains()
    assert flat == gains("--target", "flat")
    d["analysis"] = {**d.get("analysis", {}), "target": "tilt:-1"}
    offset_file.write_text(json.dumps(d))
    tilted = gains()
    assert tilted == gains("--target", "tilt:-1")
    assert tilted != flat


def test_a_result_written_elsewhere_still_finds_its_driver_files(tmp_path, capsys):
    (tmp_path / "drv").mkdir()
    lines = "\n".join(f"{f:g} 0" for f in (10, 100, 1000, 10000, 30000))
    (tmp_path / "drv" / "w.txt").write_text(lines)
    d = two_way(order=4, fc=2000.0)
    d["bands"][0]["driver"] = {"file": "drv/w.txt"}
    d["bands"][0]["delay_ms"] = 0.2
    src = tmp_path / "a" / "spk.json"
    src.parent.mkdir()
    d["bands"][0]["driver"]["file"] = "../drv/w.txt"
    src.write_text(json.dumps(d))
    out = tmp_path / "b" / "deeper" / "spk2.json"
    out.parent.mkdir(parents=True)
    assert main(["align", str(src), "--out", str(out)]) == 0
    written = json.loads(out.read_text())
    assert written["bands"][0]["driver"]["file"] == "../../drv/w.txt"
    assert pj.load(out).bands[0].driver is not None      # and it loads from there
    assert Path(out.parent / written["bands"][0]["driver"]["file"]).exists()


def test_align_follows_the_projects_own_target_unless_told_otherwise(write_project, capsys):
    # The check holds the sum to analysis.target, so align does too by default; a -1 dB
    # per octave tilt about 1 kHz leans the trims (the tweeter down), a flat one does not.
    d = two_way(order=4, fc=2000.0)
    d["analysis"]["target"] = "tilt:-1"
    f = write_project(d, "tilted.json")
    args = ["align", str(f), "--vary", "gain", "--trim-db", "6", "--overwrite", "--out"]
    main(args + [str(f.with_name("own.json"))])
    own = json.loads(f.with_name("own.json").read_text())["bands"]
    assert own[1].get("gain_db", 0) < own[0].get("gain_db", 0) - 1.0
    assert "tilt:-1" in capsys.readouterr().out
    main(args + [str(f.with_name("flat.json")), "--target", "flat"])
    # An LR4 pair already sums flat: no trim does better, so nothing is written.
    assert not f.with_name("flat.json").exists()


def test_align_takes_its_defaults_from_the_files_solve_section(offset_file, capsys):
    # solve.vary ["invert"]: the 0.25 ms offset stays; --vary on the command line wins.
    d = json.loads(offset_file.read_text())
    d["solve"] = {"vary": ["invert"]}
    offset_file.write_text(json.dumps(d))
    out = offset_file.with_name("o.json")
    assert main(["align", str(offset_file), "--json", "--out", str(out)]) in (0, 1)
    r = json.loads(capsys.readouterr().out)
    assert r["changes"] == ["high: invert false -> true"]    # 0.25 ms is 180 deg at 2 kHz
    assert main(["align", str(offset_file), "--json", "--out", str(out), "--overwrite",
                 "--vary", "delay,invert"]) == 0
    capsys.readouterr()
    assert json.loads(out.read_text())["bands"][0]["delay_ms"] == pytest.approx(0, abs=0.021)
    assert json.loads(out.read_text())["solve"]["vary"] == ["invert"]    # kept as written


def test_fit_takes_its_gain_limit_from_the_file_and_the_option_wins(write_project, capsys):
    # Against a tilt of -1 dB per octave the tweeter's EQ wants about -5 dB.
    d = pj.to_dict(pj.load_preset("two-way"))
    d["analysis"]["target"] = "tilt:-1"
    d["solve"] = {"limit_db": 0.5}
    f = write_project(d, "tw.json")
    out = f.with_name("o.json")
    main(["fit", str(f), "--json", "--out", str(out)])
    capsys.readouterr()
    assert json.loads(out.read_text())["bands"][1]["filters"][1]["gain_db"] == -0.5
    main(["fit", str(f), "--json", "--out", str(out), "--overwrite", "--limit-db", "12"])
    capsys.readouterr()
    assert json.loads(out.read_text())["bands"][1]["filters"][1]["gain_db"] < -4
