"""FIR bands in the engine: summation, group delay, latency and the FIR warnings.

Sources: Oppenheim and Schafer, "Discrete-Time Signal Processing", 3rd ed.,
sec. 5.7 (a linear-phase FIR of N taps has a constant group delay of (N-1)/2
samples) and ch. 7 (the delayed impulse minus a lowpass is the complementary
highpass); scipy.signal.freqz and scipy.signal.group_delay as reference
library for the responses.
"""

import copy

import numpy as np
import pytest
from scipy import signal

from planner import engine, project

FS = 48000
TAPS = 1023
DELAY = (TAPS - 1) / 2      # Oppenheim and Schafer sec. 5.7


def _split_doc(method="window", taps=TAPS, xo=(300, 2800), **kw):
    bands = []
    for k, name in enumerate(["woofer", "mid", "tweeter"][: len(xo) + 1]):
        f = {"type": "split", "family": "fir", "crossovers": list(xo), "band": k, "taps": taps,
             "method": method, **kw}
        bands.append({"name": name, "filters": [f]})
    return {"format": "crossplan-project", "version": 1, "name": "split", "sample_rate": FS,
            "analysis": {"flatness_db": 0.5}, "bands": bands}


SPLITS = [("window", {"window": "blackman"}), ("remez", {"transition_hz": 200}),
          ("lsq", {"transition_hz": 200})]


@pytest.mark.parametrize("method,kw", SPLITS, ids=[m for m, _ in SPLITS])
class TestSplitSum:
    def test_taps_sum_to_a_delayed_unit_impulse(self, method, kw):
        r = engine.analyse(project.from_dict(_split_doc(method, **kw)))
        total = sum(d.fir for d in r.designs)
        delta = np.zeros(TAPS)
        delta[int(DELAY)] = 1.0
        # Telescoping sum: exact but for rounding of the differences (1e-12).
        assert np.max(np.abs(total - delta)) < 1e-12

    def test_summed_response_is_a_pure_delay(self, method, kw):
        r = engine.analyse(project.from_dict(_split_doc(method, **kw)))
        ref = np.exp(-1j * 2 * np.pi * r.freqs_hz / FS * DELAY)
        # |sum - e^{-jw(N-1)/2}| below 1e-12 on the whole grid: about 1e-11 dB of
        # magnitude and 1e-10 deg of phase.
        assert np.max(np.abs(r.sum_h - ref)) < 1e-12
        assert abs(r.max_dev_db) < 1e-10 and r.flat_ok

    def test_sum_group_delay_is_constant(self, method, kw):
        r = engine.analyse(project.from_dict(_split_doc(method, **kw)))
        gd = r.responses.sum_group_delay_samples(r.active)
        # (N-1)/2 samples, exact by the product rule; rounding only (1e-9 samples).
        np.testing.assert_allclose(gd, DELAY, rtol=0, atol=1e-9)


def test_band_response_matches_freqz():
    r = engine.analyse(project.from_dict(_split_doc("remez", transition_hz=200)))
    for d, h in zip(r.designs, r.responses.h):
        ref = signal.freqz(d.fir, worN=r.freqs_hz, fs=FS)[1]
        # Block evaluation of 1023 taps against scipy's: rounding (1e-12 absolute).
        assert np.max(np.abs(h - ref)) < 1e-12


def test_band_group_delay_matches_scipy():
    # A lone lowpass band (Hann window, 255 taps): where its magnitude is not
    # near a zero, scipy.signal.group_delay gives (N-1)/2 as well.
    doc = {"format": "crossplan-project", "version": 1, "name": "lp", "sample_rate": FS,
           "bands": [{"name": "a", "filters": [{"type": "lowpass", "family": "fir",
                                                "freq": 2200, "taps": 255}]}]}
    r = engine.analyse(project.from_dict(doc))
    f = r.freqs_hz[r.freqs_hz < 1500]
    ref = signal.group_delay((r.designs[0].fir, [1.0]), w=f, fs=FS)[1]
    got = r.responses.group_delay_samples()[0][: len(f)]
    np.testing.assert_allclose(got, ref, rtol=0, atol=1e-6)   # scipy's own rounding
    np.testing.assert_allclose(got, 127.0, rtol=0, atol=1e-9)


