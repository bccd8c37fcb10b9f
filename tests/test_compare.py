"""IIR versus FIR comparison: specs read from a chain, equivalents, figures, builds."""

import math
import re

import numpy as np
import pytest
from scipy import signal

from planner import compare, engine, project, timeresp
from planner.dsp import fir as dfir
from planner.dsp import iir
from planner.errors import DesignError, SpecNotMetError

from tests.conftest import two_way

FS = 48000.0


def _lr12_lowpass(fc=100.0):
    # Two Butterworth 6 in cascade: a 12th-order (72 dB/octave) Linkwitz-Riley lowpass.
    return np.vstack([iir.butterworth_sos("lowpass", 6, fc, FS)] * 2)


@pytest.fixture(scope="module")
def steep_iir():
    """A steep IIR crossover (LR12 lowpass at 100 Hz) against its FIR equivalent."""
    return compare.compare_chain(_lr12_lowpass(), None, FS, "LR12 lowpass 100 Hz")


@pytest.fixture(scope="module")
def steep_fir():
    """A steep FIR lowpass (80 dB, 100 Hz transition at 48 kHz) against its IIR equivalent."""
    spec = dfir.FirSpec("lowpass", 1950.0, 2050.0, 1.0, 80.0)
    taps = dfir.min_taps_equiripple(spec, FS).taps
    return compare.compare_chain(np.zeros((0, 6)), taps, FS, "steep FIR", 1.0, 80.0), taps


class TestDeriveSpec:
    def test_lr4_lowpass_edges_match_the_closed_form(self):
        # LR4 = Butterworth 2 squared: |H|^2 = 1 / (1 + x^4)^2 on the prewarped axis
        # x = tan(pi f/fs) / tan(pi fc/fs) (Linkwitz and Riley 1976; Oppenheim and
        # Schafer sec. 7.2 for prewarping). 1 dB down at 1 + x^4 = 10^(1/20), 60 dB at
        # 1 + x^4 = 10^3 (the peak is 0 dB at DC; the stop level is taken from the
        # nominal gain, see the next test).
        sos = iir.linkwitz_riley_sos("lowpass", 4, 2000.0, FS)
        s = compare.derive_spec(sos, None, FS, 1.0, 60.0)
        t = np.tan(np.pi * 2000.0 / FS)
        fp = FS / np.pi * np.arctan(t * (10 ** (1 / 20) - 1) ** 0.25)
        assert s.kind == "lowpass"
        assert s.pass_hz == pytest.approx(fp, rel=1e-7)   # root finding to 1e-9

    def test_stop_edge_is_atten_below_the_nominal_gain(self):
        # Nominal gain = middle of the pass band's linear range [10^(-1/20), 1]
        # (the FirSpec convention, Parks and McClellan 1972 deviations).
        sos = iir.linkwitz_riley_sos("lowpass", 4, 2000.0, FS)
        s = compare.derive_spec(sos, None, FS, 1.0, 60.0)
        g = (1 + 10 ** (-1 / 20)) / 2
        assert s.pass_gain_db == pytest.approx(20 * np.log10(g), abs=1e-9)
        _, h = signal.sosfreqz(sos, worN=[s.stop_hz], fs=FS)   # scipy as reference
        assert 20 * np.log10(abs(h[0])) == pytest.approx(20 * np.log10(g) - 60.0, abs=1e-6)

    def test_highpass_and_bandpass_kinds(self):
        hp = iir.butterworth_sos("highpass", 4, 500.0, FS)
        lp = iir.butterworth_sos("lowpass", 4, 5000.0, FS)
        assert compare.derive_spec(hp, None, FS).kind == "highpass"
        s = compare.derive_spec(np.vstack([hp, lp]), None, FS)
        assert s.kind == "bandpass"
        assert s.stop_hz[0] < s.pass_hz[0] < s.pass_hz[1] < s.stop_hz[1]

    def test_a_filter_that_never_gets_down_far_enough_is_refused(self):
        # A 31-tap rectangular-window lowpass: side lobes near -21 dB at first,
        # decaying only 6 dB/octave (Harris 1978), never 90 dB down before Nyquist.
        h = dfir.window_fir("lowpass", 2000.0, FS, 31, "boxcar")
        with pytest.raises(SpecNotMetError, match="atten_db: the crossover never falls 90 dB "
                                                  "below its peak at either end"):
            compare.derive_spec(np.zeros((0, 6)), h, FS, 1.0, 90.0)

    def test_bad_numbers_are_refused(self):
        sos = iir.butterworth_sos("lowpass", 2, 1000.0, FS)
        with pytest.raises(DesignError, match="ripple_db: must be a positive number of dB"):
            compare.derive_spec(sos, None, FS, -1.0, 60.0)
        with pytest.raises(DesignError, match="atten_db: must be a number of dB above"):
            compare.derive_spec(sos, None, FS, 3.0, 2.0)


