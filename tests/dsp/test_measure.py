"""Sweep measurement against known filters (scipy.signal) and Farina's relations.

Sources: Farina, AES 108th Convention 2000 (exponential-sweep deconvolution,
harmonic responses at -L ln N); Kirkeby et al. 1998 (regularised division);
scipy.signal.sosfilt / sosfreqz / freqz (the known system and its response);
scipy.signal.windows.hann (gate fades).
"""

import numpy as np
import pytest
from scipy import signal

from planner.dsp import measure
from planner.dsp.measure import deconvolve_sweep, gate, harmonic_delay_s, ir_to_response
from planner.dsp.response_text import format_response_text, parse_response_text
from planner.dsp.signals import exp_sweep, white_noise
from planner.errors import CrossplanError

FS = 48000.0
F1, F2, T = 20.0, 20000.0, 2.0
SWEEP = exp_sweep(F1, F2, T, FS, fade_in_s=0.02, fade_out_s=0.005)
#: The known system: a 4th-order Butterworth bandpass 300 Hz - 6 kHz
#: (scipy.signal.butter(2, ..., 'bandpass')).
SOS = signal.butter(2, [300, 6000], "bandpass", fs=FS, output="sos")
DIRECT = 96        # 2 ms propagation delay, samples
REFLECTION = 384   # reflection 8 ms after the direct sound, samples, at -6 dB
GRID = np.geomspace(20, 20000, 400)
#: Comparison band: the gate below is 7 ms long (1 ms before the peak, 6 ms
#: after), so its resolution is ~1/7 ms = 143 Hz; from 200 Hz up the gated
#: response follows the filter. Above 16 kHz the sweep's fade-out and the
#: f2 = 20 kHz edge take over.
BAND = (GRID >= 200) & (GRID <= 16000)


