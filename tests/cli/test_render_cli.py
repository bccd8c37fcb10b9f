"""``crossplan render``: files, refusals and the safety note, through planner.cli.main.

Sources: scipy.io.wavfile (reading every WAV written); the exported WAV
impulse responses (``crossplan export --format wav``) as the reference for
rendered impulses; Farina, AES 2000 (the sweep's sidecar holds f1 and f2).
"""

import json
import re

import numpy as np
import pytest
from scipy.io import wavfile

from planner.cli import main
from planner.present.text import SAFETY_NOTE
from tests.conftest import two_way


def test_render_impulse_equals_exported_wav(write_project, tmp_path, capsys):
    d = two_way()
    for b in d["bands"]:
        b["delay_ms"] = 0.5   # 24 samples (both bands: the sum still checks ok)
    path = str(write_project(d))
    assert main(["render", path, "--impulse", "--seconds", "1", "--out", str(tmp_path / "r")]) == 0
    assert SAFETY_NOTE in capsys.readouterr().out
    assert main(["export", path, "--format", "wav", "--out", str(tmp_path / "e")]) == 0
    for band in ("low", "high"):
        rate, y = wavfile.read(tmp_path / "r" / f"impulse-{band}.wav")
        rate_h, h = wavfile.read(tmp_path / "e" / f"test-2-way-48000-{band}.wav")
        assert rate == rate_h == 48000 and y.dtype == h.dtype == np.float32
        # The impulse is at -20 dBFS (0.1): rendered / 0.1 is the impulse response,
        # equal to float32 rounding of both files (1e-6 of the peak).
        np.testing.assert_allclose(y[:len(h)] / np.float32(0.1), h, rtol=0,
                                   atol=1e-6 * np.max(np.abs(h)))


def test_render_sweep_writes_sidecar_and_outputs(write_project, tmp_path):
    out = tmp_path / "s"
    assert main(["render", str(write_project(two_way())), "--sweep", "--seconds", "1",
                 "--f1", "30", "--out", str(out)]) == 0
    meta = json.loads((out / "sweep.json").read_text())
    assert meta["f1_hz"] == 30 and meta["f2_hz"] == 20000 and meta["sample_rate"] == 48000
    for name in ("sweep", "sweep-low", "sweep-high", "sweep-sum"):
        rate, x = wavfile.read(out / f"{name}.wav")
        assert rate == 48000 and x.dtype == np.float32 and len(x) == 48000
    _, x = wavfile.read(out / "sweep.wav")
    assert abs(np.max(np.abs(x)) - 0.1) < 1e-3  # -20 dBFS peak (default level)


def test_render_noise_level_is_rms(write_project, tmp_path):
    assert main(["render", str(write_project(two_way())), "--noise", "--seconds", "1",
                 "--level-db", "-30", "--seed", "1", "--out", str(tmp_path)]) == 0
    _, x = wavfile.read(tmp_path / "noise.wav")
    # -30 dBFS RMS = 0.0316; float32 rounding only.
    assert abs(np.sqrt(np.mean(x.astype(float) ** 2)) - 10 ** (-30 / 20)) < 1e-6


def test_render_input_file(write_project, tmp_path):
    x = np.random.default_rng(0).standard_normal((4800, 2)).astype(np.float32) * 0.1
    wavfile.write(tmp_path / "in.wav", 48000, x)
    assert main(["render", str(write_project(two_way())), str(tmp_path / "in.wav"),
                 "--out", str(tmp_path / "o")]) == 0
    rate, y = wavfile.read(tmp_path / "o" / "in-sum.wav")
    assert rate == 48000 and y.shape == (4800, 2) and y.dtype == np.float32


def test_render_refuses_input_at_another_rate(write_project, tmp_path, capsys):
    wavfile.write(tmp_path / "in.wav", 44100, np.zeros(100, dtype=np.float32))
    assert main(["render", str(write_project(two_way())), str(tmp_path / "in.wav"),
                 "--out", str(tmp_path / "o"), "--rate", "48000", "--rate", "96000"]) == 2
    assert ("rate: the input is at 44100 Hz but the design is made for 48000, 96000 Hz"
            in capsys.readouterr().err)


