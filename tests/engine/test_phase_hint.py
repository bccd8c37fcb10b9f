"""The phase warning names a change that works: each suggestion is applied and checked.

References computed here: scipy.signal.butter (a Linkwitz-Riley 4 is a Butterworth 2
squared, Linkwitz and Riley, JAES 1976; a second-order all-pass with Q 0.7071 has the
phase of that pair's sum, as LP + HP of an LR4 pair is an all-pass), the cookbook
all-pass (Audio EQ Cookbook, W3C note) written out below, scipy.signal.sosfreqz for
every response, and a delay of t turning the phase by -360 f t degrees (Oppenheim and
Schafer, 3rd ed., sec. 2.7).
"""

import json
import re

import numpy as np
import pytest
from scipy import signal

from planner import engine, presets, project
from tests.conftest import two_way

FS3 = 96000.0


def _old_three_way(limit=10.0):
    """The three-way preset without the tweeter's all-pass: mid/tweeter about 19 deg apart."""
    d = json.loads(presets.text("three-way"))
    d["bands"][2]["filters"] = d["bands"][2]["filters"][:1]
    d["analysis"]["phase_deg"] = limit
    return d


def _phase_warning(r):
    (w,) = [w for w in r.warnings if w.code == "phase"]
    return w.text


def _lr4(btype, fc, fs):
    bw = signal.butter(2, fc, btype, fs=fs, output="sos")
    return np.vstack([bw, bw])


def _allpass2(f0, fs, q=0.7071067811865476):
    """Audio EQ Cookbook second-order all-pass, a0 = 1."""
    w0 = 2 * np.pi * f0 / fs
    alpha = np.sin(w0) / (2 * q)
    b = [1 - alpha, -2 * np.cos(w0), 1 + alpha]
    a = [1 + alpha, -2 * np.cos(w0), 1 - alpha]
    return np.array([b + a]) / a[0]


def _phase(sos, f, fs, delay_ms=0.0):
    h = signal.sosfreqz(sos, worN=[f], fs=fs)[1][0] * np.exp(-2j * np.pi * f * delay_ms / 1e3)
    return np.degrees(np.angle(h))


def _wrap(x):
    return (x + 180.0) % 360.0 - 180.0


def test_the_three_way_hint_names_the_all_pass_and_it_works():
    d = _old_three_way()
    r = engine.analyse(project.from_dict(d))
    text = _phase_warning(r)
    m = re.search(r"add an all-pass \(order 2, Q 0\.707\) at (\d+) Hz to (\w+): that brings "
                  r"them to ([\d.]+) deg apart, checked", text)
    assert m, text
    f0, band = float(m.group(1)), m.group(2)
    assert (f0, band) == (350.0, "tweeter")
    d["bands"][2]["filters"].append({"type": "allpass", "order": 2, "freq": f0,
                                     "q": 0.7071067811865476})
    r2 = engine.analyse(project.from_dict(d))
    (c,) = [x for x in r2.checked_crossings if x.bands == ("mid", "tweeter")]
    assert r2.ok and abs(c.phase_diff_deg) <= 10.0
    # Independently: mid = LR4 HP 350 x LR4 LP 3000; tweeter = LR4 HP 3000 x all-pass 350.
    mid = np.vstack([_lr4("high", 350, FS3), _lr4("low", 3000, FS3)])
    tw = np.vstack([_lr4("high", 3000, FS3), _allpass2(350, FS3)])
    before = _wrap(_phase(mid, 3000, FS3) - _phase(_lr4("high", 3000, FS3), 3000, FS3))
    after = _wrap(_phase(mid, 3000, FS3) - _phase(tw, 3000, FS3))
    assert abs(before) > 15 and abs(after) < 0.5     # 0.5 deg: crossing near, not at, 3 kHz


def test_the_hint_also_gives_the_delay_that_works_and_it_does():
    d = _old_three_way()
    text = _phase_warning(engine.analyse(project.from_dict(d)))
    m = re.search(r"or add delay_ms ([\d.]+) to woofer and mid", text)
    assert m, text
    ms = float(m.group(1))
    # phi / (360 f): the phase the mid leads by at 3 kHz, turned into time.
    mid = np.vstack([_lr4("high", 350, FS3), _lr4("low", 3000, FS3)])
    lead = _wrap(_phase(mid, 3000, FS3) - _phase(_lr4("high", 3000, FS3), 3000, FS3))
    assert ms == pytest.approx(lead / (360 * 3000) * 1e3, rel=0.02)  # crossing is at ~3 kHz
    for i in (0, 1):
        d["bands"][i]["delay_ms"] = ms
    r2 = engine.analyse(project.from_dict(d))
    assert r2.ok and all(abs(c.phase_diff_deg) <= 10.0 for c in r2.checked_crossings)


def test_a_late_band_gets_the_delay_that_lines_it_up():
    d = two_way(4, fc=2000.0)
    d["bands"][1]["delay_ms"] = 0.05      # 36 deg at 2 kHz: 360 * 2000 * 0.05e-3
    text = _phase_warning(engine.analyse(project.from_dict(d)))
    m = re.search(r"add delay_ms ([\d.]+) to low: that brings them to ([\d.]+) deg", text)
    assert m, text
    assert float(m.group(1)) == pytest.approx(0.05, rel=1e-3)
    d["bands"][0]["delay_ms"] = float(m.group(1))
    (c,) = engine.analyse(project.from_dict(d)).checked_crossings
    assert abs(c.phase_diff_deg) < 0.1


