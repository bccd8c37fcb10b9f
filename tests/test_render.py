"""Render: bands run with the exported coefficients, against scipy and numpy.

Sources: scipy.signal.sosfilt / butter (reference filtering; the LR4 all-pass
sum built from two squared Butterworth sections, Linkwitz and Riley, "Active
crossover networks for noncoincident drivers", JAES 24(1), 1976);
numpy.convolve and scipy.signal.firwin (FIR reference); scipy.io.wavfile
(WAV reading and writing); numpy.fft.rfft (spectra of rendered impulses); a
delay of d samples is e^{-jwd} (Oppenheim and Schafer, "Discrete-Time Signal
Processing", 3rd ed., sec. 2.7).
"""

import json
from dataclasses import replace

import numpy as np
import pytest
from scipy import signal
from scipy.io import wavfile

from planner import engine, export, project
from planner.audio import render, wav
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
        h, _ = export.band_impulse_response(b, FS)
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


def test_write_wav_float32_read_back(tmp_path):
    x = white_noise(1000, FS, seed=10)
    wav.write_wav(tmp_path / "a.wav", x, 44100)
    rate, data = wavfile.read(tmp_path / "a.wav")
    assert rate == 44100 and data.dtype == np.float32
    np.testing.assert_array_equal(data, x.astype(np.float32))


def test_read_wav_scales_int16(tmp_path):
    wavfile.write(tmp_path / "i.wav", FS, np.array([0, 16384, -32768], dtype=np.int16))
    x, fs = wav.read_wav(tmp_path / "i.wav")
    # int16 full scale is 32768: 16384 -> 0.5, -32768 -> -1.
    assert fs == FS and x.tolist() == [0.0, 0.5, -1.0]


def test_read_wav_missing_raises(tmp_path):
    with pytest.raises(ExportError, match=r"wav: no such file"):
        wav.read_wav(tmp_path / "nope.wav")


def test_read_wav_not_a_wav_raises(tmp_path):
    (tmp_path / "bad.wav").write_text("hello")
    with pytest.raises(ExportError, match=r"wav: cannot read .* as WAV"):
        wav.read_wav(tmp_path / "bad.wav")


def test_write_wav_fractional_rate_raises(tmp_path):
    with pytest.raises(ExportError, match=r"rate: 44100.5 Hz: a WAV file holds whole-Hz"):
        wav.write_wav(tmp_path / "x.wav", np.zeros(4), 44100.5)


def test_rate_not_designed_refused():
    with pytest.raises(ExportError, match=r"rate: the input is at 44100 Hz but the design is "
                                          r"made for 48000, 96000 Hz"):
        render.same_rate_or_refuse(44100, [48000, 96000])


def test_render_example_project_all_bands():
    rx = export.export_rate(project.from_dict(EXAMPLE), FS)
    out = render.render(white_noise(1000, FS, seed=11), rx)
    assert list(out.bands) == ["woofer", "tweeter"] and out.sum.shape == (1000,)


# --- fractional delays ----------------------------------------------------------

def _frac_two_way(fs, samples, family="linkwitz-riley", order=4, invert=False, fc=3000.0):
    d = two_way(order=order, family=family, invert=invert, fc=fc, fs=fs)
    d["bands"][1]["delay_ms"] = samples * 1000.0 / fs
    return project.from_dict(d)


def _check_sum(p, f):
    """The check's analytic sum: the engine's band responses with the exact e^{-jwd} delays."""
    r = engine.analyse(p)
    return engine.evaluate(r.designs, f, float(p.sample_rate)).h[np.asarray(r.active)].sum(axis=0)


def _spectrum_vs_check(y, p, latency, fs):
    """dB and degrees of numpy's FFT of ``y`` against the check's sum delayed by ``latency``,
    from 20 Hz to 0.45 fs."""
    f = np.fft.rfftfreq(len(y), 1.0 / fs)
    keep = (f >= 20.0) & (f <= 0.45 * fs)
    ref = _check_sum(p, f[keep]) * np.exp(-2j * np.pi * f[keep] / fs * latency)
    ratio = np.fft.rfft(y)[keep] / ref
    return 20 * np.log10(np.abs(ratio)), np.degrees(np.angle(ratio))


N_IMPULSE = 1 << 16   # 1.4 s at 44.1 kHz: every response has died out (-150 dB) well before


@pytest.mark.parametrize("fs", [44100, 48000, 96000])
@pytest.mark.parametrize("samples", [0.48, 10.3])
@pytest.mark.parametrize("family,order,invert", [("linkwitz-riley", 4, False),
                                                 ("linkwitz-riley", 2, True)])
