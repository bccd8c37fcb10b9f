"""``crossplan export``: exit codes, messages and files, driven through planner.cli.main.

Sources: scipy.io.wavfile (reading the WAVs); numpy polynomial evaluation and
scipy.signal.sosfreqz (the exported JSON against the design); Oppenheim and
Schafer 3rd ed. sec. 6.7 (the fragile low-cutoff highpass).
"""

import json

import numpy as np
import pytest
from scipy import signal
from scipy.io import wavfile

from planner import engine, project
from planner.cli import main
from tests.conftest import two_way

FRAGILE = {
    "format": "crossplan-project", "version": 1, "name": "fragile", "sample_rate": 192000,
    "analysis": {"f_min": 100},  # the sum (the highpass itself) is flat from here: check ok
    "bands": [{"name": "sub", "filters": [
        {"type": "highpass", "family": "butterworth", "order": 8, "freq": 30}]}]}


def test_export_json_several_rates(write_project, tmp_path, capsys):
    path = write_project(two_way())
    out = tmp_path / "out"
    assert main(["export", str(path), "--rate", "44100", "--rate", "96000", "--out",
                 str(out)]) == 0
    names = sorted(p.name for p in out.iterdir())
    assert names == ["test-2-way-44100.json", "test-2-way-96000.json", "test-2-way-manifest.json"]
    d = json.loads((out / "test-2-way-96000.json").read_text())
    assert d["sample_rate"] == 96000
    # The 96 kHz file holds the 96 kHz design (not the 48 kHz one): sosfreqz at 96 kHz.
    f = np.geomspace(20, 20000, 100)
    z = np.exp(-2j * np.pi * f / 96000)
    h = np.prod([np.polyval(r[2::-1], z) / np.polyval([r[4], r[3], 1.0], z)
                 for r in d["bands"][0]["biquads"]], axis=0)
    ref = signal.sosfreqz(engine.design_band(project.from_dict(two_way()).bands[0], 96000).sos,
                          worN=f, fs=96000)[1]
    assert np.max(np.abs(h - ref)) < 1e-9  # float64: 1e-9
    assert "wrote" in capsys.readouterr().out


def test_export_default_rate_is_the_projects(write_project, tmp_path):
    assert main(["export", str(write_project(two_way())), "--out", str(tmp_path)]) == 0
    assert (tmp_path / "test-2-way-48000.json").exists()


@pytest.mark.parametrize("fmt,ext", [("csv", "csv"), ("text", "txt")])
def test_export_csv_and_text_files(write_project, tmp_path, fmt, ext):
    assert main(["export", str(write_project(two_way())), "--format", fmt,
                 "--out", str(tmp_path)]) == 0
    assert (tmp_path / f"test-2-way-48000.{ext}").exists()


def test_export_wav_readable_float32(write_project, tmp_path):
    assert main(["export", str(write_project(two_way())), "--format", "wav", "--rate", "44100",
                 "--out", str(tmp_path)]) == 0
    wavs = sorted(tmp_path.glob("*.wav"))
    assert [p.name for p in wavs] == ["test-2-way-44100-high.wav", "test-2-way-44100-low.wav"]
    for p in wavs:
        rate, h = wavfile.read(p)
        assert rate == 44100 and h.dtype == np.float32


def test_export_nyquist_exit_2_names_band_and_filter(write_project, tmp_path, capsys):
    assert main(["export", str(write_project(two_way(fc=2000))), "--rate", "4000",
                 "--out", str(tmp_path)]) == 2
    err = capsys.readouterr().err
    assert "band 'low', filter 1 (LR4 lowpass 2 kHz) at 4000 Hz" in err
    assert "Traceback" not in err


def test_export_fragile_q1_15_exit_3_names_band_and_section(write_project, tmp_path, capsys):
    assert main(["export", str(write_project(FRAGILE)), "--arith", "q1.15",
                 "--out", str(tmp_path / "o")]) == 3
    cap = capsys.readouterr()
    assert "band 'sub' section 1: q1.15 cannot hold the design at 192000 Hz" in cap.err
    assert cap.err.splitlines()[-1] == ("nothing written: q1.15 cannot hold band 'sub' at "
                                        "192000 Hz")
    assert "try: " in cap.out and "q2.30 holds this design" in cap.out
    assert not (tmp_path / "o").exists()


def test_export_fragile_float64_exit_0(write_project, tmp_path):
    assert main(["export", str(write_project(FRAGILE)), "--arith", "float64",
                 "--out", str(tmp_path)]) == 0


