"""Band delays: how runs make them, and what rounding them costs against the check.

Sources: a delay of d samples is e^{-jwd}, a phase of -360 f d / fs degrees
(Oppenheim and Schafer, "Discrete-Time Signal Processing", 3rd ed., sec.
2.7); scipy.signal.sosfreqz as the reference response of each band's
sections, summed here with numpy; the LR4 crossover (Linkwitz and Riley,
JAES 24(1), 1976).
"""

import re

import numpy as np
import pytest
from scipy import signal

from planner import engine, project
from planner.engine import delays, rounding
from planner.dsp import fracdelay as fd
from planner.errors import ExportError
from planner.units import format_hz
from tests.conftest import two_way

FS = 48000.0


def _proj(tweeter_samples, fs=FS, fc=3000.0, **kw):
    d = two_way(order=4, fc=fc, fs=fs)
    d["bands"][1]["delay_ms"] = tweeter_samples * 1000.0 / fs
    for k, v in kw.items():
        d["bands"][1][k] = v
    return project.from_dict(d)


def _ref_sum(p, delays_samples, freqs):
    """The sum of the bands by scipy.signal.sosfreqz, each delayed by e^{-jwd} (numpy)."""
    fs = float(p.sample_rate)
    total = 0
    for b, d in zip(p.bands, delays_samples):
        if b.mute:
            continue
        sos = engine.design_band(b, fs).sos
        h = signal.sosfreqz(sos, worN=freqs, fs=fs)[1]
        total = total + h * 10 ** (b.gain_db / 20) * np.exp(-2j * np.pi * freqs / fs * d)
    return total


def _ref_change(p, r, new_delays):
    """Largest signed change of the summed level in dB (floored at -100 dB), and where."""
    f = r.freqs_hz
    old = [b.delay_ms * p.sample_rate / 1000 for b in p.bands]
    lv = [np.maximum(20 * np.log10(np.abs(_ref_sum(p, d, f))), -100.0) for d in (old, new_delays)]
    ch = lv[1] - lv[0]
    k = int(np.argmax(np.abs(ch)))
    return ch[k], f[k]


# --- plans ------------------------------------------------------------------

def test_apply_plan_aligns_every_band():
    # 0.48 and 10.3 samples get the filter; 0 and 12 get its latency M as whole samples:
    # every band is then M later than its delay, none relative to another.
    m = fd.kaiser_design().latency_samples
    plan = delays.plan_delays([0.0, 0.48, 10.3, 12.0], "apply")
    assert plan.added_latency_samples == m and plan.design.taps == 2 * m + 1
    assert [b.whole_samples for b in plan.bands] == [m, 0, 10, 12 + m]
    assert [b.taps is None for b in plan.bands] == [True, False, False, True]
    np.testing.assert_allclose([b.fraction_samples for b in plan.bands], [0, 0.48, 0.3, 0],
                               atol=1e-12)
    np.testing.assert_allclose([b.applied_samples - b.delay_samples for b in plan.bands],
                               [m] * 4, atol=1e-12)
    assert plan.fractional == [1, 2]


def test_apply_plan_keeps_the_fraction_within_half_a_sample():
    # 0.6 = 1 - 0.4: a delay line of 1 and a filter for -0.4.
    b = delays.plan_delays([0.6], "apply").bands[0]
    assert b.whole_samples == 1 and b.fraction_samples == pytest.approx(-0.4, abs=1e-12)


def test_round_plan_takes_the_nearest_sample():
    # Nearest, halves up: 0.48 -> 0, 0.6 -> 1 (floor would give 0), 10.5 -> 11.
    plan = delays.plan_delays([0.48, 0.6, 10.5, 7.0], "round")
    assert [b.whole_samples for b in plan.bands] == [0, 1, 11, 7]
    assert plan.added_latency_samples == 0 and all(b.taps is None for b in plan.bands)
    np.testing.assert_allclose([b.rounded_by_samples for b in plan.bands],
                               [-0.48, 0.4, 0.5, 0.0], atol=1e-12)
    assert plan.rounded_delays == [0.0, 1.0, 11.0, 7.0]


def test_whole_delays_add_no_latency():
    plan = delays.plan_delays([0.0, 12.0 + 1e-9], "apply")   # within the tolerance: whole
    assert plan.added_latency_samples == 0 and plan.design is None
    assert [b.whole_samples for b in plan.bands] == [0, 12]


