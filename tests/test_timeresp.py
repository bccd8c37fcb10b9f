"""Impulse and step responses of bands and of the sum."""

import numpy as np
import pytest
from scipy import signal

from planner import engine, project, timeresp
from planner.present import views
from planner.dsp import fir as dfir

from tests.conftest import two_way

FS = 48000.0


@pytest.fixture(scope="module")
def lr4():
    return project.from_dict(two_way(order=4, fc=2000.0))


def _with(d, band, **kw):
    d["bands"][band].update(kw)
    return project.from_dict(d)


def test_iir_band_equals_sosfilt_of_a_unit_impulse(lr4):
    # scipy.signal.sosfilt as reference; truncation is 150 dB down, so 1e-12 of the peak.
    tr = timeresp.project_impulse(lr4)
    sos = engine.design_band(lr4.bands[0], FS).sos
    x = np.zeros(tr.sum.shape[-1])
    x[0] = 1.0
    ref = signal.sosfilt(sos, x)
    assert np.max(np.abs(tr.bands[0] - ref)) < 1e-12 * np.max(np.abs(ref))


def test_fir_band_equals_numpy_convolve_of_a_unit_impulse():
    # numpy.convolve as reference: the taps themselves, exactly.
    p = project.from_dict({**two_way(), "bands": [{"name": "all", "filters": [
        {"type": "lowpass", "family": "fir", "method": "window", "freq": 2000, "taps": 101}]}]})
    taps = engine.design_band(p.bands[0], FS).fir
    tr = timeresp.project_impulse(p)
    ref = np.convolve(np.r_[1.0, np.zeros(100)], taps)[:101]
    assert np.allclose(tr.bands[0][:101], ref, rtol=0, atol=1e-15)
    assert tr.lengths == [101]


def test_gain_polarity_and_whole_delay_are_applied():
    # Gain -6 dB, inverted, 10 samples of delay: -10^(-6/20) h[n - 10]; a whole delay
    # adds no latency (no fractional-delay filter runs).
    d = two_way(order=4, fc=2000.0)
    plain = timeresp.project_impulse(project.from_dict(d))
    moved = timeresp.project_impulse(_with(d, 0, gain_db=-6.0, invert=True,
                                           delay_ms=10 * 1000 / FS))
    g = -10 ** (-6 / 20)
    n = plain.bands.shape[-1]
    assert np.allclose(moved.bands[0][10:10 + n], g * plain.bands[0], rtol=0, atol=1e-15)
    assert np.all(moved.bands[0][:10] == 0.0)
    assert moved.fraction_samples == [0.0, 0.0] and moved.added_latency_samples == 0


def test_round_mode_delays_by_the_nearest_sample():
    # 10.6 samples rounded to the nearest is 11 (not floor's 10): h[n - 11] exactly,
    # sosfilt of a unit impulse as reference.
    p = _with(two_way(order=4, fc=2000.0), 0, delay_ms=10.6 * 1000 / FS)
    tr = timeresp.project_impulse(p, "round")
    sos = engine.design_band(p.bands[0], FS).sos
    x = np.zeros(tr.sum.shape[-1])
    x[11] = 1.0
    ref = signal.sosfilt(sos, x)
    assert np.max(np.abs(tr.bands[0] - ref)) < 1e-12 * np.max(np.abs(ref))
    assert tr.fraction_samples[0] == pytest.approx(0.6, abs=1e-9)
    assert tr.fractional_delay == "round" and tr.added_latency_samples == 0


def _dtft(h, f, fs=FS):
    """Reference spectrum of a sampled response: scipy.signal.freqz on an explicit grid."""
    return signal.freqz(h, worN=f, fs=fs)[1]


def test_apply_mode_is_the_exact_fractional_delay_up_to_045_fs():
    # The shown band, against sosfreqz(chain) e^{-jw(d + L)} with the exact delay d = 10.3
    # samples and the added latency L: 0.01 dB and 0.05 deg up to 0.45 fs (the
    # fractional-delay filter's spec is 0.00087 dB, 0.0057 deg; the rest is the -150 dB
    # truncation of the IIR tail).
    p = _with(two_way(order=4, fc=2000.0), 1, delay_ms=10.3 * 1000 / FS)
    tr = timeresp.project_impulse(p)
    lat = tr.added_latency_samples
    assert lat > 0 and tr.fractional_delay == "apply"
    assert tr.fraction_samples[1] == pytest.approx(0.3, abs=1e-9)
    f = np.geomspace(20, 0.45 * FS, 400)
    sos = engine.design_band(p.bands[1], FS).sos
    ref = signal.sosfreqz(sos, worN=f, fs=FS)[1] * np.exp(-2j * np.pi * f / FS * (10.3 + lat))
    got = _dtft(tr.bands[1], f)
    keep = np.abs(ref) > 1e-3     # where the highpass passes more than -60 dB
    assert np.max(np.abs(20 * np.log10(np.abs(got[keep] / ref[keep])))) < 0.01
    assert np.max(np.abs(np.degrees(np.angle(got[keep] / ref[keep])))) < 0.05