def test_opposite_bands_are_told_to_invert_and_it_works():
    d = two_way(2, fc=2000.0)             # LR2 pair: 180 deg apart unless one is inverted
    text = _phase_warning(engine.analyse(project.from_dict(d)))
    assert "invert high: that brings them to 0.0 deg apart, checked" in text
    d["bands"][1]["invert"] = True
    assert engine.analyse(project.from_dict(d)).ok


def test_no_hint_tried_is_ever_claimed_without_checking():
    # A crossing that no single change fixes says so, with the closest figure.
    d = two_way(4, fc=2000.0)
    d["bands"][1]["filters"].append({"type": "allpass", "order": 2, "freq": 2000, "q": 3.0})
    d["analysis"]["phase_deg"] = 1.0
    r = engine.analyse(project.from_dict(d))
    texts = [w.text for w in r.warnings if w.code == "phase"]
    for t in texts:
        m = re.search(r"brings them to ([\d.]+) deg apart, checked", t)
        if m:
            assert float(m.group(1)) <= 1.0
        else:
            assert "no single inversion, all-pass or delay tried" in t


def _cases():
    """Projects with a crossing out of phase, of shapes the hint was not written for:
    Butterworth (orders 1, 3, 4, 6), Linkwitz-Riley (2, 4, 8) and Bessel (4, 8) pairs from
    80 Hz to 15 kHz, delays, a voicing shelf, drivers, 44.1 to 192 kHz."""
    out = []
    for fam, order, fs, fc, delay in (("butterworth", 3, 44100, 1800.0, 0.0),
                                      ("butterworth", 4, 96000, 350.0, 0.3),
                                      ("bessel", 4, 48000, 2500.0, 0.05),
                                      ("linkwitz-riley", 4, 192000, 80.0, 1.5),
                                      ("linkwitz-riley", 8, 48000, 5000.0, 0.02),
                                      ("butterworth", 1, 44100, 1000.0, 0.0),
                                      ("linkwitz-riley", 2, 192000, 15000.0, 0.004),
                                      ("butterworth", 6, 96000, 120.0, 0.8),
                                      ("bessel", 8, 44100, 9000.0, 0.03)):
        d = two_way(order, fam, fc=fc, fs=fs)
        d["bands"][1]["delay_ms"] = delay
        out.append(d)
    d = _old_three_way()
    d["bands"][1]["filters"].append({"type": "high_shelf", "freq": 1500, "gain_db": 2.0,
                                     "q": 0.7, "voicing": True})
    out.append(d)
    d = json.loads(presets.text("desk-2way"))
    d["bands"][0]["delay_ms"] = 0.12
    out.append(d)
    return out


@pytest.mark.parametrize("k", range(11))
def test_a_change_judged_from_the_report_matches_a_full_analysis_of_it(k):
    # Each candidate is first judged from the report's responses (the crossings'
    # phases turned by the change's own phase, the sum on the report's grid); that
    # judgment must match analysing the changed project from scratch.
    from planner.engine import warnings as ew

    r = engine.analyse(project.from_dict(_cases()[k]))
    failing = [c for c in r.checked_crossings if not c.ok]
    assert failing, [c.phase_diff_deg for c in r.checked_crossings]
    n = 0
    for c in failing:
        cands = ew._candidates(r, c)
        for (what, proj, _, _), fast in zip(cands, ew._screened(r, c, cands), strict=True):
            full = engine.analyse(proj, warnings=False)
            same = [abs(x.phase_diff_deg) for x in full.checked_crossings
                    if x.band_index == c.band_index]
            worst = max(abs(x.phase_diff_deg) for x in full.checked_crossings)
            # 0.05 deg: the crossing is refined to 1e-7 dB on each grid, so its frequency,
            # hence its phase, differs by rounding only.
            assert fast.phase_deg == pytest.approx(min(same), abs=0.05), what
            assert fast.worst_deg == pytest.approx(worst, abs=0.05), what
            dev = full.check("sum").figures["max_dev_db"]
            if abs(abs(dev) - full.project.analysis.flatness_db) > 0.02:
                assert fast.ok == full.ok, (what, dev)
            n += 1
    assert n >= 1


def test_every_fix_a_hint_names_is_checked_by_a_full_analysis():
    from planner.engine import warnings as ew

    r = engine.analyse(project.from_dict(_old_three_way()))
    (c,) = [c for c in r.checked_crossings if not c.ok]
    seen = []

    def reanalyse(p):
        seen.append(p)
        return engine.analyse(p, warnings=False)

    fixes = ew.phase_fixes(r, c, reanalyse, [12])
    cited = ew._cited(fixes, r.project.analysis.phase_deg)
    assert len(cited) == 2 and all(x.checked for x in cited)
    assert all(any(x.project is p for p in seen) for x in cited)
    for x in cited:                     # the figures are the full analysis's
        rr = engine.analyse(x.project, warnings=False)
        assert x.ok == rr.ok
        assert x.worst_deg == max(abs(y.phase_diff_deg) for y in rr.checked_crossings)


def test_the_check_first_and_the_hints_after_give_the_warnings_of_one_pass():
    # The editor shows the check at once and the hints a moment later: the two steps
    # must end where one analysis with hints does.
    from planner.engine.warnings import PENDING_HINT

    p = project.from_dict(_old_three_way())
    quick = engine.analyse(p, hints=False)
    (w,) = [w for w in quick.warnings if w.code == "phase"]
    assert w.text.endswith(PENDING_HINT) and engine.hints_pending(quick)
    later = engine.phase_hints(quick)
    whole = engine.analyse(p)
    assert [(x.text, x.band, x.code) for x in later.warnings] == \
        [(x.text, x.band, x.code) for x in whole.warnings]
    assert not engine.hints_pending(later)
    assert engine.hints_pending(quick)            # the first report is left as it was