class TestIirEquivalent:
    def _spec(self, kind="lowpass", fp=1000.0, fst=1500.0, r=1.0, a=60.0):
        return compare.DerivedSpec(kind, fp, fst, r, a, 0.0)

    def _scipy_gstop(self, r, a):
        # The spec counts attenuation below the nominal (mid-ripple) gain, scipy below
        # the pass-band maximum: gstop = A + 20 log10(1 + delta_p), plus the
        # designs' 1e-3 dB margin.
        dp = (10 ** (r / 20) - 1) / (10 ** (r / 20) + 1)
        return a + 20 * np.log10(1 + dp) + 1e-3

    @pytest.mark.parametrize("fp, fst", [(1000.0, 1500.0), (1000.0, 3000.0), (200.0, 260.0)])
    def test_butterworth_order_agrees_with_scipy_buttord(self, fp, fst):
        n = compare.butterworth_order("lowpass", fp, fst, 1.0, self._scipy_gstop(1.0, 60.0), FS)
        ref, _ = signal.buttord(fp, fst, 1.0, self._scipy_gstop(1.0, 60.0), fs=FS)
        assert n == ref

    @pytest.mark.parametrize("kind, fp, fst", [("lowpass", 1950.0, 2050.0),
                                                ("highpass", 2853.7, 2682.2),
                                                ("lowpass", 246.3, 417.7)])
    def test_elliptic_order_agrees_with_scipy_ellipord(self, kind, fp, fst):
        g = self._scipy_gstop(1.0, 80.0)
        n = compare.elliptic_order(kind, fp, fst, 1.0, g, FS)
        ref, _ = signal.ellipord(fp, fst, 1.0, g, fs=FS)
        assert n == ref

    def test_auto_picks_butterworth_while_order_8_suffices(self):
        sos, label = compare.iir_equivalent(self._spec(fst=3000.0), FS)
        ref, _ = signal.buttord(1000.0, 3000.0, 1.0, self._scipy_gstop(1.0, 60.0), fs=FS)
        assert label == f"butterworth order {ref}"

    def test_the_equivalent_meets_the_spec(self):
        spec = self._spec()
        sos, _ = compare.iir_equivalent(spec, FS)
        h = timeresp.chain_impulse(sos, None, 1.0, 0.0, FS)[0]
        r, a = dfir.measure_spec(h, spec.fir_spec(), FS)   # dense-grid measure
        assert r <= 1.0 and a >= 60.0

    def test_butterworth_beyond_order_8_is_refused_with_the_order(self):
        with pytest.raises(SpecNotMetError, match="order: .* needs a butterworth order of "
                                                  r"\d+ per filter, above the largest 8"):
            compare.iir_equivalent(self._spec(fst=1100.0), FS, "butterworth")

    def test_unknown_family_is_refused(self):
        with pytest.raises(DesignError, match="iir_family: must be one of auto, butterworth"):
            compare.iir_equivalent(self._spec(), FS, "chebyshev")


