"""The acoustic sum (drivers x filters) against computations made here from outside references.

Sources: scipy.signal.sosfreqz and scipy.signal.freqs (electrical and analog driver
responses, multiplied here); Linkwitz and Riley, JAES 1976 (an LR4 pair with coincident
flat drivers sums flat and in phase); Small, JAES 1972 (closed box); the delay property
of the Fourier transform (a delay t turns the phase by -360 f t degrees, Oppenheim and
Schafer 3rd ed. sec. 2.7); Kinsler et al. (c = 331.3 + 0.606 T m/s); the law of cosines
(path lengths off axis); Bode 1945 (minimum phase from magnitude).
"""

import json

import numpy as np
import pytest
from scipy import signal

from planner import engine, project
from planner.dsp.response_text import format_response_text

FS = 48000
C20 = 331.3 + 0.606 * 20


def _two_way(woofer=None, tweeter=None, fc=2000.0, order=4, **extra):
    d = {"format": "crossplan-project", "version": 1, "name": "2-way", "sample_rate": FS,
         "analysis": {"f_min": 100, "f_max": 20000, "points": 512},
         "bands": [
             {"name": "woofer", "filters": [{"type": "lowpass", "family": "linkwitz-riley",
                                             "order": order, "freq": fc}]},
             {"name": "tweeter", "filters": [{"type": "highpass", "family": "linkwitz-riley",
                                              "order": order, "freq": fc}]}]}
    if woofer is not None:
        d["bands"][0]["driver"] = woofer
    if tweeter is not None:
        d["bands"][1]["driver"] = tweeter
    d.update(extra)
    return d


