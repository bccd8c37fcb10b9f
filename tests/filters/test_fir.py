"""FIR filter types of a project (planner.filters.fir) and the progress scope (planner.progress).

Sources: scipy.signal firwin, kaiserord, remez, firls and freqz as reference
library; J. F. Kaiser, "Nonrecursive digital filter design using the I0-sinh
window function", Proc. IEEE ISCAS 1974 (beta and length formulas, as given in
Oppenheim and Schafer, "Discrete-Time Signal Processing", 3rd ed., eqs. 7.62
and 7.63); Oppenheim and Schafer sec. 5.7.3 (type I linear phase needs an odd
length for a highpass: a type II filter has a zero at Nyquist); Kaiser 1974
also for the equiripple length estimate quoted in refusals.
"""

import copy
import math
import threading

import numpy as np
import pytest
from scipy import signal

from planner import engine, filters, progress, project
from planner.dsp import fir
from planner.errors import ProjectError, SpecNotMetError
from planner.filters.fir import FirDesignCancelled, FirSpecNotMetError

FS = 48000


def _designed(doc):
    """A project loaded and designed, as every command does (designs refuse unmet specs)."""
    p = project.from_dict(doc)
    engine.design_project(p)
    return p


def _doc(*filters, fs=FS):
    return {"format": "crossplan-project", "version": 1, "name": "fir", "sample_rate": fs,
            "bands": [{"name": f"b{i}", "filters": [f]} for i, f in enumerate(filters)]}


def _taps(flt, fs=FS):
    """Load one filter through the project path and return its designed taps."""
    p = _designed(_doc(flt, fs=fs))
    return np.asarray(engine.design_filter(p.bands[0].filters[0], fs).fir)


def _lp(**kw):
    return {"type": "lowpass", "family": "fir", **kw}


def _hp(**kw):
    return {"type": "highpass", "family": "fir", **kw}


def _freqz_db(h, f):
    return 20 * np.log10(np.abs(signal.freqz(h, worN=f, fs=FS)[1]))


def _deviations(ripple_db, atten_db):
    r = 10 ** (ripple_db / 20)
    return (r - 1) / (r + 1), 10 ** (-atten_db / 20)


# -- window method -----------------------------------------------------------------------


class TestWindow:
    @pytest.mark.parametrize("name,scipy_window", [
        ("rectangular", "boxcar"), ("triangular", "triang"), ("hann", "hann"),
        ("hamming", "hamming"), ("blackman", "blackman"), ("kaiser", ("kaiser", 6.0))])
    def test_lowpass_matches_firwin(self, name, scipy_window):
        extra = {"beta": 6.0} if name == "kaiser" else {}
        h = _taps(_lp(method="window", freq=2200, taps=255, window=name, **extra))
        ref = signal.firwin(255, 2200, window=scipy_window, fs=FS)
        # Same windowed sinc, both scaled to unit DC gain: rounding only.
        np.testing.assert_allclose(h, ref, rtol=0, atol=1e-13)

    def test_default_window_is_hann(self):
        h = _taps(_lp(method="window", freq=2200, taps=101))
        np.testing.assert_allclose(h, signal.firwin(101, 2200, window="hann", fs=FS), atol=1e-13)

    def test_method_defaults_to_window(self):
        h = _taps(_lp(freq=2200, taps=101))
        np.testing.assert_allclose(h, signal.firwin(101, 2200, window="hann", fs=FS), atol=1e-13)

    def test_highpass_matches_firwin(self):
        h = _taps(_hp(method="window", freq=2200, taps=255, window="hamming"))
        ref = signal.firwin(255, 2200, window="hamming", pass_zero=False, fs=FS)
        np.testing.assert_allclose(h, ref, rtol=0, atol=1e-13)

    def test_bandpass_matches_firwin(self):
        h = _taps({"type": "bandpass", "family": "fir", "method": "window", "freq": 300,
                   "freq2": 2800, "taps": 511, "window": "blackman"})
        ref = signal.firwin(511, [300, 2800], window="blackman", pass_zero=False, fs=FS)
        # firwin scales to unit gain at the centre of the pass band, as the design does.
        np.testing.assert_allclose(h, ref, rtol=0, atol=1e-13)

    def test_kaiser_beta_from_atten_db(self):
        # Kaiser 1974: beta = 0.1102 (A - 8.7) for A > 50 dB.
        h = _taps(_lp(method="window", freq=2200, taps=301, window="kaiser", atten_db=70))
        ref = signal.firwin(301, 2200, window=("kaiser", 0.1102 * (70 - 8.7)), fs=FS)
        np.testing.assert_allclose(h, ref, rtol=0, atol=1e-13)

    def test_even_taps_lowpass_is_type_two(self):
        # Oppenheim and Schafer 5.7.3: an even-length symmetric filter is type II,
        # allowed for a lowpass (its forced zero is at Nyquist).
        h = _taps(_lp(method="window", freq=2200, taps=100))
        np.testing.assert_allclose(h, signal.firwin(100, 2200, window="hann", fs=FS), atol=1e-13)
        assert engine.design_filter(
            _designed(_doc(_lp(freq=2200, taps=100))).bands[0].filters[0], FS).fir.size == 100


