"""``crossplan measure`` on a synthetic recording of ``crossplan render --sweep``.

Sources: Farina, AES 108th Convention 2000 (exponential-sweep deconvolution);
scipy.signal.butter / sosfilt / sosfreqz (the known system and its response);
scipy.io.wavfile (the files).
"""

import numpy as np
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