def test_unknown_mode_refused():
    with pytest.raises(ExportError, match=r"fractional_delay: must be one of apply, round, "
                                          r"not 'floor'"):
        delays.plan_delays([0.5], "floor")


def test_plan_to_dict_holds_mode_fraction_and_latency():
    plan = delays.plan_delays([0.0, 0.48], "apply")
    d = plan.to_dict(["low", "high"], FS)
    assert d["fractional_delay"] == "apply"
    assert d["added_latency_samples"] == plan.added_latency_samples
    assert d["added_latency_ms"] == pytest.approx(1000 * plan.added_latency_samples / FS)
    assert d["filter"]["taps"] == plan.design.taps
    assert d["filter"]["magnitude_within_db"] < 0.01
    assert [b["fraction_samples"] for b in d["bands"]] == [0.0, pytest.approx(0.48)]


# --- what rounding costs ------------------------------------------------------

def test_phase_change_at_the_crossing_is_the_delay_phase():
    # Rounding the tweeter from 0.48 to 0 samples advances it by 0.48 samples: the phase
    # difference woofer - tweeter changes by -360 fc 0.48 / fs (Oppenheim and Schafer
    # sec. 2.7), -10.8 deg at 3 kHz; to 1e-6 deg.
    p = _proj(0.48)
    r = engine.analyse(p)
    e = rounding.rounding_effect(r, [0.0, 0.0])
    (c,) = e.crossings
    assert c.change_deg == pytest.approx(-360 * c.freq_hz * 0.48 / FS, abs=1e-6)
    assert c.freq_hz == pytest.approx(3000, rel=1e-3)   # LR4: levels equal at fc
    assert e.shifts_samples == (0.0, pytest.approx(-0.48))


@pytest.mark.parametrize("fs", [44100.0, 48000.0, 96000.0])
@pytest.mark.parametrize("samples", [0.48, 10.3, 7.48])
def test_sum_change_agrees_with_sosfreqz(fs, samples):
    # The change of the summed level against an independent sum of sosfreqz responses;
    # 1e-6 dB (float64 responses evaluated two ways).
    p = _proj(samples, fs)
    r = engine.analyse(p)
    new = [0.0, float(fd.nearest_whole(samples))]
    e = rounding.rounding_effect(r, new)
    ref, at = _ref_change(p, r, new)
    assert e.sum_change_db == pytest.approx(ref, abs=1e-6) and e.at_hz == at


def test_near_a_null_rounding_costs_more_than_2_db():
    # 7.48 samples at 3 kHz is 168 deg of extra phase: the LR4 sum dips near the
    # crossing, and rounding to 7 samples (157.5 deg) moves it by more than 2 dB.
    p = _proj(7.48)
    r = engine.analyse(p)
    e = rounding.rounding_effect(r, [0.0, 7.0])
    assert abs(e.sum_change_db) > 2.0


def test_no_active_band_no_change():
    d = two_way()
    d["bands"][0]["mute"] = d["bands"][1]["mute"] = True
    r = engine.analyse(project.from_dict(d))
    e = rounding.rounding_effect(r, [0.0, 0.0])
    assert e.sum_change_db == 0.0 and e.crossings == ()


# --- the check's warning ------------------------------------------------------

def _fraction_warnings(p):
    return [w for w in engine.analyse(p).warnings if w.code == "fractional-delay"]


@pytest.mark.parametrize("samples,fs", [(0.48, 48000.0), (10.3, 48000.0), (0.48, 44100.0),
                                        (10.3, 96000.0)])
def test_check_warns_with_the_cost_of_rounding(samples, fs):
    # The figures, computed here: the phase change -360 fc (r - d) / fs at the crossing
    # (Oppenheim and Schafer sec. 2.7) and the sum's level change from sosfreqz.
    p = _proj(samples, fs)
    r = engine.analyse(p)
    (w,) = [w for w in r.warnings if w.code == "fractional-delay"]
    k = fd.nearest_whole(samples)
    (c,) = r.checked_crossings
    dphi = -360 * c.freq_hz * (samples - k) / fs
    dl, at = _ref_change(p, r, [0.0, float(k)])
    num = r"([+-]\d+\.\d+)"
    pattern = (rf"band high: its delay, {samples:.6g} samples at {fs:g} Hz, is not a whole "
               rf"number of samples; rounded to {k}, the phase difference low - high at "
               rf"{re.escape(format_hz(c.freq_hz))} changes by {num} deg; the sum's level "
               rf"by up to {num} dB \(at {re.escape(format_hz(at))}\): the DSP must apply "
               rf"the fraction \(render and the WAV export do\)")
    m = re.fullmatch(pattern, w.text)
    assert m, w.text
    # Printed to 0.1 deg and 0.01 dB: within half a unit of the last digit (plus 1e-6).
    assert float(m[1]) == pytest.approx(dphi, abs=0.05 + 1e-6)
    assert float(m[2]) == pytest.approx(dl, abs=0.005 + 1e-6)
    assert w.band == 1