def _lr(kind, fc, order, f):
    half = signal.butter(order // 2, fc, kind, fs=FS, output="sos")
    return signal.sosfreqz(np.vstack([half, half]), worN=f, fs=FS)[1]


def test_flat_drivers_leave_the_lr4_sum_flat_and_in_phase():
    r = engine.analyse(project.from_dict(_two_way({"model": "flat"}, {"model": "flat"})))
    assert r.acoustic and abs(r.max_dev_db) < 1e-9            # Linkwitz and Riley 1976
    assert abs(r.checked_crossings[0].phase_diff_deg) < 1e-6
    assert [b.acoustic for b in r.bands] == [True, True]


def test_a_closed_box_woofer_multiplies_its_band():
    # Band = electrical (sosfreqz) x closed box s^2 / (s^2 + s wc/Q + wc^2) (scipy.freqs).
    r = engine.analyse(project.from_dict(_two_way({"model": "closed-box", "fc": 60,
                                                   "qtc": 0.8}, None)))
    f = r.freqs_hz
    wc = 2 * np.pi * 60
    box = signal.freqs([1, 0, 0], [1, wc / 0.8, wc * wc], worN=2 * np.pi * f)[1]
    np.testing.assert_allclose(r.responses.h[0], _lr("lowpass", 2000, 4, f) * box, rtol=1e-9)
    np.testing.assert_allclose(r.responses.h[1], _lr("highpass", 2000, 4, f), rtol=1e-9)
    assert [b.acoustic for b in r.bands] == [True, False]


def test_a_recessed_tweeter_shows_its_phase_error_and_the_matching_delay_fixes_it():
    # 40 mm behind the woofer: t = 0.040 / c, the tweeter lags by 360 f t at the crossing.
    d = _two_way({"model": "flat"}, {"model": "flat", "offset_mm": 40})
    r = engine.analyse(project.from_dict(d))
    c = r.checked_crossings[0]
    t = 0.040 / C20
    assert c.phase_diff_deg == pytest.approx(360 * c.freq_hz * t, abs=1e-6)
    assert not r.ok
    hint = next(w.text for w in r.warnings if w.code == "phase")
    ms = float(hint.split("add delay_ms ")[1].split()[0])
    assert ms == pytest.approx(t * 1000, rel=1e-3)
    d["bands"][0]["delay_ms"] = t * 1000
    fixed = engine.analyse(project.from_dict(d))
    assert fixed.ok and abs(fixed.checked_crossings[0].phase_diff_deg) < 1e-6


def test_levels_are_matched_to_the_least_sensitive_driver():
    d = _two_way({"model": "flat", "sensitivity_db": 87}, {"model": "flat",
                                                          "sensitivity_db": 91})
    r = engine.analyse(project.from_dict(d))
    assert r.drivers.reference_db == 87 and r.drivers.auto_reference
    assert r.bands[1].acoustics.suggested_gain_db == pytest.approx(-4.0)
    # +4 dB where the tweeter's LR4 has reached its pass band (5e-6 dB short at 20 kHz).
    assert r.max_dev_db == pytest.approx(4.0, abs=1e-4)
    assert any(w.code == "level" and "gain_db -4.0 matches it" in w.text for w in r.warnings)
    d["bands"][1]["gain_db"] = -4.0
    assert engine.analyse(project.from_dict(d)).ok
    d["acoustics"] = {"reference_db": 80.0}
    r = engine.analyse(project.from_dict(d))
    assert r.drivers.reference_db == 80 and not r.drivers.auto_reference


def test_a_measured_driver_without_phase_gets_its_minimum_phase(tmp_path):
    # A tweeter measured as magnitude only (a second-order highpass at 800 Hz, Q 0.8, a
    # minimum-phase system): the band comes back within 0.05 dB and 1.5 deg of the model
    # made with its true phase (scipy.signal.freqs), an octave inside the data.
    f = np.geomspace(20, 40000, 400)
    w0 = 2 * np.pi * 800
    h = signal.freqs([1, 0, 0], [1, w0 / 0.8, w0 * w0], worN=2 * np.pi * f)[1]
    (tmp_path / "tw.txt").write_text(format_response_text(f, 20 * np.log10(np.abs(h))))
    p = project.from_dict(_two_way(None, {"file": "tw.txt"}), tmp_path)
    r = engine.analyse(p)
    g = r.freqs_hz
    ref = _lr("highpass", 2000, 4, g) * signal.freqs([1, 0, 0], [1, w0 / 0.8, w0 * w0],
                                                     worN=2 * np.pi * g)[1]
    got = r.responses.h[1]
    inside = (g > 200) & (g < 10000)
    assert np.max(np.abs(20 * np.log10(np.abs(got[inside] / ref[inside])))) < 0.05
    assert np.max(np.abs(np.degrees(np.angle(got[inside] / ref[inside])))) < 1.5


def test_an_acoustic_target_reports_how_far_the_band_is():
    # A flat driver through an LR4 meets an LR4 target; a closed box driver misses it by
    # its own level at the target's useful range (checked against the analog formula).
    tgt = [{"type": "lowpass", "family": "linkwitz-riley", "order": 4, "freq": 2000}]
    d = _two_way({"model": "flat"}, None)
    d["bands"][0]["target"] = tgt
    r = engine.analyse(project.from_dict(d))
    assert r.bands[0].acoustics.target_dev_db < 1e-9
    d["bands"][0]["driver"] = {"model": "closed-box", "fc": 150, "qtc": 0.707}
    r = engine.analyse(project.from_dict(d))
    wc = 2 * np.pi * 150
    at = 100.0   # the range's low end: where the box is furthest down
    box = signal.freqs([1, 0, 0], [1, wc / 0.707, wc * wc], worN=[2 * np.pi * at])[1][0]
    assert r.bands[0].acoustics.target_dev_db == pytest.approx(-20 * np.log10(abs(box)),
                                                               abs=0.05)


def test_headroom_stays_electrical_when_drivers_are_louder():
    # A 97 dB driver is not a +10 dB clip: the headroom check reads the DSP's signal.
    r = engine.analyse(project.from_dict(_two_way({"model": "flat", "sensitivity_db": 97},
                                                  {"model": "flat", "sensitivity_db": 87})))
    assert r.bands[0].peak_gain_db < 0.05 and r.check("headroom").ok


def test_json_says_which_bands_are_acoustic_and_the_reference():
    r = engine.analyse(project.from_dict(_two_way({"model": "flat", "sensitivity_db": 87},
                                                  None)))
    d = json.loads(json.dumps(r.to_dict()))
    assert [b["acoustic"] for b in d["bands"]] == [True, False]
    assert d["acoustics"]["reference_db"] == 87 and "group_delay_audibility" in d["acoustics"]
    plain = engine.analyse(project.from_dict(_two_way())).to_dict()
    assert plain["acoustics"] is None and [b["acoustic"] for b in plain["bands"]] == [False,
                                                                                   False]


def _off_axis_ref(d_mm, t_s, angle_deg, f_hz, dist=2.0):
    """|woofer + tweeter| at an angle, by the law of cosines (LR4 at the crossing: both at
    -6 dB, in phase on the axis), the tweeter also delayed by t_s."""
    th = np.radians(angle_deg)
    ys = np.array([-d_mm / 2000, d_mm / 2000])
    r = np.sqrt((dist * np.cos(th)) ** 2 + (dist * np.sin(th) - ys) ** 2)
    ph = -2 * np.pi * f_hz * ((r - dist) / C20 + np.array([0.0, t_s]))
    return np.abs(np.sum(0.5 * dist / r * np.exp(1j * ph)))


def test_the_lobe_tilts_as_the_path_geometry_says():
    # Drivers 200 mm apart, the tweeter 30 mm recessed: the lobe of the crossing tilts to
    # where the brute-force sum below is loudest (within one step of the angles).
    d = _two_way({"model": "flat", "position_mm": -100}, {"model": "flat", "position_mm": 100,
                                                          "offset_mm": 30})
    d["acoustics"] = {"angle_min_deg": -40, "angle_max_deg": 40, "angle_step_deg": 1}
    r = engine.analyse(project.from_dict(d))
    ox = r.off_axis
    lobe = ox.lobes[0]
    angles = np.arange(-40, 41)
    ref = angles[np.argmax([_off_axis_ref(200, 0.030 / C20, a, lobe["freq_hz"])
                            for a in angles])]
    assert abs(lobe["lobe_deg"] - ref) <= 1
    assert ox.window_deg[0] <= 0 <= ox.window_deg[1]
    flat = _two_way({"model": "flat", "position_mm": -100}, {"model": "flat",
                                                            "position_mm": 100})
    sym = engine.analyse(project.from_dict(flat)).off_axis
    assert sym.window_deg[0] == -sym.window_deg[1] and sym.lobes[0]["lobe_deg"] == 0


def test_no_positions_no_off_axis_view():
    r = engine.analyse(project.from_dict(_two_way({"model": "flat"}, {"model": "flat"})))
    assert r.off_axis is None


def test_the_cost_of_rounding_a_delay_is_acoustic_too():
    # 0.48 samples of the tweeter's delay rounded away turn the crossing by
    # 360 f (0.48 / fs) deg (the delay property), drivers or not.
    d = _two_way({"model": "tweeter", "fc": 500, "q": 0.7}, {"model": "flat"})
    d["bands"][1]["delay_ms"] = 0.48 / FS * 1000
    r = engine.analyse(project.from_dict(d))
    w = next(w.text for w in r.warnings if w.code == "fractional-delay")
    c = r.checked_crossings[0]
    expect = -360 * c.freq_hz * 0.48 / FS
    got = float(w.split("changes by ")[1].split(" deg")[0])
    assert got == pytest.approx(expect, abs=0.15)