class TestLatency:
    def test_split_bands_latency_is_half_the_length(self):
        d = engine.analyse(project.from_dict(_split_doc())).to_dict()
        for b in d["bands"]:
            assert b["latency_samples"] == DELAY
            assert b["latency_ms"] == pytest.approx(1000 * DELAY / FS, rel=1e-12)
            assert b["fir_linear_phase"] is True
        assert d["sum"]["latency_samples"] == DELAY
        assert d["sum"]["latencies_agree"] is True

    def test_iir_band_latency_is_its_delay(self):
        p = project.load_preset("two-way")
        doc = project.to_dict(p)
        doc["bands"][1]["delay_ms"] = 0.5
        d = engine.analyse(project.from_dict(doc)).to_dict()
        assert d["bands"][0]["latency_samples"] == 0.0
        assert d["bands"][1]["latency_samples"] == pytest.approx(0.5 * FS / 1000, rel=1e-12)

    def test_sum_latency_is_the_largest_band_latency(self):
        doc = _mixed()
        r = engine.analyse(project.from_dict(doc))
        assert r.latency_samples == max(b.latency_samples for b in r.bands) == 160.0
        assert r.to_dict()["sum"]["latencies_agree"] is False

    def test_fir_latencies_of_a_band_add(self):
        # Two cascaded linear-phase filters of 101 and 201 taps: 50 + 100 samples.
        doc = _mixed()
        doc["bands"][1]["filters"].append({"type": "lowpass", "family": "fir", "freq": 12000,
                                           "taps": 101})
        doc["bands"][1]["filters"][0]["taps"] = 201
        r = engine.analyse(project.from_dict(doc))
        assert r.bands[1].latency_samples == 150.0
        assert len(r.designs[1].fir) == 301

    def test_text_report_has_a_latency_line(self):
        from planner.present.text import text_report

        text = text_report(engine.analyse(project.from_dict(_split_doc())))
        assert ("latency    woofer 511, mid 511, tweeter 511 samples; sum 511 samples "
                "(10.65 ms), bands aligned") in text

    def test_bypassed_fir_adds_no_latency(self):
        doc = _mixed()
        doc["bands"][1]["filters"][0]["bypass"] = True
        assert engine.analyse(project.from_dict(doc)).bands[1].latency_samples == 0.0


def _mixed():
    """LR4 woofer (IIR) and an FIR highpass tweeter of 321 taps (160 samples late)."""
    return {"format": "crossplan-project", "version": 1, "name": "mixed", "sample_rate": FS,
            "bands": [
                {"name": "woofer", "filters": [{"type": "lowpass", "family": "linkwitz-riley",
                                                "order": 4, "freq": 2200}]},
                {"name": "tweeter", "filters": [{"type": "highpass", "family": "fir",
                                                 "freq": 2200, "taps": 321}]}]}