class TestKaiserSized:
    def test_length_and_beta_are_kaisers_when_they_meet(self):
        # Kaiser 1974 via scipy.signal.kaiserord (width normalised to Nyquist):
        # for 60 dB over 400 Hz the formula's length (odd) already meets the spec.
        n_ref, beta_ref = signal.kaiserord(60, 400 / (FS / 2))
        n_ref |= 1
        h = _taps(_hp(method="window", freq=2200, transition_hz=400, atten_db=60))
        assert len(h) == n_ref == 437
        np.testing.assert_allclose(h, signal.firwin(n_ref, 2200, window=("kaiser", beta_ref),
                                                    pass_zero=False, fs=FS), atol=1e-13)

    def test_beta_formula_kaiser_1974(self):
        # 0.5842 (A - 21)^0.4 + 0.07886 (A - 21) for 21 <= A <= 50 dB (Kaiser 1974).
        h = _taps(_hp(method="window", freq=2200, transition_hz=500, atten_db=40))
        beta = 0.5842 * 19 ** 0.4 + 0.07886 * 19
        np.testing.assert_allclose(
            h, signal.firwin(len(h), 2200, window=("kaiser", beta), pass_zero=False, fs=FS),
            atol=1e-13)

    def test_lengthened_when_the_formula_falls_short(self):
        # For a 70 dB lowpass over 400 Hz Kaiser's estimate (520 -> 521 taps)
        # misses 70 dB at the stop edge (measured with scipy.signal.freqz); the
        # design is lengthened by 2 taps at a time until it meets it.
        n_formula = signal.kaiserord(70, 400 / (FS / 2))[0] | 1
        h = _taps(_lp(method="window", freq=2200, transition_hz=400, atten_db=70))
        stop = np.linspace(2400, FS / 2, 40001)
        assert -_freqz_db(h, stop).max() >= 70 - 1e-6   # dense-grid resolution
        assert len(h) > n_formula
        beta = signal.kaiserord(70, 400 / (FS / 2))[1]
        shorter = signal.firwin(len(h) - 2, 2200, window=("kaiser", beta), fs=FS)
        assert -_freqz_db(shorter, stop).max() < 70

    def test_refused_beyond_max_taps(self):
        with pytest.raises(FirSpecNotMetError,
                           match=r"^bands\[0\]\.filters\[0\]\.taps: lowpass Kaiser window for "
                                 r"90 dB over 50 Hz at 48000 Hz needs more than max_taps 301: "
                                 r".*about \d+ taps would be needed \(Kaiser 1974\)"):
            _designed(_doc(_lp(method="window", freq=2200, transition_hz=50,
                                       atten_db=90, max_taps=301)))


# -- remez and least squares ----------------------------------------------------------------


