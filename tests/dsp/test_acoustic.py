"""Driver models, minimum phase, interpolation and geometry against outside references.

Sources: scipy.signal.freqs / butter(analog=True) (analog responses); Small, JAES 1972
(closed box: a second-order highpass, |H(fc)| = Qtc); Thiele, JAES 1971 (the B4 vented-box
alignment is a fourth-order Butterworth highpass); the Audio EQ Cookbook W3C note (analog
peaking prototype: its gain at f0, symmetric in log frequency); Kinsler et al.,
"Fundamentals of Acoustics", 4th ed. (c = 331.3 sqrt(1 + T/273.15) m/s); Bode 1945 (the
phase of a minimum-phase system follows from its magnitude: checked on analog Butterworth
filters, which are minimum phase); the law of cosines and the far-field path difference
d sin(theta).
"""

import numpy as np
import pytest
from scipy import signal

from planner.dsp import acoustic as ac
from planner.errors import DesignError

F = np.geomspace(20, 20000, 600)


def _analog(b, a, f=F):
    return signal.freqs(b, a, worN=2 * np.pi * f)[1]


def test_speed_of_sound_at_20_c():
    assert ac.speed_of_sound_m_s(20.0) == pytest.approx(343.42, abs=1e-9)   # 331.3 + 12.12


@pytest.mark.parametrize("t", [-20.0, 0.0, 20.0, 40.0])
def test_speed_of_sound_within_a_quarter_percent_of_the_ideal_gas_law(t):
    assert ac.speed_of_sound_m_s(t) == pytest.approx(331.3 * np.sqrt(1 + t / 273.15),
                                                     rel=2.5e-3)


def test_offset_becomes_its_travel_time():
    # 343.42 mm at 343.42 m/s is 1 ms; a recessed driver (positive offset) arrives later.
    assert ac.offset_delay_s(343.42, 20.0) == pytest.approx(1e-3, rel=1e-12)
    with pytest.raises(DesignError, match=r"temperature_c: 90 deg C is outside -50 .. 60"):
        ac.speed_of_sound_m_s(90)


@pytest.mark.parametrize("fc, q", [(55.0, 0.71), (40.0, 0.5), (80.0, 1.2)])
def test_closed_box_is_the_second_order_highpass(fc, q):
    wc = 2 * np.pi * fc
    ref = _analog([1, 0, 0], [1, wc / q, wc * wc])          # Small 1972, eq. (21)
    np.testing.assert_allclose(ac.closed_box(F, fc, q), ref, rtol=1e-12)
    assert abs(ac.closed_box([fc], fc, q)[0]) == pytest.approx(q, rel=1e-12)   # |H(fc)| = Qtc


def test_vented_box_b4_is_a_fourth_order_butterworth_highpass():
    b, a = signal.butter(4, 2 * np.pi * 40, "highpass", analog=True)
    np.testing.assert_allclose(ac.vented_box(F, 40.0), _analog(b, a), rtol=1e-9)
    assert 20 * np.log10(abs(ac.vented_box([40.0], 40.0)[0])) == pytest.approx(-3.0103, abs=1e-4)


@pytest.mark.parametrize("order", [1, 2])
def test_rolloff_is_a_butterworth_lowpass(order):
    b, a = signal.butter(order, 2 * np.pi * 5000, analog=True)
    np.testing.assert_allclose(ac.rolloff(F, 5000.0, order), _analog(b, a), rtol=1e-9)


def test_breakup_peak_has_its_gain_at_f0_and_log_symmetry():
    h = ac.breakup([6000.0, 6000.0 * 3, 6000.0 / 3, 20.0, 1e7], 6000.0, 6.0, 4.0)
    assert 20 * np.log10(abs(h[0])) == pytest.approx(6.0, abs=1e-9)         # Cookbook: G at f0
    assert abs(h[1]) == pytest.approx(abs(h[2]), rel=1e-9)                  # symmetric in log f
    assert 20 * np.log10(abs(h[3])) == pytest.approx(0.0, abs=1e-3)
    assert 20 * np.log10(abs(h[4])) == pytest.approx(0.0, abs=1e-3)


def test_model_errors_name_the_field():
    with pytest.raises(DesignError, match=r"qtc: must be a positive number of , not 0"):
        ac.closed_box(F, 50.0, 0.0)
    with pytest.raises(DesignError, match=r"rolloff_order: must be 1 or 2, not 3"):
        ac.rolloff(F, 5000.0, 3)


def _phase_error_deg(h, f=F, inside=(40.0, 10000.0)):
    ph = ac.minimum_phase_deg(f, 20 * np.log10(np.abs(h)))
    ref = np.degrees(np.unwrap(np.angle(h)))
    err = ph - ref
    err -= 360.0 * np.round(np.median(err) / 360.0)     # the phase is known up to 2 pi k
    m = (f > inside[0]) & (f < inside[1])
    return float(np.max(np.abs(err[m])))


