"""Linear phase, latency, pre-ringing and costs of FIR taps."""

import numpy as np
import pytest
from scipy import signal


from planner.dsp import fir
from planner.errors import DesignError
from tests.dsp.fir.fir_refs import FS, delayed_impulse, freqz


# --------------------------------------------------------------------------
# properties and costs


class TestProperties:
    def test_symmetric_and_antisymmetric_are_linear_phase(self):
        # Types I-IV (Oppenheim and Schafer 3rd ed., sec. 5.7.3); references:
        # scipy.signal.firwin (symmetric), scipy.signal.remez type "hilbert"
        # (antisymmetric, odd) and "differentiator" (antisymmetric, even).
        assert fir.is_linear_phase(signal.firwin(64, 0.3))
        assert fir.is_linear_phase(signal.remez(31, [0.05, 0.45], [1], type="hilbert"))
        assert fir.is_linear_phase(signal.remez(30, [0.01, 0.49], [1], type="differentiator",
                                                fs=1.0))

    def test_minimum_phase_and_random_are_not(self):
        h = signal.minimum_phase(signal.firwin(101, 0.2), method="homomorphic")
        assert not fir.is_linear_phase(h)
        assert not fir.is_linear_phase(np.random.default_rng(0).standard_normal(21))

    def test_latency(self):
        h = fir.window_fir("lowpass", 3000, FS, 201)
        assert fir.latency_samples(h) == 100.0           # (N-1)/2 for linear phase
        m = signal.minimum_phase(h, method="homomorphic")
        assert fir.latency_samples(m) == float(np.argmax(np.abs(m)))  # peak otherwise

    def test_pre_ringing_of_symmetric_filter_is_half_the_rest(self):
        # For a symmetric h, the energy before the centre equals that after it:
        # fraction = (E - h_c^2) / (2E), an identity of symmetry.
        h = fir.window_fir("lowpass", 3000, FS, 201)
        e = np.sum(h ** 2)
        assert fir.pre_ringing_energy(h) == pytest.approx((e - h[100] ** 2) / (2 * e),
                                                          rel=1e-12)

    def test_pre_ringing_of_delay_is_zero_and_minimum_phase_is_small(self):
        # A pure delay has no energy before its peak; a minimum-phase filter
        # concentrates energy at the start (Oppenheim and Schafer 3rd ed.,
        # sec. 5.6.3, minimum energy-delay property).
        assert fir.pre_ringing_energy(delayed_impulse(33)) == 0.0
        h = fir.window_fir("lowpass", 3000, FS, 201)
        m = signal.minimum_phase(h, method="homomorphic")
        assert fir.pre_ringing_energy(m) < fir.pre_ringing_energy(h)

    def test_metrics(self):
        h = fir.window_fir("lowpass", 3000, FS, 201)
        m = fir.fir_metrics(h, FS)
        assert (m.n_taps, m.linear_phase, m.latency_samples) == (201, True, 100.0)
        assert m.latency_ms == pytest.approx(100 / 48.0, rel=1e-12)
        assert m.multiplies_per_sample == 101
        # firwin scale=True: unit gain at DC (scipy.signal.firwin docs); 1e-9 dB rounding.
        assert m.dc_gain_db == pytest.approx(0.0, abs=1e-9)
        assert m.nyquist_gain_db == pytest.approx(
            20 * np.log10(abs(freqz(h, FS / 2)[0])), abs=1e-6)
        assert m.pre_ringing == pytest.approx(fir.pre_ringing_energy(h))

    def test_multiplies_per_sample(self):
        # Folded linear-phase direct form: one multiply per coefficient pair
        # plus the centre, ceil(N/2) (Oppenheim and Schafer 3rd ed., sec. 6.5.3).
        assert fir.fir_multiplies_per_sample(fir.window_fir("lowpass", 3000, FS, 201)) == 101
        assert fir.fir_multiplies_per_sample(signal.firwin(64, 0.3)) == 32
        assert fir.fir_multiplies_per_sample(np.random.default_rng(1).standard_normal(50)) == 50
        assert fir.fir_multiplies_per_sample(201) == 201
        assert fir.fir_multiplies_per_sample(201, folded=True) == 101

    def test_iir_multiplies_are_the_non_unit_sos_coefficients(self):
        # A biquad in direct form with a0 = 1 multiplies by b0, b1, b2, a1, a2:
        # the coefficients other than a0 of each row of scipy's sos layout.
        sos = signal.butter(8, 1000, fs=FS, output="sos")
        assert fir.iir_multiplies_per_sample(len(sos)) == sos[:, [0, 1, 2, 4, 5]].size

    def test_multiplies_bad_values(self):
        with pytest.raises(DesignError, match=r"^n_sections: must be a whole number of sections"
                                              r" >= 0, not -1"):
            fir.iir_multiplies_per_sample(-1)
        with pytest.raises(DesignError, match=r"^taps: must be at least 1 tap, not 0"):
            fir.fir_multiplies_per_sample(0)

    def test_two_dimensional_taps_rejected(self):
        with pytest.raises(DesignError, match=r"^taps: must be a non-empty 1-D array of taps, "
                                              r"not shape \(2, 3\)"):
            fir.latency_samples(np.ones((2, 3)))