class TestFixedLength:
    def test_remez_matches_scipy(self):
        h = _taps(_lp(method="remez", freq=2200, transition_hz=800, ripple_db=0.5,
                      atten_db=50, taps=201))
        dp, ds = _deviations(0.5, 50)
        ref = signal.remez(201, [0, 1800, 2600, FS / 2], [1, 0], weight=[1, dp / ds], fs=FS)
        np.testing.assert_allclose(h, ref, rtol=0, atol=1e-15)

    def test_remez_explicit_edges_match_scipy(self):
        h = _taps(_hp(method="remez", freq=2200, pass_hz=2600, stop_hz=1900, ripple_db=0.5,
                      atten_db=50, taps=201))
        dp, ds = _deviations(0.5, 50)
        ref = signal.remez(201, [0, 1900, 2600, FS / 2], [0, 1], weight=[dp / ds, 1], fs=FS)
        np.testing.assert_allclose(h, ref, rtol=0, atol=1e-15)

    def test_lsq_matches_firls(self):
        h = _taps(_lp(method="lsq", freq=2200, transition_hz=800, ripple_db=0.5, atten_db=50,
                      taps=301))
        dp, ds = _deviations(0.5, 50)
        ref = signal.firls(301, [0, 1800, 2600, FS / 2], [1, 1, 0, 0], weight=[1, dp / ds],
                           fs=FS)
        np.testing.assert_allclose(h, ref, rtol=0, atol=1e-12)

    def test_lsq_bandpass_matches_firls(self):
        h = _taps({"type": "bandpass", "family": "fir", "method": "lsq", "freq": 300,
                   "freq2": 2800, "transition_hz": 200, "atten_db": 40, "ripple_db": 1,
                   "taps": 1023})
        dp, ds = _deviations(1, 40)
        ref = signal.firls(1023, [0, 200, 400, 2700, 2900, FS / 2], [0, 0, 1, 1, 0, 0],
                           weight=[dp / ds, 1, dp / ds], fs=FS)
        np.testing.assert_allclose(h, ref, rtol=0, atol=1e-10)

    def test_missed_spec_is_refused_with_reached_and_needed(self):
        spec = fir.FirSpec("lowpass", 2150.0, 2250.0, 0.1, 80.0)
        need = fir.estimate_taps(spec, FS)     # Kaiser 1974
        with pytest.raises(FirSpecNotMetError,
                           match=r"^bands\[0\]\.filters\[0\]\.taps: lowpass spec \(pass edge "
                                 r"2150 Hz, stop edge 2250 Hz, ripple 0\.1 dB, attenuation 80 dB\)"
                                 r" not met by equiripple \(remez\) at 255 taps, 48000 Hz: "
                                 r"reached ripple .* dB and attenuation .* dB; about "
                                 + str(need) + r" taps would be needed"):
            _designed(_doc(_lp(method="remez", freq=2200, transition_hz=100,
                                       atten_db=80, taps=255)))

    def test_refusal_is_both_spec_error_and_project_error(self):
        with pytest.raises(SpecNotMetError) as ei:
            _designed(_doc(_lp(method="lsq", freq=2200, transition_hz=100,
                                       atten_db=80, taps=255)))
        assert isinstance(ei.value, ProjectError)


class TestSearch:
    def test_remez_search_meets_spec_and_two_fewer_does_not(self):
        h = _taps(_hp(method="remez", freq=3300, transition_hz=600, ripple_db=0.5,
                      atten_db=70))
        dp, ds = _deviations(0.5, 70)
        pas, stop = np.linspace(3600, FS / 2, 20001), np.linspace(0, 3000, 20001)
        # Reference measurement with scipy.signal.freqz on dense grids
        # (0.01 dB allows for the grid between the dense points).
        gp = _freqz_db(h, pas)
        assert gp.max() - gp.min() <= 0.5 + 0.01 and -_freqz_db(h, stop).max() >= 70 - 0.01
        shorter = signal.remez(len(h) - 2, [0, 3000, 3600, FS / 2], [0, 1],
                               weight=[dp / ds, 1], fs=FS)
        g2 = _freqz_db(shorter, pas)
        assert g2.max() - g2.min() > 0.5 or -_freqz_db(shorter, stop).max() < 70

    def test_lsq_search_meets_default_spec(self):
        # Defaults: ripple 0.1 dB, attenuation 60 dB.
        h = _taps(_lp(method="lsq", freq=2200, transition_hz=600))
        gp = _freqz_db(h, np.linspace(0, 1900, 20001))
        assert gp.max() - gp.min() <= 0.1 + 0.01
        assert -_freqz_db(h, np.linspace(2500, FS / 2, 40001)).max() >= 60 - 0.01

    def test_search_beyond_max_taps_is_refused(self):
        with pytest.raises(FirSpecNotMetError,
                           match=r"^bands\[0\]\.filters\[0\]\.taps: .* not met by equiripple "
                                 r"\(remez\) within max_taps 301 .*; raise max_taps or loosen "
                                 r"the spec$"):
            _designed(_doc(_lp(method="remez", freq=2200, transition_hz=100,
                                       atten_db=80, max_taps=301)))

    def test_search_runs_once_then_the_cache_answers(self):
        doc = _doc(_lp(method="remez", freq=2100, transition_hz=700, atten_db=55))
        seen = []
        with progress.scope(report=lambda f, t: seen.append(f)):
            _designed(doc)
        first = len(seen)
        with progress.scope(report=lambda f, t: seen.append(f)):
            _designed(copy.deepcopy(doc))
        assert first > 2 and len(seen) == first


