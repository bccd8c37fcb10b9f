"""FIR responses and group delay against scipy.signal.freqz and group_delay."""

import math


import numpy as np
import pytest
from hypothesis import given, settings, strategies as st
from scipy import signal


from planner.dsp import fir
from tests.dsp.fir.fir_refs import FS, freqz


# --------------------------------------------------------------------------
# responses and group delay

LOG_F = np.geomspace(10, 24000, 2048)


class TestResponse:
    @pytest.mark.parametrize("n", [1, 2, 3, 64, 1625, 4001])
    def test_matches_scipy_freqz(self, n):
        # Reference: scipy.signal.freqz(h, worN=freqs, fs=fs). 1e-12 absolute
        # for taps of total magnitude below about 40 (rounding of the sums).
        rng = np.random.default_rng(n)
        h = rng.standard_normal(n) / math.sqrt(n)
        np.testing.assert_allclose(fir.fir_response(h, LOG_F, FS), freqz(h, LOG_F), atol=1e-12)

    def test_several_filters_at_once(self):
        # Reference: scipy.signal.freqz per filter; shape (n_filters, n_freqs).
        bands = np.array(fir.complementary_split([300, 2000], FS, 1601))
        got = fir.fir_response(bands, LOG_F, FS)
        assert got.shape == (3, len(LOG_F))
        for g, b in zip(got, bands):
            np.testing.assert_allclose(g, freqz(b, LOG_F), atol=1e-12)

    @settings(max_examples=30, deadline=None)
    @given(st.integers(1, 2500), st.lists(st.floats(0.0, 24000.0), min_size=1, max_size=50))
    def test_property_matches_freqz(self, n, f):
        # Reference: scipy.signal.freqz at arbitrary frequencies; 1e-11 absolute.
        h = np.random.default_rng(n).uniform(-1, 1, n) / math.sqrt(n)
        np.testing.assert_allclose(fir.fir_response(h, f, FS), freqz(h, f), atol=1e-11)

    def test_derivative_is_response_of_ramp_weighted_taps(self):
        # dH/dw = -j sum n h[n] e^{-jwn} (Oppenheim and Schafer 3rd ed., sec. 5.1.2);
        # reference: scipy.signal.freqz of n h[n]. 1e-9 absolute on values of order 1e3.
        h = fir.window_fir("lowpass", 2000, FS, 301)
        got_h, got_d = fir.fir_response_and_derivative(h, LOG_F, FS)
        np.testing.assert_allclose(got_h, freqz(h, LOG_F), atol=1e-12)
        np.testing.assert_allclose(got_d, -1j * freqz(np.arange(301) * h, LOG_F), atol=1e-9)

    @pytest.mark.parametrize("n", [31, 101, 1001])
    def test_linear_phase_delay_is_half_length(self, n):
        # A linear-phase FIR of N taps delays by exactly (N-1)/2 samples at
        # every frequency where H != 0 (Oppenheim and Schafer 3rd ed.,
        # sec. 5.7.3). 1e-8 samples: rounding of H'/H in the pass band.
        h = fir.window_fir("lowpass", 3000, FS, n)
        f = np.geomspace(10, 1500, 200)
        np.testing.assert_allclose(fir.fir_group_delay_samples(h, f, FS), (n - 1) / 2, atol=1e-8)

    def test_group_delay_matches_scipy_group_delay(self):
        # Reference: scipy.signal.group_delay on a non-linear-phase FIR.
        h = signal.minimum_phase(fir.window_fir("lowpass", 3000, FS, 101), method="homomorphic")
        f = np.geomspace(10, 2500, 200)
        _, ref = signal.group_delay((h, [1.0]), w=f, fs=FS)
        np.testing.assert_allclose(fir.fir_group_delay_samples(h, f, FS), ref, atol=1e-7)