@pytest.mark.parametrize("kind, order, fc", [("highpass", 2, 50.0), ("highpass", 4, 40.0),
                                             ("lowpass", 1, 1000.0), ("lowpass", 2, 5000.0),
                                             ("lowpass", 4, 2500.0), ("highpass", 3, 1500.0)])
def test_minimum_phase_of_a_butterworth_from_its_magnitude(kind, order, fc):
    # Analog Butterworth filters are minimum phase (scipy.signal.freqs as reference); an
    # octave inside the data the phase comes back within 1.5 deg (the edges, where the
    # magnitude is extended by its slope, within a few).
    b, a = signal.butter(order, 2 * np.pi * fc, kind, analog=True)
    assert _phase_error_deg(_analog(b, a)) < 1.5
    assert _phase_error_deg(_analog(b, a), inside=(20.0, 20000.0)) < 3.0


def test_minimum_phase_of_a_band_pass_and_a_driver_model():
    b, a = signal.butter(3, [2 * np.pi * 200, 2 * np.pi * 3000], "bandpass", analog=True)
    assert _phase_error_deg(_analog(b, a)) < 1.5
    drv = ac.closed_box(F, 55, 0.8) * ac.rolloff(F, 4000, 2) * ac.breakup(F, 6500, 8, 5)
    assert _phase_error_deg(drv) < 1.5


def test_minimum_phase_refuses_bad_data():
    with pytest.raises(DesignError, match="freqs_hz: needs increasing positive frequencies"):
        ac.minimum_phase_deg([100, 50, 200], [0, 0, 0])


def test_interpolation_in_log_frequency_matches_the_analog_response():
    # 60 points a decade of an analog closed box + roll-off, wrapped phase, brought onto
    # a 2000-point grid: magnitude within 0.01 dB and phase within 0.2 deg of the model.
    coarse = np.geomspace(10, 30000, 180)
    h = ac.closed_box(coarse, 50, 0.9) * ac.rolloff(coarse, 3000, 2)
    fine = np.geomspace(20, 20000, 2000)
    got = ac.interpolate_response(coarse, 20 * np.log10(abs(h)), np.degrees(np.angle(h)),
                                  fine).h
    ref = ac.closed_box(fine, 50, 0.9) * ac.rolloff(fine, 3000, 2)
    assert np.max(np.abs(20 * np.log10(abs(got) / abs(ref)))) < 0.01
    assert np.max(np.abs(np.degrees(np.angle(got / ref)))) < 0.2


def test_interpolation_refuses_a_grid_beyond_the_data_unless_allowed():
    f = np.geomspace(40, 18000, 50)
    with pytest.raises(DesignError, match=r"driver: the data covers 40 .. 18000 Hz but the "
                                          r"analysis needs 20 .. 20000 Hz"):
        ac.interpolate_response(f, np.zeros(50), np.zeros(50), [20.0, 20000.0])
    r = ac.interpolate_response(f, -12 * np.log2(40 / f), np.zeros(50), [20.0, 1000.0, 20000.0],
                                extrapolate=True)
    assert r.extrapolated_below_hz == 20.0 and r.extrapolated_above_hz == 20000.0
    # The low edge's slope (+12 dB/octave here) carries on below the data: 20 Hz is -12 dB.
    assert 20 * np.log10(abs(r.h[0])) == pytest.approx(-12.0, abs=1e-9)


def test_off_axis_paths_follow_the_geometry():
    # Two drivers 200 mm apart, listener 2 m away: on the axis between them the paths are
    # equal; at 15 deg each path follows the law of cosines; far away the difference is
    # d sin(theta) (the far-field limit).
    pos, off = np.array([100.0, -100.0]), np.zeros(2)
    delay, level = ac.off_axis_paths(pos, off, 2.0, [0.0, 15.0], temp_c=20.0)
    assert delay[0, 0] == pytest.approx(delay[0, 1], abs=1e-15)
    th = np.radians(15.0)
    r_top = np.sqrt(2.0 ** 2 + 0.1 ** 2 - 2 * 2.0 * 0.1 * np.cos(np.pi / 2 - th))
    assert delay[1, 0] == pytest.approx((r_top - 2.0) / 343.42, rel=1e-12)
    assert level[1, 0] == pytest.approx(2.0 / r_top, rel=1e-12)
    far, _ = ac.off_axis_paths(pos, off, 1000.0, [15.0])
    assert far[0, 1] - far[0, 0] == pytest.approx(0.2 * np.sin(th) / 343.42, rel=1e-4)
