"""Streamed render: block by block with carried state equals one-shot filtering; files are atomic.

Sources: scipy.signal.sosfilt over the whole signal and numpy.convolve (the one-shot
references); the fractional delay as a Kaiser-windowed sinc FIR (Laakso et al., "Splitting
the unit delay", IEEE SP Magazine 13(1), 1996) is built by planner.engine.delays and checked
in its own tests, here it is only convolved in the reference with numpy; scipy.io.wavfile
reads every file written.
"""

from dataclasses import replace

import numpy as np
import pytest
from scipy import signal
from scipy.io import wavfile

from planner import export, project
from planner.audio import render
from planner.cli import main
from planner.engine.delays import plan_delays
from tests.conftest import two_way

FS = 48000


def _fir_rx(taps=2047, delay_ms=(0.0123, 0.5)):
    """Two bands: firwin taps (scipy) in place of the sections, fractional and whole delays."""
    d = two_way(fc=2000)
    for b, ms in zip(d["bands"], delay_ms):
        b["delay_ms"] = ms
    d["bands"][1]["gain_db"] = -3.0
    rx = export.export_rate(project.from_dict(d), FS)
    low = signal.firwin(taps, 2000, fs=FS)
    bands = [replace(rx.bands[0], stored_sos=np.zeros((0, 6)), shifts=[], sos=np.zeros((0, 6)),
                     stored_fir=low, fir=low, scale=1.0), rx.bands[1]]
    return replace(rx, bands=bands)


def _one_shot(x, band, bd):
    """sosfilt over the whole signal, numpy.convolve with the taps, gain, then the delay."""
    y = np.asarray(x, dtype=float)
    if len(band.run_sos):
        y = signal.sosfilt(band.run_sos, y, axis=0)
    fir = band.run_fir
    if bd.taps is not None:
        fir = bd.taps if fir is None else np.convolve(fir, bd.taps)
    if fir is not None:
        cols = y.reshape(len(y), -1)
        y = np.column_stack([np.convolve(c, fir)[:len(x)] for c in cols.T]).reshape(y.shape)
    y = y * band.linear_gain
    w = bd.whole_samples
    return np.concatenate([np.zeros((w,) + y.shape[1:]), y[:len(y) - w]]) if w else y


@pytest.mark.parametrize("block", [100, 2046, 2047, 5000])
def test_blocks_inside_the_fir_length_equal_one_shot(block):
    rx = _fir_rx()
    plan = plan_delays([b.delay_samples for b in rx.bands], "apply")
    x = np.random.default_rng(1).standard_normal((12345, 2))
    for b, bd in zip(rx.bands, plan.bands):
        run = render.BandRun(b, bd, block)
        y = np.concatenate([run.process(x[i:i + block]) for i in range(0, len(x), block)])
        # Float rounding only: FFT convolution against direct convolution, ~1e-13 here.
        np.testing.assert_allclose(y, _one_shot(x, b, bd), rtol=0, atol=1e-11)


def test_fractional_delay_is_applied_in_the_stream():
    rx = _fir_rx()
    plan = plan_delays([b.delay_samples for b in rx.bands], "apply")
    assert any(bd.taps is not None for bd in plan.bands)     # the case under test
    assert any(bd.whole_samples > 0 for bd in plan.bands)


def test_render_to_files_equals_render_in_memory(tmp_path):
    rx = _fir_rx()
    x = np.random.default_rng(2).uniform(-0.5, 0.5, (3 * 4096 + 17, 2))
    ref = render.render(x, rx)
    paths = [tmp_path / "a.wav", tmp_path / "b.wav"]
    blocks = (x[i:i + 4096] for i in range(0, len(x), 4096))
    render.render_to_files(blocks, len(x), 2, rx, paths, tmp_path / "s.wav", block=4096)
    for p, name in zip(paths, ["low", "high"]):
        fs, y = wavfile.read(p)
        # 32-bit float files: rounding to float32 (relative 6e-8 of values below 2).
        assert fs == FS and y.shape == x.shape
        np.testing.assert_allclose(y, ref.bands[name], rtol=0, atol=2e-7)
    np.testing.assert_allclose(wavfile.read(tmp_path / "s.wav")[1], ref.sum, rtol=0, atol=4e-7)


def test_interrupted_render_leaves_no_file_and_keeps_the_old_one(tmp_path):
    rx = _fir_rx()
    (tmp_path / "a.wav").write_bytes(b"old")
    x = np.zeros(5 * 1000)

    def stop(done, total):
        if done > total / 2:
            raise KeyboardInterrupt

    with pytest.raises(KeyboardInterrupt):
        render.render_to_files((x[i:i + 1000] for i in range(0, len(x), 1000)), len(x), 1, rx,
                               [tmp_path / "a.wav", tmp_path / "b.wav"], tmp_path / "s.wav",
                               progress=stop, block=1000)
    assert sorted(p.name for p in tmp_path.iterdir()) == ["a.wav"]
    assert (tmp_path / "a.wav").read_bytes() == b"old"


def test_cli_render_of_a_24bit_stereo_file_streams_the_same_result(write_project, tmp_path):
    import struct
    import wave

    rng = np.random.default_rng(5)
    n = 2 * render.BLOCK_SAMPLES + 999
    ints = rng.integers(-2 ** 22, 2 ** 22, (n, 2))
    raw = b"".join(struct.pack("<i", int(v))[:3] for v in ints.reshape(-1))
    with wave.open(str(tmp_path / "in.wav"), "wb") as w:
        w.setnchannels(2)
        w.setsampwidth(3)
        w.setframerate(FS)
        w.writeframes(raw)
    d = two_way()
    d["bands"][1]["delay_ms"] = 0.0123
    assert main(["render", str(write_project(d)), str(tmp_path / "in.wav"), "--out",
                 str(tmp_path / "o")]) == 0
    rx = export.export_rate(project.from_dict(d), FS)
    ref = render.render(ints / 2 ** 23, rx)
    np.testing.assert_allclose(wavfile.read(tmp_path / "o" / "in-high.wav")[1], ref.bands["high"],
                               rtol=0, atol=2e-7)
    np.testing.assert_allclose(wavfile.read(tmp_path / "o" / "in-sum.wav")[1], ref.sum,
                               rtol=0, atol=4e-7)
    assert not [p for p in (tmp_path / "o").iterdir() if p.suffix == ".tmp"]


def test_too_long_for_a_wav_refused_before_any_work(tmp_path):
    rx = _fir_rx()
    with pytest.raises(Exception, match=r"wav: .* more than a WAV file can hold \(4 GiB\)"):
        render.render_to_files(iter(()), 2 ** 30, 2, rx, [tmp_path / "a.wav", tmp_path / "b.wav"],
                               tmp_path / "s.wav")
    assert not list(tmp_path.iterdir())
