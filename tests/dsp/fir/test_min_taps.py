"""The shortest equiripple and least-squares designs meeting a spec, measured with scipy.signal."""

import re


import pytest
from scipy import signal


from planner.dsp import fir
from planner.errors import DesignError, SpecNotMetError
from tests.dsp.fir.fir_refs import FS, GRID_DB, deviations, ref_measure


# --------------------------------------------------------------------------
# equiripple


class TestEquiripple:
    SPEC = fir.FirSpec("lowpass", 5000.0, 7000.0, 1.0, 40.0)

    @pytest.mark.parametrize("spec", [
        fir.FirSpec("lowpass", 3000.0, 3600.0, 0.2, 60.0),
        fir.FirSpec("highpass", 3600.0, 3000.0, 0.5, 70.0),
        fir.FirSpec("bandpass", (1000.0, 3000.0), (500.0, 4000.0), 0.5, 50.0),
    ], ids=["lowpass", "highpass", "bandpass"])
    def test_minimum_taps_meets_spec_and_two_fewer_does_not(self, spec):
        # Reference measurement: scipy.signal.freqz on a dense linspace grid.
        d = fir.min_taps_equiripple(spec, FS)
        r, a = ref_measure(d.taps, spec)
        assert d.n_taps % 2 == 1
        assert r <= spec.ripple_db + GRID_DB and a >= spec.atten_db - GRID_DB
        # Two taps fewer, designed with plain scipy.signal.remez, misses the spec.
        shorter = fir.equiripple_fir(spec, FS, d.n_taps - 2)
        r2, a2 = ref_measure(shorter, spec)
        assert r2 > spec.ripple_db or a2 < spec.atten_db

    def test_result_is_linear_phase_type_one(self):
        # Parks-McClellan designs of odd length are symmetric (type I).
        d = fir.min_taps_equiripple(fir.FirSpec("lowpass", 3000.0, 3600.0, 0.2, 60.0), FS)
        assert fir.is_linear_phase(d.taps)

    def test_impossible_spec_raises_with_reached_and_needed(self):
        spec = fir.FirSpec("lowpass", 2150.0, 2250.0, 0.1, 80.0)
        need = fir.estimate_taps(spec, FS)
        msg = (r"^taps: lowpass spec \(pass edge 2150 Hz, stop edge 2250 Hz, ripple 0\.1 dB, "
               r"attenuation 80 dB\) not met by equiripple \(remez\) within max_taps 301 .*"
               r"reached ripple .* dB and attenuation .* dB at 301 taps; "
               + re.escape(f"about {need} taps would be needed"))
        with pytest.raises(SpecNotMetError, match=msg):
            fir.min_taps_equiripple(spec, FS, max_taps=301)

    def test_progress_reaches_one_and_never_goes_back(self):
        seen = []
        fir.min_taps_equiripple(fir.FirSpec("lowpass", 3000.0, 3600.0, 0.2, 60.0), FS,
                                progress=seen.append)
        assert seen[-1] == 1.0
        assert all(0.0 <= x <= 1.0 for x in seen)
        assert all(b >= a for a, b in zip(seen, seen[1:]))

    def test_cancel_aborts_before_the_next_trial(self):
        calls = []

        def cancel():
            calls.append(1)
            return len(calls) >= 3

        with pytest.raises(fir.DesignCancelled, match=r"^taps: the design was cancelled after "
                                                      r"2 trial designs"):
            fir.min_taps_equiripple(fir.FirSpec("lowpass", 3000.0, 3600.0, 0.2, 60.0), FS,
                                    cancel=cancel)
        assert len(calls) == 3
        assert issubclass(fir.DesignCancelled, DesignError)

    @pytest.mark.parametrize("spec,match", [
        (fir.FirSpec("lowpass", 3000.0, 2000.0, 1, 40), r"^stop_hz: 2000 Hz must be above "
                                                        r"the pass edge \(3000 Hz\)"),
        (fir.FirSpec("highpass", 2000.0, 3000.0, 1, 40), r"^stop_hz: 3000 Hz must be below "
                                                         r"the pass edge \(2000 Hz\)"),
        (fir.FirSpec("bandpass", (1000.0, 2000.0), (1500.0, 3000.0), 1, 40),
         r"^stop_hz: stop edges .* must lie outside the pass edges"),
        (fir.FirSpec("bandpass", 1000.0, (500.0, 3000.0), 1, 40),
         r"^pass_hz: a bandpass needs \(lower, upper\) pass edges"),
        (fir.FirSpec("lowpass", 3000.0, 30000.0, 1, 40), r"^stop_hz: 30000 Hz must be above 0 "
                                                         r"Hz and below Nyquist"),
        (fir.FirSpec("lowpass", 3000.0, 4000.0, 0, 40), r"^ripple_db: must be a positive number"
                                                        r" of dB, not 0"),
        (fir.FirSpec("lowpass", 3000.0, 4000.0, 1, -40), r"^atten_db: must be a number of dB "
                                                         r"above 0, not -40"),
    ])
    def test_bad_spec_raises(self, spec, match):
        with pytest.raises(DesignError, match=match):
            fir.min_taps_equiripple(spec, FS)

    def test_bad_max_taps_raises(self):
        with pytest.raises(DesignError, match=r"^max_taps: must be a whole number of taps >= 3"):
            fir.min_taps_equiripple(self.SPEC, FS, max_taps=1)


# --------------------------------------------------------------------------
# least squares


class TestLeastSquares:
    def test_minimum_taps_meets_spec_and_two_fewer_does_not(self):
        spec = fir.FirSpec("lowpass", 3000.0, 3600.0, 0.2, 60.0)
        d = fir.min_taps_least_squares(spec, FS)
        r, a = ref_measure(d.taps, spec)
        assert r <= spec.ripple_db + GRID_DB and a >= spec.atten_db - GRID_DB
        dp, ds = deviations(spec.ripple_db, spec.atten_db)
        shorter = signal.firls(d.n_taps - 2, [0, 3000, 3600, FS / 2], [1, 1, 0, 0],
                               weight=[1, dp / ds], fs=FS)       # reference: plain firls
        r2, a2 = ref_measure(shorter, spec)
        assert r2 > spec.ripple_db or a2 < spec.atten_db

    def test_least_squares_never_shorter_than_equiripple(self):
        # Parks and McClellan 1972: the equiripple filter minimises the peak
        # weighted error, so no filter of its length or shorter with a smaller
        # peak error exists; a least-squares one meeting the spec is no shorter.
        spec = fir.FirSpec("lowpass", 3000.0, 3600.0, 0.2, 60.0)
        assert (fir.min_taps_least_squares(spec, FS).n_taps
                >= fir.min_taps_equiripple(spec, FS).n_taps)

    def test_impossible_spec_raises(self):
        spec = fir.FirSpec("highpass", 2250.0, 2150.0, 0.1, 80.0)
        with pytest.raises(SpecNotMetError, match=r"^taps: highpass spec .* not met by least "
                                                  r"squares \(firls\) within max_taps 201"):
            fir.min_taps_least_squares(spec, FS, max_taps=201)