def test_render_input_at_a_second_designed_rate(write_project, tmp_path):
    wavfile.write(tmp_path / "in.wav", 96000, np.zeros(100, dtype=np.float32))
    assert main(["render", str(write_project(two_way())), str(tmp_path / "in.wav"),
                 "--out", str(tmp_path / "o"), "--rate", "48000", "--rate", "96000"]) == 0


def test_render_needs_input_or_signal(write_project, tmp_path, capsys):
    assert main(["render", str(write_project(two_way())), "--out", str(tmp_path)]) == 2
    assert "give either IN.wav or one of --sweep, --impulse, --noise" in capsys.readouterr().err


def test_render_level_above_full_scale_refused(write_project, tmp_path, capsys):
    assert main(["render", str(write_project(two_way())), "--noise", "--level-db", "3",
                 "--out", str(tmp_path)]) == 2
    assert "level_db: 3 dBFS is above full scale" in capsys.readouterr().err


def test_render_no_progress_bar_when_not_a_tty(write_project, tmp_path, capsys):
    assert main(["render", str(write_project(two_way())), "--noise", "--seconds", "6",
                 "--out", str(tmp_path)]) == 0
    assert "[" not in capsys.readouterr().err


def _frac_two_way():
    d = two_way(4, fc=3000.0)
    d["bands"][1]["delay_ms"] = 0.01   # 0.48 samples at 48 kHz
    return d


def test_render_impulse_with_a_fraction_equals_the_exported_wav(write_project, tmp_path, capsys):
    # Both apply the fraction with the same filter and the same added latency: the
    # rendered impulse / 0.1 equals the exported WAV to float32 rounding.
    path = str(write_project(_frac_two_way()))
    assert main(["render", path, "--impulse", "--out", str(tmp_path / "r")]) == 0
    out = capsys.readouterr().out
    assert "note: at 48000 Hz fractional delays are applied by a " in out
    assert main(["export", path, "--format", "wav", "--out", str(tmp_path / "e")]) == 0
    for band in ("low", "high"):
        _, y = wavfile.read(tmp_path / "r" / f"impulse-{band}.wav")
        _, h = wavfile.read(tmp_path / "e" / f"test-2-way-48000-{band}.wav")
        np.testing.assert_allclose(y[:len(h)] / np.float32(0.1), h, rtol=0,
                                   atol=1e-6 * np.max(np.abs(h)))


def test_render_round_says_what_it_costs(write_project, tmp_path, capsys):
    assert main(["render", str(write_project(_frac_two_way())), "--impulse",
                 "--fractional-delay", "round", "--out", str(tmp_path)]) == 0
    out = capsys.readouterr().out
    # -360 * 3000 * 0.48 / 48000 = -10.8 deg (Oppenheim and Schafer sec. 2.7).
    assert ("note: at 48000 Hz delays are rounded to the nearest sample (high 0.48 -> 0 "
            "samples): the phase difference low - high at 3 kHz changes by -10.8 deg") in out
    _, y = wavfile.read(tmp_path / "impulse-high.wav")
    assert y[0] != 0.0   # 0.48 rounds to 0: the highpass answers at once


def test_render_whole_delays_print_no_note(write_project, tmp_path, capsys):
    assert main(["render", str(write_project(two_way())), "--impulse",
                 "--out", str(tmp_path)]) == 0
    assert "note:" not in capsys.readouterr().out


LONG = "a very long band name " * 14          # 308 characters


def _named(names):
    """Filterless bands: each one's output is its input times 10^(gain/20), gain -1, -2, ..."""
    return {"format": "crossplan-project", "version": 1, "name": "names", "sample_rate": 48000,
            "bands": [{"name": n, "gain_db": -1.0 * (i + 1), "filters": []}
                      for i, n in enumerate(names)]}


@pytest.mark.parametrize("names", [["Woofer", "woofer"], ["mid range", "mid-range"],
                                   ["sum", "low"], ["Твитер", "低音", "ウーファー"],
                                   [LONG + "woofer", LONG + "tweeter"]])