def test_export_bad_arith_exit_2(write_project, tmp_path, capsys):
    assert main(["export", str(write_project(two_way())), "--arith", "q0.5x",
                 "--out", str(tmp_path)]) == 2
    assert "arith: 'q0.5x' is not a known format" in capsys.readouterr().err


def test_export_negate_feedback_and_pre_attenuate_keys(write_project, tmp_path):
    assert main(["export", str(write_project(two_way())), "--negate-feedback", "--pre-attenuate",
                 "--out", str(tmp_path)]) == 0
    d = json.loads((tmp_path / "test-2-way-48000.json").read_text())
    assert d["negated_feedback"] is True and d["denominator"] == "1 - a1 z^-1 - a2 z^-2"
    m = json.loads((tmp_path / "test-2-way-manifest.json").read_text())
    assert m["negated_feedback"] is True and m["pre_attenuate"] is True


def test_export_check_failure_exit_1_files_written(write_project, tmp_path, capsys):
    # An LR2 pair without inversion cancels at the crossover: the check fails.
    assert main(["export", str(write_project(two_way(2))), "--out", str(tmp_path)]) == 1
    last = capsys.readouterr().err.splitlines()[-1]
    # 20 log10 |H_lp + H_hp| of two LR2 at their shared frequency: |1/2 - 1/2|... the pair
    # cancels there (Linkwitz and Riley 1976), a deep dip the line names with its limit.
    assert last.startswith(f"wrote 2 files (json and the manifest) to {tmp_path}; check failed "
                           "at 48000 Hz: sum ")
    assert "(limit +/-1 dB)" in last
    assert (tmp_path / "test-2-way-manifest.json").exists()


def test_check_arith_q1_15_fails_per_band(write_project, capsys):
    assert main(["check", str(write_project(FRAGILE)), "--arith", "q1.15"]) == 1
    out = capsys.readouterr().out
    assert "arithmetic q1.15 at 192000 Hz" in out and "FAIL sub: max coefficient error" in out
    assert "band 'sub', section 1: q1.15 cannot hold the design" in out
    assert "peak internal gain" in out and "min stability margin" in out


def test_check_arith_float64_ok(write_project, capsys):
    assert main(["check", str(write_project(FRAGILE)), "--arith", "float64"]) == 0
    assert "ok   sub: max coefficient error 0" in capsys.readouterr().out


def test_check_arith_json(write_project, capsys):
    assert main(["check", str(write_project(FRAGILE)), "--arith", "q2.30", "--json"]) in (0, 1)
    d = json.loads(capsys.readouterr().out)
    b = d["arith"]["bands"][0]
    assert d["arith"]["format"] == "q2.30" and b["name"] == "sub"
    assert {"max_coef_error", "deviation_db", "deviation_at_hz", "pole_radius",
            "overflow_sections", "peak_internal_gain_db", "ok"} <= set(b)
    assert d["arith"]["ok"] is b["ok"]


def _with_arith(raw, arith):
    d = json.loads(json.dumps(raw))
    d["analysis"]["arith"] = arith
    return d


def test_check_uses_the_projects_target_arith(write_project, capsys):
    # analysis.arith is the default of --arith: the fragile case fails in q1.15 ...
    assert main(["check", str(write_project(_with_arith(FRAGILE, "q1.15")))]) == 1
    assert "arithmetic q1.15 at 192000 Hz" in capsys.readouterr().out


def test_check_arith_flag_overrides_the_projects(write_project, capsys):
    # ... and --arith float64 on the command line replaces it (and passes).
    path = write_project(_with_arith(FRAGILE, "q1.15"))
    assert main(["check", str(path), "--arith", "float64"]) == 0
    assert "arithmetic float64" in capsys.readouterr().out


def _fir_preset():

    return project.to_dict(project.load_preset("fir-three-way"))


