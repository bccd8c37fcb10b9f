"""Render: bands run with the exported coefficients, against scipy and numpy.

Sources: scipy.signal.sosfilt / butter (reference filtering; the LR4 all-pass
sum built from two squared Butterworth sections, Linkwitz and Riley, "Active
crossover networks for noncoincident drivers", JAES 24(1), 1976);
numpy.convolve and scipy.signal.firwin (FIR reference); scipy.io.wavfile
(WAV reading and writing).
"""

import io
from dataclasses import replace

import numpy as np
import pytest
from scipy import signal
from scipy.io import wavfile

from planner import export, project, render
from planner.dsp.signals import impulse, white_noise
from planner.errors import ExportError
from tests.conftest import EXAMPLE, two_way

FS = 48000


@pytest.fixture
def rx():
    d = two_way(fc=2000)
    d["bands"][1]["gain_db"] = -3.0
    d["bands"][1]["delay_ms"] = 0.25   # 12 samples at 48 kHz
    return export.export_rate(project.from_dict(d), FS)


def test_rendered_impulse_equals_exported_impulse_response(rx):
    x = impulse(FS, FS)
    for b in rx.bands:
        y = render.render_band(x, b)
        h, _, _ = export.band_impulse_response(b, FS)
        # Same float64 recursion: equal to rounding (1e-12); beyond the WAV's
        # -150 dB cut the rendered tail is below 1e-7 of the peak.
        np.testing.assert_allclose(y[:len(h)], h, rtol=0, atol=1e-12)
        assert np.max(np.abs(y[len(h):])) < 1e-7 * np.max(np.abs(h))


def test_blocks_equal_one_sosfilt_call(rx):
    x = white_noise(3 * render.BLOCK_SAMPLES + 123, FS, seed=3)
    b = rx.bands[0]
    ref = signal.sosfilt(b.stored_sos, x)  # scipy in one call, state never cut
    np.testing.assert_allclose(render.render_band(x, b), ref, rtol=0, atol=1e-12)


def test_fir_block_convolution_equals_numpy_convolve(rx):
    taps = signal.firwin(511, 3000, fs=FS)
    b = replace(rx.bands[0], stored_sos=np.zeros((0, 6)), shifts=[], stored_fir=taps,
                scale=1.0)
    x = white_noise(2 * render.BLOCK_SAMPLES + 777, FS, seed=4)
    ref = np.convolve(x, taps)[:len(x)]
    np.testing.assert_allclose(render.render_band(x, b), ref, rtol=0, atol=1e-12)


def test_gain_polarity_and_whole_sample_delay(rx):
    x = white_noise(4000, FS, seed=5)
    b = replace(rx.bands[1], invert=True)
    y = render.render_band(x, b)
    ref = -10 ** (-3 / 20) * signal.sosfilt(b.stored_sos, x)
    np.testing.assert_allclose(y[12:], ref[:-12], rtol=0, atol=1e-12)
    assert np.all(y[:12] == 0)


def test_multichannel_runs_each_channel(rx):
    x = np.column_stack([white_noise(5000, FS, seed=6), white_noise(5000, FS, seed=7)])
    y = render.render_band(x, rx.bands[0])
    for c in range(2):
        np.testing.assert_allclose(y[:, c], signal.sosfilt(rx.bands[0].stored_sos, x[:, c]),
                                   rtol=0, atol=1e-12)


def test_lr4_split_of_white_noise_sums_to_the_input_spectrum():
    # Linkwitz and Riley 1976: LR4 low + high = an all-pass, |H| = 1. With the
    # noise followed by 1 s of silence the whole tail is inside the output,
    # so |FFT(sum)| = |FFT(input)| bin by bin (method: FFT of the full length,
    # no window). 0.1 dB: the tolerance.
    rx = export.export_rate(project.from_dict(two_way(4, fc=2000)), FS)
    x = np.concatenate([white_noise(FS, FS, seed=8), np.zeros(FS)])
    out = render.render(x, rx)
    ratio_db = 20 * np.log10(np.abs(np.fft.rfft(out.sum)) / np.abs(np.fft.rfft(x)))
    f = np.fft.rfftfreq(len(x), 1 / FS)
    band = (f >= 20) & (f <= 20000)
    assert np.max(np.abs(ratio_db[band])) < 0.1
    # And the sum is the all-pass built from scipy's Butterworth sections.
    lp = signal.butter(2, 2000, fs=FS, output="sos")
    hp = signal.butter(2, 2000, "highpass", fs=FS, output="sos")
    ref = signal.sosfilt(np.vstack([lp, lp]), x) + signal.sosfilt(np.vstack([hp, hp]), x)
    np.testing.assert_allclose(out.sum, ref, rtol=0, atol=1e-9)


def test_sum_leaves_muted_bands_out():
    d = two_way()
    d["bands"][1]["mute"] = True
    rx = export.export_rate(project.from_dict(d), FS)
    x = white_noise(2000, FS, seed=9)
    out = render.render(x, rx)
    np.testing.assert_array_equal(out.sum, out.bands["low"])


def test_progress_reaches_total(rx):
    seen = []
    render.render(np.zeros(render.BLOCK_SAMPLES + 1), rx, lambda d, t: seen.append((d, t)))
    total = 2 * (render.BLOCK_SAMPLES + 1)
    assert seen[-1] == (total, total) and all(a <= b for (a, _), (b, _) in zip(seen, seen[1:]))


def test_text_progress_bar():
    buf = io.StringIO()
    cb = render.text_progress(buf, width=10)
    cb(5, 10)
    cb(10, 10)
    assert buf.getvalue() == "\r[#####.....]  50%\r[##########] 100%\n"


def test_write_wav_float32_read_back(tmp_path):
    x = white_noise(1000, FS, seed=10)
    render.write_wav(tmp_path / "a.wav", x, 44100)
    rate, data = wavfile.read(tmp_path / "a.wav")
    assert rate == 44100 and data.dtype == np.float32
    np.testing.assert_array_equal(data, x.astype(np.float32))


def test_read_wav_scales_int16(tmp_path):
    wavfile.write(tmp_path / "i.wav", FS, np.array([0, 16384, -32768], dtype=np.int16))
    x, fs = render.read_wav(tmp_path / "i.wav")
    # int16 full scale is 32768: 16384 -> 0.5, -32768 -> -1.
    assert fs == FS and x.tolist() == [0.0, 0.5, -1.0]


def test_read_wav_missing_raises(tmp_path):
    with pytest.raises(ExportError, match=r"wav: no such file"):
        render.read_wav(tmp_path / "nope.wav")


def test_read_wav_not_a_wav_raises(tmp_path):
    (tmp_path / "bad.wav").write_text("hello")
    with pytest.raises(ExportError, match=r"wav: cannot read .* as WAV"):
        render.read_wav(tmp_path / "bad.wav")


def test_write_wav_fractional_rate_raises(tmp_path):
    with pytest.raises(ExportError, match=r"rate: 44100.5 Hz: a WAV file holds whole-Hz"):
        render.write_wav(tmp_path / "x.wav", np.zeros(4), 44100.5)


def test_rate_not_designed_refused():
    with pytest.raises(ExportError, match=r"rate: the input is at 44100 Hz but the design is "
                                          r"made for 48000, 96000 Hz"):
        render.same_rate_or_refuse(44100, [48000, 96000])


def test_render_example_project_all_bands():
    rx = export.export_rate(project.from_dict(EXAMPLE), FS)
    out = render.render(white_noise(1000, FS, seed=11), rx)
    assert list(out.bands) == ["woofer", "tweeter"] and out.sum.shape == (1000,)