# -- split bands ---------------------------------------------------------------------------


class TestSplit:
    def _split(self, band, **kw):
        return {"type": "split", "family": "fir", "crossovers": [300, 2800], "band": band,
                "taps": 511, **kw}

    def test_band_is_the_lowpass_difference_from_firwin(self):
        # Band 1 of a 300 Hz / 2.8 kHz split = L(2.8 kHz) - L(300 Hz), both firwin.
        h = _taps(self._split(1, window="hamming"))
        ref = (signal.firwin(511, 2800, window="hamming", fs=FS)
               - signal.firwin(511, 300, window="hamming", fs=FS))
        np.testing.assert_allclose(h, ref, atol=1e-13)

    def test_top_band_is_delay_minus_lowpass(self):
        h = _taps(self._split(2, method="remez", transition_hz=200))
        delta = np.zeros(511)
        delta[255] = 1.0
        ref = delta - signal.remez(511, [0, 2700, 2900, FS / 2], [1, 0], fs=FS, maxiter=40)
        np.testing.assert_allclose(h, ref, atol=1e-13)

    def test_lsq_split_uses_firls(self):
        h = _taps(self._split(0, method="lsq", transition_hz=200))
        ref = signal.firls(511, [0, 200, 400, FS / 2], [1, 1, 0, 0], fs=FS)
        np.testing.assert_allclose(h, ref, atol=1e-12)


# -- refusals ------------------------------------------------------------------------------