def test_rendered_sum_matches_the_check_with_the_exact_delay(fs, samples, family, order, invert):
    # An impulse through both bands, summed: its FFT equals the check's analytic sum
    # (exact e^{-jwd} delay), every band later by the same added latency, within
    # 0.05 dB and 0.5 deg from 20 Hz to 0.45 fs (the fractional-delay filter itself is
    # within 0.00087 dB and 0.0057 deg there; the rest is margin for the crossing's dip).
    p = _frac_two_way(fs, samples, family, order, invert)
    out = render.render(impulse(N_IMPULSE, fs), export.export_rate(p, fs))
    lat = out.delays.added_latency_samples
    assert lat > 0 and out.delays.mode == "apply"
    db, deg = _spectrum_vs_check(out.sum, p, lat, fs)
    assert np.max(np.abs(db)) < 0.05
    assert np.max(np.abs(deg)) < 0.5


@pytest.mark.parametrize("fs", [44100, 48000, 96000])
@pytest.mark.parametrize("samples", [0.48, 10.3])
def test_exported_wav_sum_matches_the_check_with_the_exact_delay(tmp_path, fs, samples):
    # The WAV impulse responses (float32) read back with scipy.io.wavfile and summed:
    # the same 0.05 dB / 0.5 deg against the check's exact sum.
    p = _frac_two_way(fs, samples)
    res = export.write_export(p, [fs], "wav", tmp_path)
    total = np.zeros(N_IMPULSE)
    for path in res.files:
        rate, h = wavfile.read(path)
        assert rate == fs
        total[:len(h)] += h.astype(float)
    lat = json.loads(res.manifest.read_text())["checks"][0]["delays"]["added_latency_samples"]
    db, deg = _spectrum_vs_check(total, p, lat, fs)
    assert np.max(np.abs(db)) < 0.05
    assert np.max(np.abs(deg)) < 0.5


def test_fir_bands_with_a_fractional_delay_match_the_check():
    # The fir-three-way split (a delayed unit impulse in sum) with the mid band moved by
    # 0.3 samples: the band's taps and the fractional-delay filter run as one FIR.
    d = project.to_dict(project.load_preset("fir-three-way"))
    d["bands"][1]["delay_ms"] = 0.3 * 1000 / 48000
    p = project.from_dict(d)
    out = render.render(impulse(N_IMPULSE, 48000), export.export_rate(p, 48000))
    db, deg = _spectrum_vs_check(out.sum, p, out.delays.added_latency_samples, 48000)
    assert np.max(np.abs(db)) < 0.05 and np.max(np.abs(deg)) < 0.5


def test_every_band_gets_the_same_added_latency():
    # The band without a fraction is its plain output shifted by the latency, exactly.
    p = _frac_two_way(48000, 0.48)
    rx = export.export_rate(p, 48000)
    x = white_noise(4000, FS, seed=12)
    out = render.render(x, rx)
    lat = out.delays.added_latency_samples
    ref = signal.sosfilt(rx.bands[0].stored_sos, x)
    np.testing.assert_allclose(out.bands["low"][lat:], ref[:-lat], rtol=0, atol=1e-12)
    assert np.all(out.bands["low"][:lat] == 0)


def test_round_mode_uses_the_nearest_sample():
    # 0.6 samples rounds to 1 (floor would give 0): sosfilt delayed by one sample.
    p = _frac_two_way(48000, 0.6)
    rx = export.export_rate(p, 48000)
    x = white_noise(4000, FS, seed=13)
    out = render.render(x, rx, fractional_delay="round")
    ref = signal.sosfilt(rx.bands[1].stored_sos, x)
    np.testing.assert_allclose(out.bands["high"][1:], ref[:-1], rtol=0, atol=1e-12)
    assert out.bands["high"][0] == 0.0
    np.testing.assert_allclose(out.bands["low"], signal.sosfilt(rx.bands[0].stored_sos, x),
                               rtol=0, atol=1e-12)
    assert out.delays.added_latency_samples == 0 and out.delays.mode == "round"


def test_round_mode_sum_is_the_check_with_rounded_delays():
    # What round renders is the check's sum with each delay rounded to the nearest sample
    # (10.3 -> 10), to float64 rounding (1e-9 dB, 1e-7 deg).
    p = _frac_two_way(48000, 10.3)
    out = render.render(impulse(N_IMPULSE, 48000), export.export_rate(p, 48000),
                        fractional_delay="round")
    db, deg = _spectrum_vs_check(out.sum, _frac_two_way(48000, 10.0), 0, 48000)
    assert np.max(np.abs(db)) < 1e-9 and np.max(np.abs(deg)) < 1e-7


def test_unknown_fractional_mode_refused(rx):
    with pytest.raises(ExportError, match=r"fractional_delay: must be one of apply, round, "
                                          r"not 'floor'"):
        render.render(np.zeros(10), rx, fractional_delay="floor")