def test_render_gives_every_band_and_the_sum_their_own_file(write_project, tmp_path, capsys,
                                                            names):
    # Each band file holds its band (impulse 0.1 times its gain) and the sum file the sum;
    # the output says which file is which band.
    out = tmp_path / "o"
    assert main(["render", str(write_project(_named(names))), "--impulse", "--seconds", "0.01",
                 "--out", str(out)]) == 0
    text = capsys.readouterr().out
    wrote = dict(re.findall(r"^wrote (\S+) \((band .*|sum of the active bands)\)$", text,
                            flags=re.M))
    assert len(wrote) == len(names) + 1 == len(list(out.glob("impulse-*.wav")))
    by_band = {v[len("band "):]: k for k, v in wrote.items() if v.startswith("band ")}
    assert sorted(by_band) == sorted(names)
    total = 0.0
    for i, n in enumerate(names):
        _, y = wavfile.read(by_band[n])
        assert y[0] == pytest.approx(0.1 * 10 ** (-(i + 1) / 20), rel=1e-6)   # float32
        total += 0.1 * 10 ** (-(i + 1) / 20)
    (sum_file,) = [k for k, v in wrote.items() if v.startswith("sum")]
    assert sum_file.endswith("impulse-sum.wav")
    _, s = wavfile.read(sum_file)
    assert s[0] == pytest.approx(total, rel=1e-6)


def test_render_guard_stops_a_colliding_run(write_project, tmp_path, capsys, monkeypatch):
    from planner import export

    monkeypatch.setattr(export, "band_file_stems", lambda names, reserved=(): ["sum"] * len(names))
    assert main(["render", str(write_project(_named(["a"]))), "--impulse",
                 "--out", str(tmp_path / "o")]) == 2
    err = capsys.readouterr().err
    assert re.search(r"impulse-sum\.wav' would be written twice in one run, for band 'a' and "
                     r"for the sum", err), err
    assert not (tmp_path / "o").exists()


def test_render_refuses_nan_input_and_writes_nothing(write_project, tmp_path, capsys):
    x = np.random.default_rng(3).uniform(-0.5, 0.5, 48000).astype(np.float32)
    x[1000:1100] = np.nan
    wavfile.write(tmp_path / "nan.wav", 48000, x)
    out = tmp_path / "out"
    assert main(["render", str(write_project(two_way())), str(tmp_path / "nan.wav"),
                 "--out", str(out)]) == 2
    err = capsys.readouterr().err
    assert err.count("\n") == 1 and not out.exists()
    assert (f"crossplan: input: '{tmp_path / 'nan.wav'}': 100 sample(s) are not finite (NaN "
            "or infinite), the first at sample 1000 of channel 0") in err


def test_render_truncated_header_one_line(write_project, tmp_path, capsys):
    wavfile.write(tmp_path / "ok.wav", 48000, np.zeros(100, dtype=np.float32))
    (tmp_path / "cut.wav").write_bytes((tmp_path / "ok.wav").read_bytes()[:30])
    assert main(["render", str(write_project(two_way())), str(tmp_path / "cut.wav"),
                 "--out", str(tmp_path / "out")]) == 2
    err = capsys.readouterr().err
    assert err.count("\n") == 1 and "cannot read" in err and "fmt chunk is cut short" in err


def test_render_header_longer_than_data_warns_in_its_own_words(write_project, tmp_path, capsys):
    import struct

    wavfile.write(tmp_path / "ok.wav", 48000, np.zeros(4800, dtype=np.float32))
    b = bytearray((tmp_path / "ok.wav").read_bytes())
    i = b.find(b"data")
    b[i + 4:i + 8] = struct.pack("<I", 10 * len(b))
    (tmp_path / "long.wav").write_bytes(bytes(b))
    assert main(["render", str(write_project(two_way())), str(tmp_path / "long.wav"),
                 "--out", str(tmp_path / "out")]) == 0
    err = capsys.readouterr().err
    assert "WavFileWarning" not in err and "warning: " in err and "the data chunk says" in err
    assert wavfile.read(tmp_path / "out" / "long-sum.wav")[1].shape == (4800,)


def test_render_refuses_a_nan_level(write_project, tmp_path, capsys):
    assert main(["render", str(write_project(two_way())), "--sweep", "--level-db", "nan",
                 "--out", str(tmp_path / "o")]) == 2
    assert "level_db: must be a finite number of dBFS, not nan" in capsys.readouterr().err
    assert not (tmp_path / "o").exists()


def test_render_refuses_a_test_signal_too_long_for_memory(write_project, tmp_path, capsys):
    assert main(["render", str(write_project(two_way())), "--noise", "--seconds", "1e9",
                 "--out", str(tmp_path / "o")]) == 2
    assert "seconds: 1e+09 s is longer than the 600 s a test signal may last" in \
        capsys.readouterr().err