class TestRuleOfThumb:
    # Common practice, no published source: "an IIR of about 12th order can stand in
    # for an FIR of around a thousand taps for a steep crossover, some 100x fewer
    # multiplies per sample". The 100x compares taps with IIR order. In multiplies
    # per sample a biquad costs 5 multiplies per 2 orders, and a linear-phase FIR
    # folded needs ceil(N/2), so the honest ratio is about 100 / 2.5 = 40x with the
    # FIR in direct form and 20x folded. The bands asserted are broad (a factor of 2
    # below, about 10 above) around those.

    def test_steep_iir_order_is_12(self, steep_iir):
        assert steep_iir.iir.order == 12

    def test_steep_iir_needs_about_a_thousand_fir_taps(self, steep_iir):
        assert 500 <= steep_iir.fir.taps <= 2000

    def test_taps_per_order_is_about_100(self, steep_iir):
        assert 50 <= steep_iir.fir.taps / steep_iir.iir.order <= 200

    def test_direct_form_multiplies_ratio_is_in_the_band(self, steep_iir):
        ratio = steep_iir.fir.multiplies_per_sample_direct / steep_iir.iir.multiplies_per_sample
        assert 20 <= ratio <= 500

    def test_folded_multiplies_ratio_is_in_the_band(self, steep_iir):
        ratio = steep_iir.fir.multiplies_per_sample / steep_iir.iir.multiplies_per_sample
        assert 10 <= ratio <= 250

    def test_steep_fir_gets_an_iir_of_about_12th_order(self, steep_fir):
        # The same rule from the other side: ~1200 taps, an elliptic of order ~12.
        c, taps = steep_fir
        assert 8 <= c.iir.order <= 16
        assert c.fir.taps == len(taps)