def test_warning_without_a_crossing_gives_the_level_only():
    # One band alone: no crossing, only the sum's level (which a pure delay leaves alone).
    d = {**two_way(), "bands": [{"name": "all", "delay_ms": 0.3 * 1000 / FS, "filters": []}]}
    (w,) = _fraction_warnings(project.from_dict(d))
    assert re.fullmatch(r"band all: its delay, 0.3 samples at 48000 Hz, is not a whole number "
                        r"of samples; rounded to 0, it changes the sum's level by up to "
                        r"[+-]0.00 dB \(at .*\): the DSP must apply the fraction .*", w.text)


def test_whole_delay_no_warning():
    assert _fraction_warnings(_proj(12.0)) == []


def test_muted_band_not_warned():
    assert _fraction_warnings(_proj(0.48, mute=True)) == []


def test_each_fractional_band_warned_rounding_only_itself():
    # Two fractional bands: each warning rounds its own band (the other one kept exact).
    d = two_way(order=4, fc=3000.0)
    d["bands"][0]["delay_ms"] = 0.25 * 1000 / FS
    d["bands"][1]["delay_ms"] = 0.48 * 1000 / FS
    p = project.from_dict(d)
    r = engine.analyse(p)
    ws = [w for w in r.warnings if w.code == "fractional-delay"]
    assert [w.band for w in ws] == [0, 1]
    (c,) = r.checked_crossings
    # Band low rounded from 0.25 to 0: low - high changes by +360 fc 0.25 / fs.
    assert f"changes by {360 * c.freq_hz * 0.25 / FS:+.1f} deg" in ws[0].text
    assert f"changes by {-360 * c.freq_hz * 0.48 / FS:+.1f} deg" in ws[1].text


# --- notes of the runs ----------------------------------------------------------

def test_apply_note_names_the_filter_and_the_latency():
    p = _proj(0.48)
    r = engine.analyse(p)
    plan = delays.plan_delays([0.0, 0.48], "apply")
    (line,) = rounding.run_notes(r, plan)
    m = plan.added_latency_samples
    assert line == (f"at 48000 Hz fractional delays are applied by a {2 * m + 1}-tap "
                    f"Kaiser-windowed sinc (fraction in samples: high 0.48); every band is "
                    f"{m} samples ({1000 * m / FS:.4g} ms) later than its delay_ms")


def test_round_note_gives_the_cost():
    p = _proj(10.3)
    r = engine.analyse(p)
    (line,) = rounding.run_notes(r, delays.plan_delays([0.0, 10.3], "round"))
    (c,) = r.checked_crossings
    dl, at = _ref_change(p, r, [0.0, 10.0])
    m = re.fullmatch(r"at 48000 Hz delays are rounded to the nearest sample \(high 10.3 -> "
                     r"10 samples\): the phase difference low - high at (.*) changes by "
                     r"([+-]\d+\.\d) deg; the sum's level by up to ([+-]\d+\.\d\d) dB "
                     r"\(at (.*)\)", line)
    assert m, line
    assert m[1] == format_hz(c.freq_hz) and m[4] == format_hz(at)
    # Printed to 0.1 deg and 0.01 dB.
    assert float(m[2]) == pytest.approx(-360 * c.freq_hz * 0.3 / FS, abs=0.05 + 1e-6)
    assert float(m[3]) == pytest.approx(dl, abs=0.005 + 1e-6)


def test_exact_note_for_coefficient_files():
    r = engine.analyse(_proj(0.48))
    (line,) = rounding.exact_notes(r)
    assert line.startswith("at 48000 Hz delay_samples is written exactly (high 0.48): the DSP "
                           "must apply the fraction; rounded to the nearest sample, the phase "
                           "difference low - high at ")


def test_no_notes_without_fractions():
    r = engine.analyse(_proj(12.0))
    assert rounding.run_notes(r, delays.plan_delays([0.0, 12.0], "round")) == []
    assert rounding.exact_notes(r) == []
