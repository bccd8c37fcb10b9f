"""Impulse and step responses of bands and of the sum."""

import numpy as np
import pytest
from scipy import signal

from planner import engine, project, report, timeresp
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
    # Gain -6 dB, inverted, 10.5 samples of delay: -10^(-6/20) h[n - 10], the half
    # sample left out and reported.
    d = two_way(order=4, fc=2000.0)
    plain = timeresp.project_impulse(project.from_dict(d))
    moved = timeresp.project_impulse(_with(d, 0, gain_db=-6.0, invert=True,
                                           delay_ms=10.5 * 1000 / FS))
    g = -10 ** (-6 / 20)
    n = plain.bands.shape[-1]
    assert np.allclose(moved.bands[0][10:10 + n], g * plain.bands[0], rtol=0, atol=1e-15)
    assert np.all(moved.bands[0][:10] == 0.0)
    assert moved.fraction_samples[0] == pytest.approx(0.5, abs=1e-9)


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
    s = report.time_series(tr, span_ms=2.0)
    assert s[-1].label == "sum" and s[-1].bold
    assert s[0].x[-1] == pytest.approx(2.0, abs=1000.0 / FS)


def test_fir_latency_shows_as_the_peak_position():
    # Linear phase: the peak sits at (N-1)/2 (Oppenheim and Schafer sec. 5.7).
    p = project.from_dict({**two_way(), "bands": [{"name": "all", "filters": [
        {"type": "lowpass", "family": "fir", "method": "window", "freq": 2000, "taps": 201}]}]})
    tr = timeresp.project_impulse(p)
    taps = engine.design_band(p.bands[0], FS).fir
    assert int(np.argmax(np.abs(tr.bands[0]))) == dfir.latency_samples(taps) == 100
