"""``crossplan measure`` on a synthetic recording of ``crossplan render --sweep``.

Sources: Farina, AES 108th Convention 2000 (exponential-sweep deconvolution);
scipy.signal.butter / sosfilt / sosfreqz (the known system and its response);
scipy.io.wavfile (the files).
"""

import numpy as np
import pytest
from scipy import signal
from scipy.io import wavfile

from planner.cli import main
from planner.dsp.measure import parse_response_text
from tests.conftest import two_way

FS = 48000
#: The known system: scipy's 4th-order Butterworth bandpass 300 Hz - 6 kHz.
SOS = signal.butter(2, [300, 6000], "bandpass", fs=FS, output="sos")
DIRECT, REFLECTION = 96, 384   # 2 ms to the microphone; a -6 dB reflection 8 ms later


def _sweep(write_project, tmp_path):
    assert main(["render", str(write_project(two_way())), "--sweep", "--seconds", "2",
                 "--out", str(tmp_path)]) == 0
    return tmp_path / "sweep.wav"


def _record(sweep_path, tmp_path, seed=1):
    _, x = wavfile.read(sweep_path)
    played = np.concatenate([x.astype(float), np.zeros(FS // 2)])
    y = signal.sosfilt(SOS, played)
    rec = np.zeros(len(played))
    rec[DIRECT:] += y[:len(played) - DIRECT]
    rec[DIRECT + REFLECTION:] += 0.5 * y[:len(played) - DIRECT - REFLECTION]
    rec += 1e-4 * np.random.default_rng(seed).standard_normal(len(rec))  # -80 dBFS noise
    p = tmp_path / "rec.wav"
    wavfile.write(p, FS, rec.astype(np.float32))
    return p


def _measured(write_project, tmp_path, *flags):
    """Sweep from ``render --sweep``, recorded through SOS, measured with ``flags``."""
    sweep = _sweep(write_project, tmp_path)
    rec = _record(sweep, tmp_path)
    out = tmp_path / "response.txt"
    assert main(["measure", str(rec), "--sweep", str(sweep), "--out", str(out), *flags]) == 0
    return parse_response_text(out.read_text())


def _error_db(r):
    """|measured - sosfreqz(SOS)| in dB from 200 Hz to 16 kHz."""
    ref = 20 * np.log10(np.abs(signal.sosfreqz(SOS, worN=r.freqs_hz, fs=FS)[1]))
    band = (r.freqs_hz >= 200) & (r.freqs_hz <= 16000)
    return np.abs(r.mag_db - ref)[band]


def test_measure_recovers_known_filter_within_half_db(write_project, tmp_path):
    r = _measured(write_project, tmp_path, "--gate-ms", "6", "--pre-ms", "1", "--fade-ms", "2")
    # The gate (7 ms) resolves ~143 Hz; from 200 Hz to 16 kHz (below the sweep's
    # 20 kHz end and fade) within 0.5 dB: the tolerance.
    assert np.max(_error_db(r)) < 0.5
    assert any("gate 1 ms before the peak to 6 ms after" in h for h in r.header)


def test_measure_without_gate_sees_the_reflection(write_project, tmp_path):
    # Control: a 300 ms window keeps the -6 dB reflection, whose comb is over 3 dB.
    assert np.max(_error_db(_measured(write_project, tmp_path, "--gate-ms", "300"))) > 3.0


def test_measure_needs_f1_f2_without_sidecar(tmp_path, capsys):
    wavfile.write(tmp_path / "s.wav", FS, np.zeros(100, dtype=np.float32))
    assert main(["measure", str(tmp_path / "s.wav"), "--sweep", str(tmp_path / "s.wav"),
                 "--out", str(tmp_path / "o.txt")]) == 2
    assert "sweep: no s.json beside the sweep: give --f1 and --f2" in capsys.readouterr().err


def test_measure_rates_must_match(write_project, tmp_path, capsys):
    sweep = _sweep(write_project, tmp_path)
    wavfile.write(tmp_path / "rec.wav", 44100, np.zeros(200000, dtype=np.float32))
    assert main(["measure", str(tmp_path / "rec.wav"), "--sweep", str(sweep),
                 "--out", str(tmp_path / "o.txt")]) == 2
    assert "the recording is at 44100 Hz but the sweep at 48000 Hz" in capsys.readouterr().err


def test_measure_flags_override_sidecar(write_project, tmp_path):
    r = _measured(write_project, tmp_path, "--f1", "20", "--f2", "20000", "--points", "50")
    assert len(r.freqs_hz) == 50


# --- inputs nothing can be measured from, and doubtful ones --------------------------------
# Rules of thumb behind the limits are in planner/config.py (common practice, no source).


def _measure(rec, sweep, tmp_path, *flags):
    out = tmp_path / "response.txt"
    rc = main(["measure", str(rec), "--sweep", str(sweep), "--out", str(out), *flags])
    return rc, out


def test_measure_refuses_nan_in_the_recording(write_project, tmp_path, capsys):
    sweep = _sweep(write_project, tmp_path)
    _, x = wavfile.read(sweep)
    rec = np.concatenate([x, np.zeros(FS // 2, dtype=np.float32)])
    rec[FS:FS + 100] = np.nan
    wavfile.write(tmp_path / "rec.wav", FS, rec)
    rc, out = _measure(tmp_path / "rec.wav", sweep, tmp_path)
    err = capsys.readouterr().err
    assert rc == 2 and not out.exists() and "Traceback" not in err
    assert f"recording: '{tmp_path / 'rec.wav'}': 100 sample(s) are not finite" in err
    assert f"the first at sample {FS} of channel 0" in err


def test_measure_refuses_inf_in_the_sweep(write_project, tmp_path, capsys):
    sweep = _sweep(write_project, tmp_path)
    rec = _record(sweep, tmp_path)
    _, x = wavfile.read(sweep)
    x[7] = np.inf
    wavfile.write(sweep, FS, x)
    rc, out = _measure(rec, sweep, tmp_path)
    err = capsys.readouterr().err
    assert rc == 2 and not out.exists()
    assert "sweep: " in err and "1 sample(s) are not finite" in err and "sample 7 of" in err


def test_measure_refuses_a_silent_recording(write_project, tmp_path, capsys):
    sweep = _sweep(write_project, tmp_path)
    wavfile.write(tmp_path / "rec.wav", FS, np.zeros(3 * FS, dtype=np.float32))
    rc, out = _measure(tmp_path / "rec.wav", sweep, tmp_path)
    assert rc == 2 and not out.exists()
    assert "recording: silent (all zero, below -90 dBFS)" in capsys.readouterr().err


def test_measure_refuses_a_recording_shorter_than_the_sweep(write_project, tmp_path, capsys):
    sweep = _sweep(write_project, tmp_path)
    _, x = wavfile.read(sweep)
    wavfile.write(tmp_path / "rec.wav", FS, x[:FS // 4])
    rc, out = _measure(tmp_path / "rec.wav", sweep, tmp_path)
    assert rc == 2 and not out.exists()
    assert "recording: 12000 samples (0.25 s) is shorter than the sweep (96000 samples" in \
        capsys.readouterr().err


def test_measure_refuses_a_ten_sample_sweep(tmp_path, capsys):
    wavfile.write(tmp_path / "s.wav", FS, np.full(10, 0.1, dtype=np.float32))
    wavfile.write(tmp_path / "r.wav", FS, np.full(1000, 0.1, dtype=np.float32))
    rc, out = _measure(tmp_path / "r.wav", tmp_path / "s.wav", tmp_path, "--f1", "20",
                       "--f2", "20000")
    assert rc == 2 and not out.exists()
    assert "sweep: 10 samples (0.208 ms) is too short for a measurement: at least 4800" in \
        capsys.readouterr().err


def test_measure_warns_of_clipping(write_project, tmp_path, capsys):
    sweep = _sweep(write_project, tmp_path)
    _, x = wavfile.read(sweep)
    rec = np.clip(np.concatenate([x, np.zeros(FS // 2, dtype=np.float32)]) * 20, -1, 1)
    wavfile.write(tmp_path / "rec.wav", FS, rec.astype(np.float32))
    rc, out = _measure(tmp_path / "rec.wav", sweep, tmp_path)
    err = capsys.readouterr().err
    assert rc == 0 and out.exists()
    assert "warning: recording:" in err and "at full scale (clipped?)" in err


def test_measure_warns_of_a_gate_past_the_recording(write_project, tmp_path, capsys):
    sweep = _sweep(write_project, tmp_path)
    rec = _record(sweep, tmp_path)
    rc, _ = _measure(rec, sweep, tmp_path, "--gate-ms", "5000")
    err = capsys.readouterr().err
    assert rc == 0
    assert "warning: gate_ms: 5000 ms after the peak keeps the room's reflections" in err
    assert "warning: gate_ms: 5000 ms runs past the end of the recording (it goes on 500 ms" \
        in err


def test_measure_default_gate_says_nothing(write_project, tmp_path, capsys):
    sweep = _sweep(write_project, tmp_path)
    rec = _record(sweep, tmp_path)
    assert _measure(rec, sweep, tmp_path)[0] == 0
    assert "warning" not in capsys.readouterr().err


def test_measure_reads_a_header_longer_than_its_data_with_a_warning(write_project, tmp_path,
                                                                     capsys):
    import struct

    sweep = _sweep(write_project, tmp_path)
    rec = _record(sweep, tmp_path)
    b = bytearray(rec.read_bytes())
    i = b.find(b"data")
    b[i + 4:i + 8] = struct.pack("<I", 4 * len(b))
    rec.write_bytes(bytes(b))
    rc, _ = _measure(rec, sweep, tmp_path)
    err = capsys.readouterr().err
    assert rc == 0 and "WavFileWarning" not in err and "wavfile.py" not in err
    assert "warning: " in err and "the data chunk says" in err


@pytest.mark.parametrize("text,expected", [
    ("[1, 2]", r"sweep.json: expected an object with f1_hz and f2_hz, got a list"),
    ('{"f1_hz": "20", "f2_hz": 20000}', r"sweep.json: f1_hz: expected a number in Hz, "
                                        r"got \"20\""),
    ('{"f1_hz": [20], "f2_hz": 20000}', r"sweep.json: f1_hz: expected a number in Hz, got \[20\]"),
    ('{"f2_hz": 20000}', r"sweep.json: f1_hz: missing \(expected a number in Hz\)"),
    ('{"f1_hz": -20, "f2_hz": 20000}', r"sweep.json: f1_hz: expected a number in Hz "
                                       r"\(finite, above 0\), got -20"),
    ('{"f1_hz": NaN, "f2_hz": 20000}', r"sweep.json: f1_hz: expected a number in Hz "
                                       r"\(finite, above 0\), got nan"),
    ('{"f1_hz": 20, "f2_hz": 1e400}', r"sweep.json: f2_hz: expected a number in Hz "
                                      r"\(finite, above 0\), got inf"),
    ('{"f1_hz": 2000, "f2_hz": 200}', r"sweep.json: f2_hz: 200 Hz must be above f1 \(2000 Hz\)"),
    ('{"f1_hz": 20, "f2_hz": 30000}', r"sweep.json: f2_hz: 30000 Hz is above Nyquist "
                                      r"\(24000 Hz\)"),
    ('{"f1_hz": 20, "f2_hz": 20000, "sample_rate": 44100}',
     r"sweep.json: sample_rate: the sidecar says 44100 Hz but the sweep is at 48000 Hz"),
    ("{not json", r"sweep.json: not JSON"),
])
def test_measure_names_the_bad_sidecar_field(write_project, tmp_path, capsys, text, expected):
    import re

    sweep = _sweep(write_project, tmp_path)
    rec = _record(sweep, tmp_path)
    sweep.with_suffix(".json").write_text(text)
    rc, out = _measure(rec, sweep, tmp_path)
    err = capsys.readouterr().err
    assert rc == 2 and not out.exists() and "Traceback" not in err
    assert re.search(expected, err), err
