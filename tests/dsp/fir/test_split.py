"""Complementary N-band splits: the telescoping sum, against scipy.signal.firwin."""

import numpy as np
import pytest
from hypothesis import given, settings, strategies as st
from scipy import signal


from planner.dsp import fir
from planner.errors import DesignError
from tests.dsp.fir.fir_refs import FS, delayed_impulse


# --------------------------------------------------------------------------
# complementary split



class TestComplementarySplit:
    @pytest.mark.parametrize("design,kw", [("window", {}), ("window", {"window": "kaiser",
                                                                        "beta": 8.0}),
                                           ("equiripple", {"transition_hz": 200.0}),
                                           ("least_squares", {"transition_hz": 200.0})])
    def test_bands_sum_to_delayed_impulse(self, design, kw):
        # Telescoping sum of nested lowpasses (delta - L_N + ... + L_1 = delta):
        # exact up to rounding; 1e-12 absolute.
        bands = fir.complementary_split([120, 800, 4000], FS, 1023, design=design, **kw)
        assert len(bands) == 4 and all(b.shape == (1023,) for b in bands)
        np.testing.assert_allclose(np.sum(bands, axis=0), delayed_impulse(1023), rtol=0,
                                   atol=1e-12)

    def test_sum_is_flat_with_constant_delay(self):
        # The delayed impulse is an all-pass delay of (N-1)/2 samples
        # (Oppenheim and Schafer 3rd ed., sec. 5.1.2): |sum| = 1, group delay 255.
        bands = fir.complementary_split([500, 5000], FS, 511)
        f = np.geomspace(10, 23000, 300)
        h, dh = fir.fir_response_and_derivative(np.sum(bands, axis=0), f, FS)
        np.testing.assert_allclose(np.abs(h), 1.0, atol=1e-12)
        np.testing.assert_allclose(-np.imag(dh / h), 255.0, atol=1e-9)

    def test_lowest_band_is_the_window_lowpass_and_top_is_delay_minus_lowpass(self):
        # Reference: scipy.signal.firwin at the crossovers.
        bands = fir.complementary_split([700, 3000], FS, 255)
        np.testing.assert_allclose(bands[0], signal.firwin(255, 700, window="hann", fs=FS),
                                   atol=1e-15)
        np.testing.assert_allclose(bands[2], delayed_impulse(255)
                                   - signal.firwin(255, 3000, window="hann", fs=FS),
                                   atol=1e-15)

    @settings(max_examples=40, deadline=None)
    @given(st.lists(st.floats(30.0, 22000.0), min_size=1, max_size=6, unique=True),
           st.integers(1, 400), st.sampled_from(["window", "least_squares"]))
    def test_sum_property_random_crossovers(self, xo, half, design):
        # Same telescoping identity for any increasing crossover set and any
        # odd length; 1e-12 absolute.
        xo = sorted(xo)
        n = 2 * half + 1
        kw = {"transition_hz": 20.0} if design == "least_squares" else {}
        bands = fir.complementary_split(xo, FS, n, design=design, **kw)
        assert len(bands) == len(xo) + 1
        np.testing.assert_allclose(np.sum(bands, axis=0), delayed_impulse(n), rtol=0, atol=1e-12)

    def test_even_taps_raise(self):
        with pytest.raises(DesignError, match=r"^taps: must be odd for this design.*not 256"):
            fir.complementary_split([1000], FS, 256)

    def test_crossovers_must_increase(self):
        with pytest.raises(DesignError, match=r"^crossovers: must be strictly increasing"):
            fir.complementary_split([1000, 800], FS, 255)

    def test_crossover_above_nyquist_names_its_index(self):
        with pytest.raises(DesignError, match=r"^crossovers\[1\]: 25000 Hz must be above 0 Hz "
                                              r"and below Nyquist"):
            fir.complementary_split([1000, 25000], FS, 255)

    def test_equiripple_needs_transition(self):
        with pytest.raises(DesignError, match=r"^transition_hz: the equiripple split needs"):
            fir.complementary_split([1000], FS, 255, design="equiripple")

    def test_unknown_design(self):
        with pytest.raises(DesignError, match=r"^design: must be window, equiripple or "
                                              r"least_squares, not 'iir'"):
            fir.complementary_split([1000], FS, 255, design="iir")