@pytest.mark.parametrize("flt,match", [
    (_hp(method="window", freq=2200, taps=100),
     r"taps: must be odd for a window highpass \(type I linear phase: .*no forced zero at "
     r"Nyquist\), not 100"),
    (_lp(method="remez", freq=2200, transition_hz=400, taps=100),
     r"taps: must be odd for a remez design \(type I"),
    ({"type": "split", "family": "fir", "crossovers": [300], "band": 0, "taps": 100},
     r"taps: must be odd for a complementary split"),
    (_lp(method="window", freq=2200, taps=101, ripple_db=0.1),
     r"ripple_db: this applies to the remez and lsq methods, not to window; remove ripple_db"),
    (_lp(method="remez", freq=2200, transition_hz=400, window="hann"),
     r"window: the remez method takes no window; remove window \('hann'\)"),
    (_lp(method="window", freq=2200, taps=101, transition_hz=400),
     r"transition_hz: give taps or transition_hz \(with atten_db\), not both"),
    (_lp(method="window", freq=2200),
     r"taps: missing; a window design needs taps, or transition_hz and atten_db"),
    (_lp(method="window", freq=2200, transition_hz=400),
     r"atten_db: missing; a window design needs taps, or transition_hz and atten_db"),
    (_lp(method="window", freq=2200, transition_hz=400, atten_db=60, window="hann"),
     r"window: transition_hz and atten_db size a Kaiser window; the hann window cannot"),
    (_lp(method="window", freq=2200, taps=101, window="kaiser"),
     r"beta: missing; the kaiser window needs beta, or atten_db"),
    (_lp(method="window", freq=2200, taps=101, window="hann", beta=5),
     r"beta: beta shapes the kaiser window only, not hann"),
    (_lp(method="window", freq=2200, taps=101, window="kaiser", beta=5, atten_db=60),
     r"atten_db: give beta or atten_db, not both"),
    (_lp(method="window", freq=2200, taps=101, window="gauss"),
     r"window: must be one of rectangular, triangular, hann, hamming, blackman, kaiser, "
     r"not 'gauss'"),
    (_lp(method="sinc", freq=2200, taps=101), r"method: must be one of window, remez, lsq"),
    (_lp(method="remez", freq=2200),
     r"transition_hz: missing; a remez design needs transition_hz \(Hz\), or pass_hz and "
     r"stop_hz"),
    (_lp(method="remez", freq=2200, pass_hz=2000),
     r"stop_hz: missing; pass_hz is given, so stop_hz is needed too"),
    (_lp(method="remez", freq=2200, pass_hz=2400, stop_hz=2000),
     r"stop_hz: 2000 Hz must be above pass_hz \(2400 Hz\) for a lowpass"),
    (_lp(method="remez", freq=3000, pass_hz=2000, stop_hz=2400),
     r"freq: 3000 Hz must lie in the transition band 2000 \.\. 2400 Hz"),
    (_lp(method="remez", freq=2200, transition_hz=400, pass_hz=2000, stop_hz=2400),
     r"pass_hz: give transition_hz or pass_hz and stop_hz, not both"),
    (_lp(method="remez", freq=100, transition_hz=400),
     r"transition_hz: 400 Hz centred on 100 Hz puts a band edge outside 0 \.\. 24000 Hz"),
    (_lp(method="remez", freq=2200, transition_hz=400, taps=201, max_taps=501),
     r"max_taps: max_taps bounds the search made when taps is omitted"),
    (_lp(method="window", freq=2200, taps=1), r"taps: 1 is below the minimum 3"),
    (_lp(method="window", freq=30000, taps=101), r"freq: 30000 Hz is above Nyquist"),
    ({"type": "bandpass", "family": "fir", "method": "window", "freq": 3000, "freq2": 300,
      "taps": 101}, r"freq2: 300 Hz must be above freq \(3000 Hz\)"),
    ({"type": "bandpass", "family": "fir", "method": "remez", "freq": 300, "freq2": 2800,
      "pass_hz": 400, "stop_hz": 200}, r"pass_hz: a bandpass spec is given by transition_hz"),
    ({"type": "bandpass", "family": "fir", "method": "remez", "freq": 300, "freq2": 500,
      "transition_hz": 250}, r"freq2: 500 Hz must be above freq \+ transition_hz \(550 Hz\)"),
    ({"type": "split", "family": "fir", "crossovers": [300, 2800], "band": 3, "taps": 101},
     r"band: 3 is beyond the last band: 2 crossover\(s\) make bands 0 \.\. 2"),
    ({"type": "split", "family": "fir", "crossovers": [3000, 2800], "band": 0, "taps": 101},
     r"crossovers\[1\]: 2800 Hz must be above crossovers\[0\] \(3000 Hz\)"),
    ({"type": "split", "family": "fir", "crossovers": [300, 30000], "band": 0, "taps": 101},
     r"crossovers\[1\]: 30000 Hz must be above 0 Hz and below Nyquist"),
    ({"type": "split", "family": "fir", "crossovers": [300], "band": 0, "taps": 101,
      "method": "remez"}, r"transition_hz: missing; a remez split needs transition_hz"),
    ({"type": "split", "family": "fir", "crossovers": [300, 400], "band": 0, "taps": 101,
      "method": "lsq", "transition_hz": 150},
     r"transition_hz: 150 Hz is wider than the gap between crossovers 300 and 400 Hz"),
    ({"type": "split", "family": "fir", "crossovers": [300], "band": 0, "taps": 101,
      "transition_hz": 100}, r"transition_hz: the window split is set by taps and window"),
    ({"type": "split", "family": "fir", "band": 0, "taps": 101},
     r"crossovers: missing; a band of a complementary FIR split needs crossovers"),
])
def test_refusals_name_field_and_value(flt, match):
    with pytest.raises(ProjectError, match=r"^bands\[0\]\.filters\[0\]\." + match):
        _designed(_doc(flt))


# -- files, labels --------------------------------------------------------------------------


@pytest.mark.parametrize("name", ["two-way", "three-way", "sub-sat"])
def test_iir_presets_still_load(name):
    p = project.load_preset(name)
    assert all(f.family != "fir" for b in p.bands for f in b.filters)


def test_biquad_bandpass_without_family_still_loads():
    p = _designed(_doc({"type": "bandpass", "freq": 1000, "q": 1.0}))
    f = p.bands[0].filters[0]
    assert (f.type, f.family) == ("bandpass", None)
    assert engine.design_filter(f, FS).fir is None


