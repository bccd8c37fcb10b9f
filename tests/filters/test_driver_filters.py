"""Driver-correcting filters against analog formulas (scipy.signal.freqs) and their definitions.

Sources: the Linkwitz transform (S. H. Linkwitz, Wireless World 1978, reference from
memory): (s^2 + s w0/Q0 + w0^2) / (s^2 + s wp/Qp + wp^2), DC gain (f0/fp)^2; a first-order
shelf's magnitude at the geometric centre of its corners is the square root of its high
gain; the Audio EQ Cookbook (W3C note): a peaking filter of gain -G is the inverse of one
of +G at the same Q; the baffle step near 115 / width_m Hz (common practice, no published
source); scipy.signal.bilinear (prewarped bilinear transform).
"""

import numpy as np
import pytest
from scipy import signal

from planner import engine, project
from planner.dsp import acoustic as ac
from planner.dsp.biquad import analog_section
from planner.errors import ProjectError
from planner.filters.driver import baffle_step_hz

FS = 48000.0


def _flt(raw):
    p = project.from_dict({"format": "crossplan-project", "version": 1, "name": "x",
                           "sample_rate": FS, "bands": [{"name": "b", "filters": [raw]}]})
    return p.bands[0].filters[0]


def _h(raw, f):
    return signal.sosfreqz(engine.design_filter(_flt(raw), FS).sos, worN=f, fs=FS)[1]


def test_analog_section_equals_scipy_bilinear_with_the_same_prewarp():
    b, a, fw = [1.0, 300.0, 9e4], [1.0, 120.0, 2.5e4], 700.0
    k = 2 * np.pi * fw / np.tan(np.pi * fw / FS)
    bz, az = signal.bilinear(b, a, fs=k / 2)        # scipy's K = 2 fs
    np.testing.assert_allclose(analog_section(b, a, FS, fw)[0], np.r_[bz, az] / az[0],
                               rtol=1e-12)


def test_linkwitz_transform_follows_its_analog_section_and_boosts_by_f0_over_fp_squared():
    raw = {"type": "linkwitz_transform", "f0": 55, "q0": 0.9, "fp": 35, "qp": 0.6}
    f = np.geomspace(5, 500, 300)
    w0, wp = 2 * np.pi * 55, 2 * np.pi * 35
    ref = signal.freqs([1, w0 / 0.9, w0 ** 2], [1, wp / 0.6, wp ** 2], worN=2 * np.pi * f)[1]
    # Below 500 Hz at 48 kHz the bilinear warping is far below 0.01 dB.
    np.testing.assert_allclose(20 * np.log10(np.abs(_h(raw, f))), 20 * np.log10(np.abs(ref)),
                               atol=0.01)
    assert 20 * np.log10(abs(_h(raw, [1.0])[0])) == pytest.approx(40 * np.log10(55 / 35),
                                                                   abs=0.01)


def test_a_linkwitz_transformed_closed_box_becomes_the_wanted_box():
    # Closed box (55 Hz, Q 0.9) x transform -> closed box (35 Hz, Q 0.6), Small 1972.
    raw = {"type": "linkwitz_transform", "f0": 55, "q0": 0.9, "fp": 35, "qp": 0.6}
    f = np.geomspace(10, 400, 200)
    got = _h(raw, f) * ac.closed_box(f, 55, 0.9)
    np.testing.assert_allclose(20 * np.log10(np.abs(got)),
                               20 * np.log10(np.abs(ac.closed_box(f, 35, 0.6))), atol=0.01)


def test_baffle_step_lowers_the_highs_by_its_gain_with_half_at_the_step():
    raw = {"type": "baffle_step", "width_mm": 230, "gain_db": 5}
    fc = baffle_step_hz(230)
    assert fc == pytest.approx(115 / 0.23)                 # the rule of thumb
    lv = 20 * np.log10(np.abs(_h(raw, [5.0, fc, 20000.0])))
    assert lv[0] == pytest.approx(0.0, abs=0.01)
    assert lv[1] == pytest.approx(-2.5, abs=0.01)           # sqrt of the high gain
    assert lv[2] == pytest.approx(-5.0, abs=0.05)


def test_breakup_notch_cancels_the_model_peak():
    raw = {"type": "breakup_notch", "freq": 6500, "height_db": 8, "q": 5}
    f = np.geomspace(2000, 12000, 300)
    got = _h(raw, f) * ac.breakup(f, 6500, 8, 5)
    # Prewarped at the peak: exact there; elsewhere the bilinear warping of a Q 5 peak at
    # 6.5 kHz of 48 kHz leaves up to half a dB (measured 0.51 dB near 12 kHz).
    assert abs(20 * np.log10(abs(got[np.argmin(abs(f - 6500))]))) < 0.01
    assert np.max(np.abs(20 * np.log10(np.abs(got)))) < 0.6


def test_baffle_step_above_nyquist_is_refused():
    with pytest.raises(ProjectError, match=r"width_mm: 20 mm puts the step at 5750 Hz, above "
                                           r"Nyquist"):
        project.from_dict({"format": "crossplan-project", "version": 1, "name": "x",
                           "sample_rate": 8000, "analysis": {"f_max": 4000},
                           "bands": [{"name": "b", "filters": [
                               {"type": "baffle_step", "width_mm": 20}]}]})
