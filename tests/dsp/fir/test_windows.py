"""Windows and the window method against scipy.signal.get_window and firwin."""

import numpy as np
import pytest
from scipy import signal


from planner.dsp import fir
from planner.errors import DesignError
from tests.dsp.fir.fir_refs import FS, freqz


# --------------------------------------------------------------------------
# windows and the window method


class TestWindow:
    @pytest.mark.parametrize("name,ref", [("boxcar", "boxcar"), ("triangular", "triang"),
                                          ("hann", "hann"), ("hamming", "hamming"),
                                          ("blackman", "blackman")])
    @pytest.mark.parametrize("n", [3, 4, 51, 100])
    def test_matches_scipy_get_window(self, name, ref, n):
        # Reference: scipy.signal.get_window, symmetric (fftbins=False); Harris 1978 formulas.
        # 1e-14: same formula, different rounding.
        np.testing.assert_allclose(fir.window(name, n), signal.get_window(ref, n, fftbins=False),
                                   atol=1e-14)

    @pytest.mark.parametrize("beta", [0.0, 3.0, 8.6])
    def test_kaiser_matches_scipy(self, beta):
        # Reference: scipy.signal.windows.kaiser (Kaiser 1974 I0 window).
        np.testing.assert_allclose(fir.window("kaiser", 63, beta),
                                   signal.windows.kaiser(63, beta, sym=True), rtol=1e-12)

    def test_aliases(self):
        # "rectangular" and "triang" are accepted names (scipy.signal's spellings).
        np.testing.assert_array_equal(fir.window("rectangular", 9), np.ones(9))
        np.testing.assert_array_equal(fir.window("triang", 9), fir.window("triangular", 9))

    def test_unknown_window_raises(self):
        with pytest.raises(DesignError, match=r"^window: must be one of .*'tukey'"):
            fir.window("tukey", 31)

    def test_kaiser_needs_beta(self):
        with pytest.raises(DesignError, match=r"^beta: the kaiser window needs beta"):
            fir.window("kaiser", 31)

    def test_kaiser_negative_beta(self):
        with pytest.raises(DesignError, match=r"^beta: must be a number >= 0, not -1"):
            fir.window("kaiser", 31, -1)


WINDOW_CASES = [("boxcar", "boxcar", None), ("triangular", "triang", None), ("hann", "hann", None),
                ("hamming", "hamming", None), ("blackman", "blackman", None),
                ("kaiser", ("kaiser", 6.5), 6.5)]


class TestWindowFir:
    @pytest.mark.parametrize("name,ref_win,beta", WINDOW_CASES)
    @pytest.mark.parametrize("kind,cutoff,pass_zero", [
        ("lowpass", 1200.0, True), ("highpass", 1200.0, False),
        ("bandpass", (800.0, 3500.0), False)])
    def test_matches_scipy_firwin(self, name, ref_win, beta, kind, cutoff, pass_zero):
        # Reference: scipy.signal.firwin with scale=True (unit gain at DC,
        # Nyquist or band centre). 1e-15 absolute: taps are below 1.
        f1, f2 = (cutoff, None) if np.isscalar(cutoff) else cutoff
        got = fir.window_fir(kind, f1, FS, 101, window=name, beta=beta, freq2_hz=f2)
        ref = signal.firwin(101, cutoff, window=ref_win, pass_zero=pass_zero, fs=FS)
        np.testing.assert_allclose(got, ref, atol=1e-15)

    def test_even_lowpass_matches_firwin(self):
        # Reference: scipy.signal.firwin; an even-length lowpass is allowed (type II).
        np.testing.assert_allclose(fir.window_fir("lowpass", 3000, FS, 64),
                                   signal.firwin(64, 3000, window="hann", fs=FS), atol=1e-15)

    def test_cutoff_is_minus_6_db(self):
        # Window method: the windowed response passes through half the ideal
        # gain at the cut-off (Oppenheim and Schafer 3rd ed., sec. 7.5.1,
        # odd symmetry of the ripple about the discontinuity). 0.01 dB: the
        # symmetry is approximate (the ripples of the two sides overlap).
        h = fir.window_fir("lowpass", 6000, FS, 401, window="hamming")
        assert 20 * np.log10(abs(freqz(h, 6000)[0])) == pytest.approx(20 * np.log10(0.5),
                                                                     abs=0.01)

    @pytest.mark.parametrize("kind", ["highpass", "bandpass"])
    def test_even_taps_for_highpass_or_bandpass_raise(self, kind):
        with pytest.raises(DesignError, match=rf"^taps: must be odd for a {kind}.*not 100"):
            fir.window_fir(kind, 1000, FS, 100, freq2_hz=2000)

    def test_too_few_taps(self):
        with pytest.raises(DesignError, match=r"^taps: must be at least 3 taps, not 2"):
            fir.window_fir("lowpass", 1000, FS, 2)

    def test_non_integer_taps(self):
        with pytest.raises(DesignError, match=r"^taps: must be a whole number of taps, not 10.5"):
            fir.window_fir("lowpass", 1000, FS, 10.5)

    @pytest.mark.parametrize("f", [0.0, -5.0, 24000.0, 30000.0])
    def test_freq_outside_open_band_raises(self, f):
        with pytest.raises(DesignError, match=r"^freq: .* must be above 0 Hz and below Nyquist "
                                              r"\(24000 Hz\)"):
            fir.window_fir("lowpass", f, FS, 31)

    def test_unknown_kind(self):
        with pytest.raises(DesignError, match=r"^type: must be one of .*'bandstop'"):
            fir.window_fir("bandstop", 1000, FS, 31)

    def test_bad_sample_rate(self):
        with pytest.raises(DesignError, match=r"^sample_rate: must be a positive number of Hz"):
            fir.window_fir("lowpass", 1000, 0, 31)

    def test_bandpass_needs_freq2(self):
        with pytest.raises(DesignError, match=r"^freq2: a bandpass needs its upper edge"):
            fir.window_fir("bandpass", 1000, FS, 31)

    def test_bandpass_freq2_must_be_above_freq(self):
        with pytest.raises(DesignError, match=r"^freq2: 900 Hz must be above freq \(1000 Hz\)"):
            fir.window_fir("bandpass", 1000, FS, 31, freq2_hz=900)
