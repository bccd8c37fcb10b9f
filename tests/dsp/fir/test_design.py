"""Fixed-length equiripple and least-squares designs against scipy.signal.remez and firls."""

import numpy as np
import pytest
from scipy import signal


from planner.dsp import fir
from planner.errors import DesignError
from tests.dsp.fir.fir_refs import FS, deviations, freqz


# --------------------------------------------------------------------------
# equiripple


def alternations(e):
    """Number of alternations of the extremal values of the error sequence ``e``.

    Local extrema (band ends included) of |e| within 0.5% of max|e|; runs
    of the same sign count once (Parks and McClellan 1972, alternation theorem).
    """
    d = np.diff(e)
    inner = np.where(d[:-1] * d[1:] <= 0)[0] + 1
    idx = np.concatenate([[0], inner, [len(e) - 1]])
    peak = np.abs(e).max()
    vals = e[idx][np.abs(e[idx]) >= 0.995 * peak]
    signs = np.sign(vals)
    return 1 + int(np.count_nonzero(signs[1:] != signs[:-1]))


class TestEquiripple:
    SPEC = fir.FirSpec("lowpass", 5000.0, 7000.0, 1.0, 40.0)

    def test_weights_and_bands_match_plain_remez(self):
        # Reference: scipy.signal.remez with weights 1/dp : 1/ds (Parks and
        # McClellan 1972: weight inversely proportional to the allowed error).
        dp, ds = deviations(1.0, 40.0)
        ref = signal.remez(41, [0, 5000, 7000, FS / 2], [1, 0], weight=[1, dp / ds], fs=FS,
                           maxiter=40)
        np.testing.assert_allclose(fir.equiripple_fir(self.SPEC, FS, 41), ref, atol=1e-15)

    def test_alternation_theorem_small_design(self):
        # Parks and McClellan 1972 (alternation theorem): the optimal type I
        # filter with L = (N-1)/2 has at least L + 2 alternations of the
        # weighted error, all of the same magnitude.
        n = 31
        big_l = (n - 1) // 2
        # grid_density 64 (scipy.signal.remez's default is 16): the extremal
        # peaks are then equal to about 2e-4, well inside the 0.5% band.
        h = fir.equiripple_fir(self.SPEC, FS, n, grid_density=64)
        dp, ds = deviations(1.0, 40.0)
        fp = np.linspace(0, 5000, 20001)
        fst = np.linspace(7000, FS / 2, 60001)
        delay = np.exp(1j * 2 * np.pi * np.concatenate([fp, fst]) / FS * big_l)
        amp = np.real(freqz(h, np.concatenate([fp, fst])) * delay)   # zero-phase amplitude
        e = np.concatenate([1.0 * (1 - amp[:len(fp)]), (dp / ds) * (0 - amp[len(fp):])])
        assert alternations(e) >= big_l + 2
        # Equal peaks in both bands: 0.1% (the design grid's own resolution).
        assert np.abs(e[:len(fp)]).max() == pytest.approx(np.abs(e[len(fp):]).max(), rel=1e-3)

    def test_even_fixed_length_raises(self):
        with pytest.raises(DesignError, match=r"^taps: must be odd for this design.*not 40"):
            fir.equiripple_fir(self.SPEC, FS, 40)


# --------------------------------------------------------------------------
# least squares


class TestLeastSquares:
    @pytest.mark.parametrize("kind,f2,bands,desired", [
        ("lowpass", None, [0, 2750, 3250, FS / 2], [1, 1, 0, 0]),
        ("highpass", None, [0, 2750, 3250, FS / 2], [0, 0, 1, 1]),
        ("bandpass", 8000.0, [0, 2750, 3250, 7750, 8250, FS / 2], [0, 0, 1, 1, 0, 0]),
    ])
    def test_matches_scipy_firls(self, kind, f2, bands, desired):
        # Reference: scipy.signal.firls with the transition centred on each edge.
        got = fir.least_squares_fir(kind, 3000, FS, 101, 500, freq2_hz=f2)
        ref = signal.firls(101, bands, desired, fs=FS)
        np.testing.assert_allclose(got, ref, atol=1e-13)   # linear solve rounding

    def test_transition_outside_band_raises(self):
        with pytest.raises(DesignError, match=r"^transition_hz: 8000 Hz puts a band edge outside"):
            fir.least_squares_fir("lowpass", 3000, FS, 101, 8000)