def test_fir_parameters_round_trip():
    doc = _doc(_lp(method="remez", freq=2200, pass_hz=2000, stop_hz=2400, atten_db=55,
                   note="kept"),
               {"type": "split", "family": "fir", "crossovers": [300, 2800], "band": 1,
                "taps": 101, "window": "kaiser", "beta": 7.5})
    p = _designed(doc)
    again = project.loads(project.dumps(p))
    assert again == p
    assert again.bands[0].filters[0].extra["note"] == "kept"
    assert again.bands[1].filters[0].params["crossovers"] == (300.0, 2800.0)


@pytest.mark.parametrize("flt,label", [
    (_lp(method="remez", freq=2200, transition_hz=400, taps=1023),
     "FIR lowpass 2.2 kHz, 1023 taps (remez)"),
    (_hp(method="window", freq=2200, taps=255, window="blackman"),
     "FIR highpass 2.2 kHz, 255 taps (blackman window)"),
    (_lp(method="window", freq=2200, transition_hz=400, atten_db=60),
     "FIR lowpass 2.2 kHz, Kaiser window for 60 dB over 400 Hz"),
    (_hp(method="lsq", freq=2200, transition_hz=800),
     "FIR highpass 2.2 kHz, fewest taps for 60 dB / 0.1 dB (lsq)"),
    ({"type": "bandpass", "family": "fir", "method": "window", "freq": 300, "freq2": 2800,
      "taps": 255}, "FIR bandpass 300 Hz - 2.8 kHz, 255 taps (hann window)"),
    ({"type": "split", "family": "fir", "crossovers": [300, 2800], "band": 1, "taps": 511},
     "FIR split band 1 of 0-2 at 300 Hz, 2.8 kHz, 511 taps (hann window)"),
])
def test_labels(flt, label):
    assert filters.label(_designed(_doc(flt)).bands[0].filters[0]) == label


# -- progress and cancel -------------------------------------------------------------------


class TestProgress:
    DOC = staticmethod(lambda atten: _doc(_lp(method="remez", freq=2000, transition_hz=500,
                                              atten_db=atten)))

    def test_search_reports_rising_fractions_with_its_name(self):
        seen = []
        with progress.scope(report=lambda f, t: seen.append((f, t))):
            _designed(self.DOC(61.5))
        fr = [f for f, _ in seen]
        assert fr[0] == 0.0 and fr[-1] == 1.0 and all(b >= a for a, b in zip(fr, fr[1:]))
        assert {t for _, t in seen} == {"FIR lowpass 2 kHz (remez): fewest taps"}

    def test_cancel_raises_design_cancelled_with_the_path(self):
        with progress.scope(cancel=lambda: True):
            with pytest.raises(fir.DesignCancelled,
                               match=r"^bands\[0\]\.filters\[0\]\.taps: the design was "
                                     r"cancelled after 0 trial designs"):
                _designed(self.DOC(61.7))

    def test_cancelled_design_is_not_cached(self):
        with progress.scope(cancel=lambda: True):
            with pytest.raises(FirDesignCancelled):
                _designed(self.DOC(61.9))
        # Outside the scope the same filter is designed in full.
        p = _designed(self.DOC(61.9))
        assert len(engine.design_filter(p.bands[0].filters[0], FS).fir) > 3

    def test_outer_scope_sees_inner_reports_and_cancels(self):
        outer, inner = [], []
        with progress.scope(report=lambda f, t: outer.append(f), cancel=lambda: False):
            with progress.scope(report=lambda f, t: inner.append(f)):
                progress.report(0.25, "x")
                assert not progress.cancelled()
        assert outer == inner == [0.25]
        with progress.scope(cancel=lambda: True):
            with progress.scope():
                assert progress.cancelled()
        assert not progress.active() and not progress.cancelled()

    def test_fraction_is_clipped(self):
        seen = []
        with progress.scope(report=lambda f, t: seen.append(f)):
            progress.report(1.5)
            progress.report(-2)
            progress.report(math.nan)
        assert seen == [1.0, 0.0, 0.0]

    def test_scope_belongs_to_its_thread(self):
        # contextvars: a scope set in one thread is not seen by another.
        seen_elsewhere = []
        with progress.scope(cancel=lambda: True):
            t = threading.Thread(target=lambda: seen_elsewhere.append(
                (progress.active(), progress.cancelled())))
            t.start()
            t.join()
            assert progress.cancelled()
        assert seen_elsewhere == [(False, False)]
