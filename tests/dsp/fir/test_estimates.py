"""Kaiser's formulas and length estimate against scipy.signal and the fewest taps found."""

import math


import numpy as np
import pytest
from scipy import signal


from planner.dsp import fir
from planner.errors import DesignError
from tests.dsp.fir.fir_refs import FS, SWEEP, SWEEP_IDS, deviations, freqz, sweep_spec


# --------------------------------------------------------------------------
# Kaiser formulas and length estimates


class TestKaiserFormulas:
    @pytest.mark.parametrize("a", [10.0, 21.0, 30.0, 50.0, 50.5, 60.0, 80.0, 120.0])
    def test_beta_matches_scipy(self, a):
        # Kaiser 1974 beta formula; reference scipy.signal.kaiser_beta. 1e-12: same formula.
        assert fir.kaiser_beta(a) == pytest.approx(signal.kaiser_beta(a), rel=1e-12, abs=1e-15)

    @pytest.mark.parametrize("a,tw", [(30.0, 2000.0), (60.0, 500.0), (80.0, 100.0),
                                      (100.0, 37.0), (21.0, 4000.0)])
    def test_length_matches_scipy_kaiserord_rounded_up_to_odd(self, a, tw):
        # Kaiser 1974 length N = (A - 7.95)/(2.285 dw) + 1; reference
        # scipy.signal.kaiserord (width as a fraction of Nyquist), whose
        # length we round up to the next odd number (type I).
        n_ref, beta_ref = signal.kaiserord(a, tw / (FS / 2))
        assert fir.kaiser_taps(a, tw, FS) == (n_ref if n_ref % 2 else n_ref + 1)
        assert fir.kaiser_beta(a) == pytest.approx(beta_ref, rel=1e-12, abs=1e-15)

    def test_kaiser_design_meets_its_attenuation(self):
        # Kaiser 1974 (Oppenheim and Schafer 3rd ed., sec. 7.6.1): a
        # Kaiser-window lowpass with beta(A) and N(A, dw) has a stop-band
        # deviation close to 10^(-A/20). The 1 dB allowance is common
        # practice, no published source.
        a, fc, tw = 60.0, 4000.0, 800.0
        h = fir.window_fir("lowpass", fc, FS, fir.kaiser_taps(a, tw, FS), window="kaiser",
                           beta=fir.kaiser_beta(a))
        stop = np.abs(freqz(h, np.linspace(fc + tw / 2, FS / 2, 20000)))
        assert -20 * np.log10(stop.max()) > a - 1.0

    def test_length_needs_attenuation_above_7_95_db(self):
        with pytest.raises(DesignError, match=r"^atten_db: must be a number of dB above 7.95, "
                                              r"not 5"):
            fir.kaiser_taps(5, 100, FS)

    def test_length_transition_below_nyquist(self):
        with pytest.raises(DesignError, match=r"^transition_hz: 30000 Hz must be below Nyquist"):
            fir.kaiser_taps(60, 30000, FS)

    def test_beta_needs_positive_attenuation(self):
        with pytest.raises(DesignError, match=r"^atten_db: must be a number of dB above 0"):
            fir.kaiser_beta(-3)


# --------------------------------------------------------------------------
# the length estimate against the fewest taps found, over a sweep of specs



class TestEstimate:
    def test_kaiser_formula(self):
        # Kaiser 1974, as quoted in Oppenheim and Schafer 3rd ed., sec. 7.7:
        # N = (-20 log10 sqrt(dp ds) - 13) / (14.6 df) + 1, df = transition / fs,
        # here worked by hand for 0.1 dB, 80 dB, 100 Hz at 48 kHz and rounded
        # up to the next odd number: 1625.2 -> 1627.
        dp, ds = deviations(0.1, 80.0)
        n = (-20 * math.log10(math.sqrt(dp * ds)) - 13) / (14.6 * 100.0 / FS) + 1
        assert 1625 < n < 1626
        assert fir.kaiser_equiripple_taps(0.1, 80.0, 100.0, FS) == 1627
        assert fir.estimate_taps(fir.FirSpec("lowpass", 2150.0, 2250.0, 0.1, 80.0), FS) == 1627

    def test_bandpass_estimate_uses_the_narrower_transition(self):
        spec = fir.FirSpec("bandpass", (1000.0, 3000.0), (900.0, 4000.0), 0.5, 60.0)
        assert fir.estimate_taps(spec, FS) == fir.kaiser_equiripple_taps(0.5, 60.0, 100.0, FS)

    @pytest.mark.parametrize("kind,ripple_db,atten_db,tw_fs", SWEEP, ids=SWEEP_IDS)
    def test_kaiser_estimate_is_close_to_the_fewest_taps_found(self, kind, ripple_db,
                                                               atten_db, tw_fs):
        # Kaiser 1974's estimate against the fewest odd taps that meet the spec
        # (what the search finds, checked against a scan of every odd length in
        # TestSearchIsExact). Measured over this sweep with scipy 1.17: ratios
        # from 0.852 (bandpass, 1 dB, 40 dB, 0.02 fs: 69 for 81 taps) to 1.111
        # (highpass, 1 dB, 100 dB, 0.005 fs: 679 for 611); the bounds add 0.01
        # on each side for other scipy versions of remez. At 15-17 taps one odd
        # step is already 12 %.
        spec = sweep_spec(kind, ripple_db, atten_db, tw_fs)
        found = fir.min_taps_equiripple(spec, FS).n_taps
        assert 0.84 <= fir.estimate_taps(spec, FS) / found <= 1.12