def _recording(seed=1):
    """Sweep through SOS, delayed, plus a -6 dB reflection and -60 dBFS noise."""
    played = np.concatenate([SWEEP, np.zeros(int(FS // 2))])
    y = signal.sosfilt(SOS, played)
    rec = np.zeros(len(played))
    rec[DIRECT:] += y[:len(played) - DIRECT]
    rec[DIRECT + REFLECTION:] += 0.5 * y[:len(played) - DIRECT - REFLECTION]
    return rec + white_noise(len(rec), FS, seed=seed, rms=1e-3)


def _reference():
    h = signal.sosfreqz(SOS, worN=GRID, fs=FS)[1]
    return 20 * np.log10(np.abs(h)), np.degrees(np.angle(h))


def _phase_diff(a, b):
    return np.abs((a - b + 180.0) % 360.0 - 180.0)


@pytest.mark.parametrize("method", ["inverse", "division"])
def test_gated_measurement_matches_known_filter(method):
    # Farina 2000: deconvolved and gated, the response equals the filter's
    # (sosfreqz) within 0.5 dB (the brief's tolerance) in BAND; phase,
    # referred to the direct sound's arrival, within 5 degrees.
    ir = deconvolve_sweep(_recording(), SWEEP, FS, F1, F2, method=method)
    g = gate(ir, FS, pre_ms=1.0, window_ms=6.0, fade_ms=2.0)
    mag, ph = ir_to_response(g.ir, FS, GRID, t0_samples=g.start - DIRECT)
    ref_mag, ref_ph = _reference()
    assert np.max(np.abs(mag - ref_mag)[BAND]) < 0.5
    assert np.max(_phase_diff(ph, ref_ph)[BAND]) < 5.0


def test_ungated_measurement_shows_the_reflection():
    # Without the gate the -6 dB reflection at 8 ms makes a comb of
    # 20 log10(1.5) = +3.5 dB / 20 log10(0.5) = -6 dB: the gate is what removes it.
    ir = deconvolve_sweep(_recording(), SWEEP, FS, F1, F2)
    mag, _ = ir_to_response(ir[:int(0.3 * FS)], FS, GRID, t0_samples=-DIRECT)
    ref_mag, _ = _reference()
    assert np.max(np.abs(mag - ref_mag)[BAND]) > 3.0


def test_wire_gives_unit_impulse():
    # Recording = sweep delayed 50 ms: a band-limited delta at 2400 samples,
    # 0 dB in band (within 0.05 dB from 10 f1 to 0.75 f2). The delay leaves
    # room for the band-limited pulse's pre-ringing, which a response at
    # exactly time 0 would lose; the 20 Hz band edge still rings beyond
    # 50 ms, which is why the check starts at 200 Hz. Both methods.
    rec = np.concatenate([np.zeros(2400), SWEEP, np.zeros(4800)])
    f = np.geomspace(200, 15000, 200)
    for method in ("inverse", "division"):
        ir = deconvolve_sweep(rec, SWEEP, FS, F1, F2, method=method)
        assert int(np.argmax(np.abs(ir))) == 2400
        mag, _ = ir_to_response(ir[:9600], FS, f, t0_samples=-2400)
        assert np.max(np.abs(mag)) < 0.05


def test_delay_is_recovered_in_samples():
    rec = np.concatenate([np.zeros(100), SWEEP, np.zeros(1000)])
    ir = deconvolve_sweep(rec, SWEEP, FS, F1, F2)
    assert int(np.argmax(np.abs(ir))) == 100


def test_second_harmonic_lands_l_ln2_before_linear():
    # Farina 2000 eq. 6: harmonic N appears L ln N before the linear response.
    x = exp_sweep(F1, F2, T, FS)
    rec = np.concatenate([x + 0.2 * x ** 2, np.zeros(4800)])  # 2nd-order distortion
    y = deconvolve_sweep(rec, x, FS, F1, F2, full=True)
    lin = len(x) - 1
    expect = lin - harmonic_delay_s(2, F1, F2, T) * FS
    window = slice(int(expect) - 2000, int(expect) + 2000)
    found = window.start + int(np.argmax(np.abs(y[window])))
    assert abs(found - expect) <= 2  # sample rounding and the band-limited peak's spread
    assert int(np.argmax(np.abs(y))) == lin


def test_harmonic_delay_formula():
    # Farina 2000: dt = T ln(N) / ln(f2/f1).
    assert harmonic_delay_s(3, 20, 20000, 10) == pytest.approx(10 * np.log(3) / np.log(1000))


def test_deconvolve_short_recording_raises():
    with pytest.raises(CrossplanError, match=r"recording: 100 samples is shorter than the sweep"):
        deconvolve_sweep(np.zeros(100), SWEEP, FS, F1, F2)


def test_deconvolve_bad_method_raises():
    with pytest.raises(CrossplanError, match=r"method: must be 'inverse' or 'division', not 'x'"):
        deconvolve_sweep(SWEEP, SWEEP, FS, F1, F2, method="x")


# ---------------------------------------------------------------- gate

def test_gate_window_and_half_hann_fades():
    # Fades equal halves of a periodic Hann of twice the fade length.
    h = np.ones(2000)
    h[500] = 5.0
    g = gate(h, FS, pre_ms=1.0, window_ms=10.0, fade_ms=0.5)
    assert (g.peak, g.start, len(g.ir)) == (500, 452, 48 + 480 + 1)
    w = signal.windows.hann(48, sym=False)
    np.testing.assert_allclose(g.ir[:24], w[:24], atol=1e-15)
    np.testing.assert_allclose(g.ir[-24:], w[:24][::-1], atol=1e-15)
    assert g.ir[48] == 5.0


def test_gate_clips_at_response_start():
    h = np.zeros(1000)
    h[10] = 1.0
    g = gate(h, FS, pre_ms=1.0, window_ms=5.0, fade_ms=1.0)
    assert g.start == 0 and g.ir[10] == 1.0


def test_gate_fade_longer_than_window_raises():
    with pytest.raises(CrossplanError, match=r"fade_ms: 3 ms is longer than window_ms \(2 ms\)"):
        gate(np.ones(100), FS, 1.0, 2.0, 3.0)


def test_gate_zero_window_raises():
    with pytest.raises(CrossplanError, match=r"window_ms: must be more than 0 ms, not 0.0"):
        gate(np.ones(100), FS, 1.0, 0.0, 0.0)


# ---------------------------------------------------------------- ir_to_response

def test_ir_to_response_matches_scipy_freqz():
    # Reference: scipy.signal.freqz of the taps, times exp(-j w t0) for the time origin.
    h = signal.firwin(101, 3000, fs=FS)
    f = np.geomspace(20, 24000, 300)
    w = 2 * np.pi * f / FS
    ref = signal.freqz(h, worN=f, fs=FS)[1] * np.exp(-1j * w * 12.5)
    mag, ph = ir_to_response(h, FS, f, t0_samples=12.5)
    np.testing.assert_allclose(mag, 20 * np.log10(np.abs(ref)), atol=1e-9)
    ok = np.abs(ref) > 1e-6  # phase is undefined at the zeros
    np.testing.assert_allclose(_phase_diff(ph, np.degrees(np.angle(ref)))[ok], 0, atol=1e-6)


def test_ir_to_response_long_ir_blocks_agree():
    # Blocks over frequency must not change the result (reference: numpy FFT bins).
    rng = np.random.default_rng(4)
    h = rng.standard_normal(1 << 16)
    f = np.fft.rfftfreq(len(h), 1 / FS)[::97]
    ref = np.fft.rfft(h)[::97]
    mag, _ = ir_to_response(h, FS, f)
    np.testing.assert_allclose(mag, 20 * np.log10(np.abs(ref)), atol=1e-6)


def test_ir_to_response_above_nyquist_raises():
    with pytest.raises(CrossplanError, match=r"freqs_hz: must be finite frequencies in \[0, 24000\]"):
        ir_to_response(np.ones(4), FS, [30000.0])


@pytest.mark.parametrize("call, match", [
    (lambda: harmonic_delay_s(0, 20, 20000, 1.0), r"order: must be a whole number >= 1, not 0"),
    (lambda: deconvolve_sweep(SWEEP, SWEEP, FS, F1, F2, method="division", full=True),
     r"full: full=True needs method 'inverse'"),
    (lambda: deconvolve_sweep([np.nan, 1.0], SWEEP, FS, F1, F2),
     r"recording: must be a 1-D array of 2 or more finite samples"),
    (lambda: gate(np.ones(10), 0, 1, 1, 0), r"fs_hz: must be a positive number of Hz, not 0"),
    (lambda: gate(np.ones(10), FS, -1, 1, 0), r"pre_ms: must be 0 or more ms, not -1.0"),
    (lambda: ir_to_response(np.ones(4), -5, [1.0]), r"fs_hz: must be a positive number of Hz"),
    (lambda: format_response_text([1, 2], [0]), r"mag_db: freqs_hz, mag_db and phase_deg must be 1-D of one length"),
    (lambda: format_response_text([1], [np.inf]), r"mag_db: values must be finite numbers"),
    (lambda: parse_response_text(b"100 0"), r"text: must be text, not bytes"),
    (lambda: parse_response_text("100\n"), r"line 1: needs at least 2 columns \(freq_hz mag_db\), got '100'"),
    (lambda: parse_response_text("100 nan\n"), r"line 1: values must be finite, got '100 nan'"),
])
def test_measure_argument_errors(call, match):
    with pytest.raises(CrossplanError, match=match):
        call()


def test_check_recording_silence_below_one_16bit_step_refused():
    # -90 dBFS is just below one step of 16-bit audio (2**-15 = -90.3 dBFS); common practice.
    sweep = np.ones(48000) * 0.1
    rec = np.full(48000, 10 ** (-95 / 20))
    with pytest.raises(CrossplanError, match=r"recording: silent \(peak -95.0 dBFS"):
        measure.check_recording(rec, sweep, 48000, 1.0, 5.0)


def test_check_recording_plain_recording_has_no_warning():
    sweep = np.sin(np.arange(48000) * 0.01) * 0.5
    rec = np.concatenate([sweep, np.zeros(4800)])
    assert measure.check_recording(rec, sweep, 48000, 1.0, 5.0) == []