class TestWarnings:
    def _texts(self, doc, code):
        return [w.text for w in engine.analyse(project.from_dict(doc)).warnings
                if w.code == code]

    def test_mixed_project_latency_warning(self):
        (text,) = self._texts(_mixed(), "latency")
        assert text == ("band woofer (IIR, latency 0 samples) leads band tweeter (FIR, latency "
                        "160 samples) by 160 samples (3.33333 ms): add delay_ms 3.33333 to woofer")

    def test_warning_points_at_the_leading_band(self):
        w = [w for w in engine.analyse(project.from_dict(_mixed())).warnings
             if w.code == "latency"]
        assert w[0].band == 0

    def test_warning_counts_the_delay_already_there(self):
        doc = _mixed()
        doc["bands"][0]["delay_ms"] = 1.0
        (text,) = self._texts(doc, "latency")
        assert text.endswith("by 112 samples (2.33333 ms): add delay_ms 2.33333 to woofer "
                             "(making it 3.33333)")

    def test_compensating_delay_clears_the_warning(self):
        doc = _mixed()
        doc["bands"][0]["delay_ms"] = 160 * 1000 / FS
        r = engine.analyse(project.from_dict(doc))
        assert not [w for w in r.warnings if w.code == "latency"] and r.latencies_agree

    def test_iir_only_delays_are_not_flagged(self):
        doc = project.to_dict(project.load_preset("two-way"))
        doc["bands"][1]["delay_ms"] = 0.3     # driver alignment, a choice
        assert self._texts(doc, "latency") == []

    def test_muted_band_is_left_out(self):
        doc = _mixed()
        doc["bands"][0]["mute"] = True
        assert self._texts(doc, "latency") == []

    def test_split_mismatch_is_named(self):
        doc = _split_doc()
        doc["bands"][2]["filters"][0]["taps"] = 1025
        (text,) = self._texts(doc, "split-mismatch")
        assert text == ("band tweeter, filter 1: its FIR split (crossovers 300 Hz, 2.8 kHz, 1025 "
                        "taps, hann window) differs from that of band woofer, filter 1 "
                        "(crossovers 300 Hz, 2.8 kHz, 1023 taps, hann window): the bands no "
                        "longer sum to a pure delay; give every split filter the same "
                        "crossovers, taps and method")

    def test_split_mismatch_of_crossovers(self):
        doc = _split_doc()
        doc["bands"][1]["filters"][0]["crossovers"] = [300, 3000]
        (w,) = [w for w in engine.analyse(project.from_dict(doc)).warnings
                if w.code == "split-mismatch"]
        assert (w.band, w.filter) == (1, 0)

    def test_missing_split_band(self):
        doc = _split_doc()
        doc["bands"][1]["mute"] = True
        assert self._texts(doc, "split-missing") == [
            "split band 1 (of 0-2) is in no active band: the sum lacks it and is not a pure "
            "delay"]

    def test_doubled_split_band(self):
        doc = _split_doc()
        doc["bands"][2]["filters"][0]["band"] = 1
        texts = self._texts(doc, "split-doubled")
        assert texts == ["split band 1 is in 2 active bands (mid, tweeter): it is summed twice "
                         "and the sum is not a pure delay"]
        assert self._texts(doc, "split-missing")[0].startswith("split band 2 (of 0-2)")

    def test_consistent_split_has_no_split_warning(self):
        r = engine.analyse(project.from_dict(_split_doc()))
        assert not [w for w in r.warnings if w.code.startswith("split")]


def test_preset_fir_three_way_passes():
    r = engine.analyse(project.load_preset("fir-three-way"))
    assert r.ok and not r.warnings
    assert r.latency_samples == 511.0 and r.latencies_agree


def test_fir_design_cached_by_filter_key():
    p = project.from_dict(_split_doc())
    again = project.from_dict(copy.deepcopy(_split_doc()))
    a = engine.design_filter(p.bands[0].filters[0], FS)
    b = engine.design_filter(again.bands[0].filters[0], FS)
    assert a is b and not a.fir.flags.writeable


def test_a_design_error_in_the_analysis_names_band_and_filter():
    # A project checked without designing (as the editor loads it) fails in the analysis;
    # the error still carries the whole field path.
    import json

    from planner import engine, project
    from planner.errors import SpecNotMetError

    d = project.to_dict(project.load_preset("two-way"))
    d["bands"][0]["filters"][1] = {"type": "lowpass", "family": "fir", "method": "remez",
                                   "freq": 2400, "transition_hz": 100, "atten_db": 80,
                                   "max_taps": 101}
    p = project.from_dict(json.loads(json.dumps(d)))
    with pytest.raises(SpecNotMetError, match=r"^bands\[0\]\.filters\[1\]\.taps: lowpass spec"):
        engine.analyse(p)