class TestSides:
    def test_fir_latency_is_exactly_half_its_length(self, steep_iir):
        # Type I linear phase: delay (N-1)/2 samples (Oppenheim and Schafer sec. 5.7).
        n = steep_iir.fir.taps
        assert steep_iir.fir.latency_samples == (n - 1) / 2
        assert steep_iir.fir.latency_ms == pytest.approx((n - 1) / 2 / FS * 1000, rel=1e-12)

    def test_iir_latency_is_zero(self, steep_iir):
        assert steep_iir.iir.latency_samples == 0.0

    def test_fir_group_delay_is_constant(self, steep_iir):
        # Linear phase: constant group delay where H != 0; 1e-9 ms allows rounding.
        assert steep_iir.fir.group_delay_variation_ms < 1e-9

    def test_iir_group_delay_varies(self, steep_iir):
        assert steep_iir.iir.group_delay_variation_ms > 1.0

    def test_fir_pre_ringing_is_half_the_energy_off_the_peak(self, steep_iir):
        # Symmetric taps: the energy before the centre tap equals the energy after it,
        # so pre = (1 - h_c^2 / sum h^2) / 2 (checked with numpy on the taps).
        h = steep_iir.fir.fir
        e = h * h
        expected = (1 - e[len(h) // 2] / e.sum()) / 2
        assert steep_iir.fir.pre_ringing == pytest.approx(expected, rel=1e-9)
        assert steep_iir.fir.pre_ringing_db == pytest.approx(10 * np.log10(expected), rel=1e-9)

    def test_highpass_iir_has_no_pre_ringing(self):
        # A causal highpass's largest sample is its first one (b0 > 0): nothing before it.
        c = compare.compare_chain(iir.linkwitz_riley_sos("highpass", 4, 2000.0, FS), None, FS)
        assert c.iir.pre_ringing == 0.0
        assert c.iir.pre_ringing_db == -math.inf

    def test_multiplies_count_5_per_section_and_folded_taps(self, steep_iir):
        # Oppenheim and Schafer sec. 6.3 (5 per biquad), 6.5.3 (folded linear phase).
        assert steep_iir.iir.multiplies_per_sample == 5 * steep_iir.iir.sections
        assert steep_iir.fir.multiplies_per_sample == (steep_iir.fir.taps + 1) // 2
        assert steep_iir.fir.multiplies_per_sample_direct == steep_iir.fir.taps

    def test_fir_equivalent_meets_the_spec(self, steep_iir):
        assert steep_iir.fir.ripple_db <= 1.0
        assert steep_iir.fir.atten_db >= 60.0

    def test_fir_equivalent_is_the_shortest(self, steep_iir):
        # Two taps fewer (odd lengths) misses the spec: the search's minimality,
        # checked with scipy.signal.remez directly.
        s = steep_iir.spec
        n = steep_iir.fir.taps - 2
        h = dfir.equiripple_fir(s.fir_spec(), FS, n)
        r, a = dfir.measure_spec(h, s.fir_spec(), FS)
        assert r > 1.0 or a < 60.0


@pytest.fixture(scope="module")
def lr4():
    """An LR4 2-way at 2 kHz."""
    return project.from_dict(two_way(order=4, fc=2000.0))


class TestProject:
    def test_iir_build_of_an_iir_project_is_the_project(self, lr4):
        # Every band keeps its own design: the sum's flatness is that of `check`.
        c = compare.compare_project(lr4)
        r = engine.analyse(lr4)
        assert c.iir_sum.max_dev_db == pytest.approx(r.max_dev_db, abs=1e-12)

    def test_fir_build_aligns_the_bands(self, lr4):
        c = compare.compare_project(lr4)
        lat = [b.fir.latency_samples for b in c.bands]
        assert [max(lat) - x for x in lat] == c.fir_sum.align_samples
        assert c.fir_sum.latency_samples == max(lat)

    def test_band_without_crossover_is_listed_not_compared(self):
        d = two_way()
        d["bands"].append({"name": "fill", "filters": [
            {"type": "peaking", "freq": 1000, "gain_db": -3, "q": 2}]})
        c = compare.compare_project(project.from_dict(d))
        assert c.bands[2].status == compare.NO_CROSSOVER
        assert c.ok and c.fir_sum.complete

    def test_unmet_band_makes_the_comparison_fail_and_names_it(self):
        d = two_way(order=4, fc=2000.0)
        c = compare.compare_project(project.from_dict(d), 1.0, 60.0, max_taps=9)
        assert not c.ok
        assert c.bands[0].status == compare.NOT_MET
        assert "band low: max_taps: an equiripple FIR meeting" in c.bands[0].message
        assert not c.fir_sum.complete and c.fir_sum.missing

    def test_to_dict_keys(self, lr4):
        d = compare.compare_project(lr4).to_dict()
        assert set(d) == {"ok", "name", "sample_rate", "ripple_db", "atten_db", "iir_family",
                          "bands", "sum"}
        assert set(d["sum"]) == {"iir", "fir"}
        assert set(d["bands"][0]["fir"]) == {
            "source", "design", "order", "taps", "sections", "multiplies_per_sample",
            "multiplies_per_sample_direct", "latency_samples", "latency_ms",
            "group_delay_variation_ms", "pre_ringing", "pre_ringing_db", "ripple_db",
            "atten_db"}

    def test_progress_ends_at_one_and_cancel_stops(self, lr4):
        seen = []
        compare.compare_project(lr4, progress=seen.append)
        assert seen[-1] == 1.0 and all(b >= a for a, b in zip(seen, seen[1:]))
        with pytest.raises(dfir.DesignCancelled, match="taps: the design was cancelled"):
            compare.compare_project(lr4, cancel=lambda: True)

    def test_fir_split_project_gets_iir_equivalents(self):
        # The shipped complementary split: FIR bands, elliptic equivalents; the FIR
        # build (the project) sums flat to rounding (Oppenheim and Schafer ch. 7).

        p = project.load_preset("fir-three-way")
        c = compare.compare_project(p)
        assert [b.own for b in c.bands] == ["fir", "fir", "fir"]
        assert all(b.iir.design.startswith("elliptic") for b in c.bands)
        assert abs(c.fir_sum.max_dev_db) < 1e-9


@pytest.fixture(scope="module")
def two_way_preset():

    return project.load_preset("two-way")   # woofer: BW2 highpass 25 Hz + LR4 lowpass 2.4 kHz


class TestEndOfRange:
    """Subsonic and ultrasonic filters: no other band passes beyond them."""

    def test_the_subsonic_highpass_is_the_end_of_range(self, two_way_preset):
        assert compare.end_of_range(two_way_preset) == [{0}, set()]

    def test_the_woofer_is_compared_on_its_crossover(self, two_way_preset, monkeypatch):
        # Without the subsonic filter the woofer's spec is its LR4 lowpass's: the
        # 1 dB and 60 dB points of |H| = 1 / (1 + x^4) on the prewarped axis,
        # x^4 = 10^(1/20) - 1 and 1 + x^4 = 10^3 / g with g the nominal gain
        # (Linkwitz and Riley 1976; Oppenheim and Schafer sec. 7.2), not a stop
        # band below 1 Hz. Every remez call stays short (counted on
        # scipy.signal.remez itself).
        calls = []
        real = signal.remez

        def counting(numtaps, *a, **k):
            calls.append(numtaps)
            return real(numtaps, *a, **k)

        monkeypatch.setattr(signal, "remez", counting)
        dfir.clear_design_cache()
        c = compare.compare_project(two_way_preset)
        w = c.bands[0]
        assert w.status == compare.OK and w.end_of_range == ("BW2 highpass 25 Hz",)
        assert w.spec.kind == "lowpass"
        t = np.tan(np.pi * 2400.0 / FS)
        fp = FS / np.pi * np.arctan(t * (10 ** (1 / 20) - 1) ** 0.25)
        assert w.spec.pass_hz == pytest.approx(fp, rel=1e-7)       # root finding to 1e-9
        g = (1 + 10 ** (-1 / 20)) / 2
        x4 = 1e3 / g - 1
        fs_ = FS / np.pi * np.arctan(t * x4 ** 0.25)
        assert w.spec.stop_hz == pytest.approx(fs_, rel=1e-6)
        assert "kept on both sides (end of range)" in w.iir.design
        assert calls and max(calls) < 100

    def test_the_subsonic_filter_stays_in_both_builds(self, two_way_preset):
        # The IIR build is the project itself: its sum is judged as the check judges the
        # project's (voicing set aside), so the flatness is the check's; and the FIR build
        # still holds the BW2 highpass's sections.
        c = compare.compare_project(two_way_preset)
        r = engine.analyse(two_way_preset)
        assert c.iir_sum.voicing_set_aside and c.fir_sum.voicing_set_aside
        assert c.iir_sum.max_dev_db == pytest.approx(r.max_dev_db, abs=1e-12)
        assert r.voiced["max_dev_db"] != pytest.approx(r.max_dev_db, abs=0.1)  # it matters
        bw2 = iir.butterworth_sos("highpass", 2, 25.0, FS)
        woofer = c.fir_sum.designs[0]
        assert any(np.allclose(row, bw2[0]) for row in woofer.sos)

    def test_a_lowpass_above_every_other_band_is_the_end_of_range(self):
        d = two_way(order=4, fc=2000.0)
        d["bands"][1]["filters"].append({"type": "lowpass", "family": "butterworth",
                                         "order": 2, "freq": 20000})
        p = project.from_dict(d)
        assert compare.end_of_range(p) == [set(), {1}]
        assert compare.compare_project(p).bands[1].end_of_range == ("BW2 lowpass 20 kHz",)

    def test_a_highpass_with_a_band_below_it_is_a_crossover(self):
        # The satellites' LR2 highpass at 90 Hz hands the bass to the sub: compared.

        assert compare.end_of_range(project.load_preset("sub-sat")) == [set(), set()]

    def test_a_band_of_end_of_range_filters_only_says_so(self):
        d = two_way(order=4, fc=2000.0)
        d["bands"].insert(0, {"name": "sub", "filters": [
            {"type": "highpass", "family": "butterworth", "order": 2, "freq": 20}]})
        d["bands"][1]["filters"].insert(0, {"type": "highpass", "family": "butterworth",
                                            "order": 2, "freq": 20})
        c = compare.compare_project(project.from_dict(d))
        assert c.bands[0].status == compare.NO_CROSSOVER
        assert c.bands[0].message == ("only end-of-range filters (BW2 highpass 20 Hz), kept as "
                                      "they are in both builds")
        assert c.bands[1].end_of_range == ("BW2 highpass 20 Hz",)
        assert c.to_dict()["bands"][1]["end_of_range"] == ["BW2 highpass 20 Hz"]

    def test_a_project_of_one_band_has_none(self):
        d = two_way(order=4, fc=2000.0)
        d["bands"] = d["bands"][:1]
        assert compare.end_of_range(project.from_dict(d)) == [set()]

    def test_bypassed_filters_count_for_nothing(self, two_way_preset):
        d = project.to_dict(two_way_preset)
        d["bands"][0]["filters"][0]["bypass"] = True
        assert compare.end_of_range(project.from_dict(d)) == [set(), set()]


def test_builds_sum_acoustically_when_bands_have_drivers():
    # The all-IIR build of a project that is already IIR is the project itself: its sum's
    # deviation equals the check's, which is acoustic (a closed box woofer rolls it off).
    d = two_way(4, fc=2000.0)
    d["analysis"]["f_min"] = 20
    d["bands"][0]["driver"] = {"model": "closed-box", "fc": 80, "qtc": 0.7}
    p = project.from_dict(d)
    r = engine.analyse(p)
    c = compare.compare_project(p)
    assert c.iir_sum.max_dev_db == pytest.approx(r.max_dev_db, abs=1e-9)
    assert r.max_dev_db < -10        # 20 Hz, two octaves under an 80 Hz closed box


def _subsonic_only():
    # One band with only a 25 Hz second-order Butterworth highpass: nothing to tell it from
    # a crossover, so its slow skirt (60 dB down only at 0.77 Hz) sets the spec.
    return project.from_dict({
        "format": "crossplan-project", "version": 1, "name": "sub", "sample_rate": FS,
        "bands": [{"name": "w", "filters": [{"type": "highpass", "family": "butterworth",
                                             "order": 2, "freq": 25}]}]})


def test_an_equivalent_beyond_the_cap_is_reported_at_once_with_kaisers_estimate(monkeypatch):
    calls = []
    real = signal.remez
    monkeypatch.setattr(signal, "remez", lambda *a, **k: calls.append(a[0]) or real(*a, **k))
    c = compare.compare_project(_subsonic_only(), max_taps=compare_max_taps())
    b = c.bands[0]
    assert b.status == compare.NOT_MET and calls == []   # no trial design at all
    # Kaiser 1974 (Oppenheim and Schafer 3rd ed. sec. 7.7), computed here from the spec the
    # message states: N = (-20 log10 sqrt(dp ds) - 13) / (14.6 df) + 1, rounded up to odd.
    fp, fst = (float(x) for x in re.search(r"pass edge ([\d.]+) Hz, stop edge ([\d.]+) Hz",
                                           b.message).groups())
    r = 10 ** (1.0 / 20)
    dp, ds = (r - 1) / (r + 1), 10 ** (-60.0 / 20)
    n = math.ceil((-20 * math.log10(math.sqrt(dp * ds)) - 13) / (14.6 * (fp - fst) / FS) + 1)
    n |= 1
    assert f"needs about {n} taps by Kaiser's 1974 estimate" in b.message
    assert n > compare_max_taps() and f"more than the {compare_max_taps()} taps" in b.message
    assert fst == pytest.approx(0.7688, abs=1e-3)   # 25 / sqrt(10^6 - 1)^(1/2): BW2 at -60 dB


def compare_max_taps():
    from planner.defaults import COMPARE_MAX_TAPS
    return COMPARE_MAX_TAPS


def test_the_builds_are_judged_from_the_projects_target_as_the_check():
    # An all-IIR project's IIR build is the project: with a tilt target its flatness is
    # the check's deviation from the tilt, not from 0 dB, and the text says so.
    from planner.present.text import compare_text
    from tests.conftest import two_way

    d = two_way(4, fc=2000.0)
    d["analysis"]["target"] = "tilt:-1"
    p = project.from_dict(d)
    c = compare.compare_project(p)
    r = engine.analyse(p)
    assert c.iir_sum.target == "tilt:-1" and not c.iir_sum.voicing_set_aside
    assert c.iir_sum.max_dev_db == pytest.approx(r.max_dev_db, abs=1e-12)
    # the LR4 sum is flat, so from a -1 dB/octave tilt it is off by about 10 dB at 20 Hz
    assert abs(c.iir_sum.max_dev_db) > 5.0
    assert "from the target tilt:-1" in compare_text(c)