def test_export_fir_bands_write_their_taps_exactly(write_project, tmp_path):
    # A complementary split (fir-three-way): each band's "fir" is its designed taps, no
    # biquads; the three exported tap lists sum to a delayed unit impulse (numpy sum;
    # Oppenheim and Schafer 3rd ed. ch. 7: delta minus lowpass telescopes to delta).
    raw = _fir_preset()
    assert main(["export", str(write_project(raw)), "--out", str(tmp_path / "out")]) == 0
    (f,) = [p for p in (tmp_path / "out").glob("*.json") if "manifest" not in p.name]
    data = json.loads(f.read_text())
    p = project.from_dict(raw)
    total = 0
    for b, band in zip(data["bands"], p.bands):
        assert b["biquads"] == []
        ref = engine.design_band(band, p.sample_rate).fir
        assert np.array_equal(np.asarray(b["fir"]), ref)
        total = total + np.asarray(b["fir"])
    delta = np.zeros(len(total))
    delta[(len(total) - 1) // 2] = 1.0
    assert np.max(np.abs(total - delta)) < 1e-12


def test_export_fir_wav_is_the_taps(write_project, tmp_path):
    raw = _fir_preset()
    assert main(["export", str(write_project(raw)), "--format", "wav", "--out",
                 str(tmp_path / "out")]) == 0
    p = project.from_dict(raw)
    for band in p.bands:
        (w,) = (tmp_path / "out").glob(f"*-{band.name}.wav")
        fs, h = wavfile.read(w)
        ref = engine.design_band(band, p.sample_rate).fir
        assert fs == 48000 and h.dtype == np.float32
        assert np.max(np.abs(h - ref)) < 1e-7   # float32 storage of the taps


def test_export_unmet_fir_spec_exit_3_nothing_written(write_project, tmp_path, capsys):
    raw = two_way()
    raw["bands"][0]["filters"][0] = {"type": "lowpass", "family": "fir", "method": "remez",
                                     "freq": 2200, "transition_hz": 100, "atten_db": 80,
                                     "max_taps": 101}
    assert main(["export", str(write_project(raw)), "--out", str(tmp_path / "out")]) == 3
    err = capsys.readouterr().err
    assert "max_taps 101" in err
    assert err.splitlines()[-1].startswith("nothing written: an FIR spec cannot be met")
    assert not (tmp_path / "out").exists() or not list((tmp_path / "out").glob("*.json"))


def _frac_two_way():
    # The high band 0.01 ms late: 0.48 samples at 48 kHz.
    d = two_way(4, fc=3000.0)
    d["bands"][1]["delay_ms"] = 0.01
    return d


def test_export_wav_applies_fractions_and_says_so(write_project, tmp_path, capsys):
    assert main(["export", str(write_project(_frac_two_way())), "--format", "wav",
                 "--out", str(tmp_path)]) == 0
    out = capsys.readouterr().out
    m = json.loads((tmp_path / "test-2-way-manifest.json").read_text())
    lat = m["checks"][0]["delays"]["added_latency_samples"]
    taps = m["checks"][0]["delays"]["filter"]["taps"]
    assert (f"note: at 48000 Hz fractional delays are applied by a {taps}-tap Kaiser-windowed "
            f"sinc (fraction in samples: high 0.48); every band is {lat} samples "
            f"({1000 * lat / 48000:.4g} ms) later than its delay_ms") in out


def test_export_wav_round_says_what_it_costs(write_project, tmp_path, capsys):
    # -360 * 3000 * 0.48 / 48000 = -10.8 deg at the crossing (Oppenheim and Schafer sec. 2.7).
    assert main(["export", str(write_project(_frac_two_way())), "--format", "wav",
                 "--fractional-delay", "round", "--out", str(tmp_path)]) == 0
    out = capsys.readouterr().out
    assert ("note: at 48000 Hz delays are rounded to the nearest sample (high 0.48 -> 0 "
            "samples): the phase difference low - high at 3 kHz changes by -10.8 deg; the "
            "sum's level by up to ") in out
    m = json.loads((tmp_path / "test-2-way-manifest.json").read_text())
    assert m["checks"][0]["delays"]["fractional_delay"] == "round"


def test_export_json_holds_the_exact_delay_and_notes_it(write_project, tmp_path, capsys):
    assert main(["export", str(write_project(_frac_two_way())), "--fractional-delay", "round",
                 "--out", str(tmp_path)]) == 0
    cap = capsys.readouterr()
    assert "--fractional-delay is for --format wav" in cap.err
    assert "note: at 48000 Hz delay_samples is written exactly (high 0.48)" in cap.out
    d = json.loads((tmp_path / "test-2-way-48000.json").read_text())
    assert d["bands"][1]["delay_samples"] == pytest.approx(0.48, abs=1e-12)


def test_export_bad_fractional_mode_exit_2(write_project, tmp_path, capsys):
    assert main(["export", str(write_project(two_way())), "--fractional-delay", "floor",
                 "--out", str(tmp_path / "o")]) == 2
    err = capsys.readouterr().err
    assert "invalid choice: 'floor'" in err
    assert err.splitlines()[-1] == "nothing written: invalid usage (exit 2)"
    assert not (tmp_path / "o").exists()


def test_export_ok_ends_in_one_line_saying_what_it_wrote(write_project, tmp_path, capsys):
    out = tmp_path / "o"
    assert main(["export", str(write_project(two_way())), "--rate", "44100", "--rate", "48000",
                 "--out", str(out)]) == 0
    last = capsys.readouterr().out.splitlines()[-1]
    assert last == f"wrote 3 files (json and the manifest) to {out}; every check passes"
    assert len(list(out.iterdir())) == 3


def test_export_nyquist_ends_nothing_written(write_project, tmp_path, capsys):
    assert main(["export", str(write_project(two_way(fc=2000))), "--rate", "4000",
                 "--out", str(tmp_path / "o")]) == 2
    last = capsys.readouterr().err.splitlines()[-1]
    assert last.startswith("nothing written: ") and "Nyquist" in last
    assert not (tmp_path / "o").exists()


def test_export_invalid_project_exit_2_nothing_written(write_project, tmp_path, capsys):
    raw = two_way()
    raw["bands"][0]["filters"][0]["freq"] = -5
    assert main(["export", str(write_project(raw)), "--out", str(tmp_path / "o")]) == 2
    assert capsys.readouterr().err.splitlines()[-1] == ("nothing written: the project is "
                                                        "invalid (above)")
    assert not (tmp_path / "o").exists()


def test_export_help_lists_the_exit_codes(capsys):
    assert main(["export", "--help"]) == 0
    out = capsys.readouterr().out
    for line in ("0  files written; every check passes", "1  files written (and the manifest)",
                 "2  nothing written: invalid input", "3  nothing written: the design cannot"):
        assert line in out


def test_export_wav_names_each_bands_file(write_project, tmp_path, capsys):
    # Woofer and woofer, and a 308-character name: distinct files, each named in the output.
    long = ("a very long band name " * 14).strip()   # names are stripped on loading
    names = ["Woofer", "woofer", long]
    raw = {"format": "crossplan-project", "version": 1, "name": "n", "sample_rate": 48000,
           # Three filterless bands at a third each (20 log10(1/3) dB) sum to 0 dB: check ok.
           "bands": [{"name": x, "gain_db": 20 * np.log10(1 / 3), "filters": []}
                     for x in names]}
    assert main(["export", str(write_project(raw)), "--format", "wav",
                 "--out", str(tmp_path)]) == 0
    cap = capsys.readouterr()
    assert "Traceback" not in cap.err
    for i, x in enumerate(names):
        line = next(l for l in cap.out.splitlines() if l.endswith(f"(band {x}, 48000 Hz)"))
        path = line[len("wrote "):-len(f" (band {x}, 48000 Hz)")]
        assert wavfile.read(path)[0] == 48000
    assert len(list(tmp_path.glob("*.wav"))) == 3


def test_export_several_formats_one_run(write_project, tmp_path, capsys):
    assert main(["export", str(write_project(two_way())), "--format", "json,csv",
                 "--format", "text", "--out", str(tmp_path / "o")]) == 0
    assert sorted(p.name for p in (tmp_path / "o").iterdir()) == [
        "test-2-way-48000.csv", "test-2-way-48000.json", "test-2-way-48000.txt",
        "test-2-way-manifest.json"]
    assert capsys.readouterr().out.splitlines()[-1].startswith(
        "wrote 4 files (json, csv, text and the manifest)")


def test_export_bad_format_in_a_list_exit_2(write_project, tmp_path, capsys):
    assert main(["export", str(write_project(two_way())), "--format", "json,xml",
                 "--out", str(tmp_path / "o")]) == 2
    err = capsys.readouterr().err
    assert "must be one or more of json, csv, text, wav" in err
    assert not (tmp_path / "o").exists()


def test_export_lines_say_none_for_an_exact_band_and_give_a_rounded_one_its_figures(
        write_project, tmp_path, capsys):
    # In float64 the bands are the design itself: "no deviation" and "no error", not a
    # deviation of 0 dB at an arbitrary frequency or the dB function's floor (-6000 dB).
    p = write_project(two_way())
    assert main(["export", str(p), "--arith", "float64", "--out", str(tmp_path / "a")]) == 0
    out = capsys.readouterr().out
    assert "no deviation within 40 dB of the peak, no error below it" in out
    assert "e+03 dB" not in out
    assert main(["export", str(p), "--arith", "q1.31", "--out", str(tmp_path / "b")]) == 0
    out = capsys.readouterr().out
    assert "no deviation" not in out and " dB re peak below it" in out