def test_apply_mode_delays_the_whole_band_by_the_added_latency_too():
    # The other band (no fraction) is its plain response shifted by the same latency.
    d = two_way(order=4, fc=2000.0)
    plain = timeresp.project_impulse(project.from_dict(d))
    tr = timeresp.project_impulse(_with(d, 1, delay_ms=0.48 * 1000 / FS))
    lat = tr.added_latency_samples
    n = plain.bands.shape[-1]
    assert np.array_equal(tr.bands[0][lat:lat + n], plain.bands[0])
    assert np.all(tr.bands[0][:lat] == 0.0)


def test_to_dict_says_how_fractions_were_made():
    tr = timeresp.project_impulse(_with(two_way(), 1, delay_ms=0.48 * 1000 / FS))
    d = tr.to_dict()
    assert d["fractional_delay"] == "apply" and d["added_latency_samples"] == \
        tr.added_latency_samples
    assert d["bands"][1]["fraction_samples"] == pytest.approx(0.48, abs=1e-9)


def test_sum_is_the_sum_of_the_active_bands(lr4):
    tr = timeresp.project_impulse(lr4)
    assert np.allclose(tr.sum, tr.bands.sum(axis=0), rtol=0, atol=1e-15)


def test_muted_band_is_left_out_of_the_sum():
    tr = timeresp.project_impulse(_with(two_way(), 1, mute=True))
    assert tr.active == [True, False]
    assert np.array_equal(tr.sum, tr.bands[0])


def test_step_is_the_cumsum_of_the_impulse(lr4):
    # numpy.cumsum as reference (the step response is the running sum of the
    # impulse response, Oppenheim and Schafer sec. 2.3).
    tr = timeresp.project_impulse(lr4)
    st = tr.step()
    assert st.kind == "step"
    assert np.array_equal(st.bands, np.cumsum(tr.bands, axis=-1))
    assert np.array_equal(st.sum, np.cumsum(tr.sum))


def test_lowpass_step_settles_at_its_dc_gain(lr4):
    # Final value of a step response = H(0) = 1 for the LR4 lowpass (sum b / sum a).
    st = timeresp.project_step(lr4)
    assert st.bands[0][-1] == pytest.approx(1.0, abs=1e-7)
    assert st.bands[1][-1] == pytest.approx(0.0, abs=1e-7)


def test_time_axis_in_ms(lr4):
    tr = timeresp.project_impulse(lr4)
    assert tr.time_ms[1] == pytest.approx(1000.0 / FS, rel=1e-15)
    assert tr.samples[-1] == tr.sum.shape[-1] - 1


def test_step_of_a_step_is_refused(lr4):
    with pytest.raises(ValueError, match="made from an impulse response, not a step"):
        timeresp.project_step(lr4).step()


def test_settle_covers_a_linear_phase_fir():
    # A symmetric FIR's energy lies about its centre; the shown span must reach past it.
    p = project.from_dict({**two_way(), "bands": [{"name": "all", "filters": [
        {"type": "lowpass", "family": "fir", "method": "window", "freq": 2000, "taps": 301}]}]})
    tr = timeresp.project_impulse(p)
    assert timeresp.settle_samples(tr) > 150


def test_time_series_span_ms(lr4):
    tr = timeresp.project_impulse(lr4)
    s = views.time_series(tr, span_ms=2.0)
    assert s[-1].label == "sum" and s[-1].bold
    assert s[0].x[-1] == pytest.approx(2.0, abs=1000.0 / FS)


def test_fir_latency_shows_as_the_peak_position():
    # Linear phase: the peak sits at (N-1)/2 (Oppenheim and Schafer sec. 5.7).
    p = project.from_dict({**two_way(), "bands": [{"name": "all", "filters": [
        {"type": "lowpass", "family": "fir", "method": "window", "freq": 2000, "taps": 201}]}]})
    tr = timeresp.project_impulse(p)
    taps = engine.design_band(p.bands[0], FS).fir
    assert int(np.argmax(np.abs(tr.bands[0]))) == dfir.latency_samples(taps) == 100
