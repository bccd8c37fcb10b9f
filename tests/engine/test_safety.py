"""Driver safety warnings: what the check says about designs that can damage a driver.

The thresholds are common practice, no published source (planner.config): a tweeter's
highpass at least twice its resonance and 12 dB/octave or steeper; a low-frequency boost of
more than 3 dB asks for excursion; a vented box wants a subsonic highpass at or above half
its tuning.
"""

import pytest

from planner import engine, project


def _report(driver, filters, name="t"):
    return engine.analyse(project.from_dict({
        "format": "crossplan-project", "version": 1, "name": "s", "sample_rate": 48000,
        "bands": [{"name": name, "filters": filters, "driver": driver}]}))


def _codes(r):
    return [w.code for w in r.warnings]


TW = {"model": "tweeter", "fc": 900, "role": "tweeter"}
HP = {"type": "highpass", "family": "linkwitz-riley", "order": 4, "freq": 2200}


def test_a_tweeter_without_a_highpass_is_warned_of():
    r = _report(TW, [])
    (w,) = [w for w in r.warnings if w.code == "tweeter-highpass"]
    assert "drives a tweeter with no highpass at all" in w.text


def test_a_tweeter_highpass_below_twice_its_resonance_is_warned_of():
    r = _report(TW, [dict(HP, freq=1500)])
    assert any("below 2 x its resonance (900 Hz): move it to 1.8 kHz" in w.text
               for w in r.warnings)
    assert "tweeter-highpass" not in _codes(_report(TW, [HP]))


def test_a_first_order_tweeter_highpass_is_warned_of():
    r = _report(TW, [{"type": "highpass", "family": "butterworth", "order": 1, "freq": 3000}])
    assert any("first-order (6 dB/octave) highpass only" in w.text for w in r.warnings)


def test_a_compression_driver_by_its_role_and_declared_resonance():
    drv = {"model": "flat", "role": "compression", "resonance_hz": 700}
    r = _report(drv, [dict(HP, freq=1000)])
    assert any("its compression driver's highpass at 1 kHz is below 2 x its resonance" in w.text
               for w in r.warnings)


def test_a_linkwitz_transform_boost_asks_for_excursion():
    r = _report({"model": "closed-box", "fc": 55, "qtc": 0.9},
                [{"type": "linkwitz_transform", "f0": 55, "q0": 0.9, "fp": 30, "qp": 0.7}])
    (w,) = [w for w in r.warnings if w.code == "excursion"]
    assert "a +10.5 dB boost at low frequencies asks the driver for more excursion" in w.text


def test_a_vented_box_without_a_subsonic_highpass_is_warned_of():
    r = _report({"model": "vented-box", "fc": 40}, [])
    assert any("add a subsonic highpass at 20 Hz or above" in w.text for w in r.warnings)
    sub = {"type": "highpass", "family": "butterworth", "order": 2, "freq": 25}
    assert "subsonic" not in _codes(_report({"model": "vented-box", "fc": 40}, [sub]))


def test_a_break_up_peak_gets_a_notch_suggested_unless_cut():
    drv = {"model": "flat", "breakup_hz": 6000, "breakup_db": 7, "breakup_q": 5}
    r = _report(drv, [])
    assert any("add a breakup_notch of 7.0 dB at 6 kHz, q 5" in w.text for w in r.warnings)
    notch = {"type": "breakup_notch", "freq": 6000, "height_db": 7, "q": 5}
    assert "breakup" not in _codes(_report(drv, [notch]))


def test_the_safety_note_follows_a_safety_warning():
    from planner.present.text import SAFETY_NOTE, text_report

    assert SAFETY_NOTE in text_report(_report(TW, []))


@pytest.mark.parametrize("role", ["woofer", None])
def test_woofers_are_not_held_to_tweeter_rules(role):
    drv = {"model": "closed-box", "fc": 50}
    if role:
        drv["role"] = role
    assert "tweeter-highpass" not in _codes(_report(drv, []))
