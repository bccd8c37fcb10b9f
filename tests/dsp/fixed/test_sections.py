"""Pairing, ordering and scaling of second-order sections, against numpy and scipy.

Sources: numpy.roots (roots of each quadratic), scipy.signal.butter / ellip / zpk2sos
(reference designs and pairing of a well-conditioned chain), scipy.signal.sosfreqz
(responses), Jackson, "Digital Filters and Signal Processing", 3rd ed., sec. 11.3-11.4
(L-infinity scaling; poles nearest the unit circle paired with their nearest zeros and
placed last).
"""

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy import signal

from planner.dsp import iir
from planner.dsp.biquad import notch, peaking
from planner.dsp.fixed import pole_radius
from planner.dsp.fixed.sections import (integer_shape, pair_sections, quadratic_roots,
                                        scale_sections)
from planner.errors import DesignError


def _h_ld(sos, w):
    """Chain response at w (rad/sample) in extended precision (numpy longdouble).

    Evaluating ``b0 + b1 z^-1 + b2 z^-2`` near a double zero cancels; 64-bit mantissas
    keep the reference far below the 1e-9 tolerances used here.
    """
    z1 = np.exp(-1j * np.asarray(w, dtype=np.longdouble)).astype(np.clongdouble)
    s = np.asarray(sos, dtype=np.longdouble)
    h = np.ones_like(z1)
    for b0, b1, b2, a0, a1, a2 in s:
        h *= (b0 + z1 * (b1 + z1 * b2)) / (a0 + z1 * (a1 + z1 * a2))
    return h


@settings(max_examples=200, deadline=None)
@given(st.lists(st.floats(-4, 4), min_size=3, max_size=3).filter(lambda c: abs(c[0]) > 1e-3))
def test_quadratic_roots_match_numpy_roots(c):
    got = quadratic_roots(np.array([c]))[0]
    ref = np.roots(c).astype(complex)
    if len(ref) < 2:          # numpy drops a root at z = 0 when c2 = 0
        ref = np.append(ref, 0.0)
    # The two roots in either order; a double root is known to about sqrt(eps) only.
    err = min(np.max(np.abs(got - ref)), np.max(np.abs(got - ref[::-1])))
    assert err <= 1e-6 * max(1.0, np.max(np.abs(ref)))


def test_quadratic_roots_of_first_order_and_zero_terms():
    r = quadratic_roots(np.array([[0.0, 1.0, 0.5], [1.0, 1.0, 0.0]]))
    assert np.isinf(r[0, 0]) and r[0, 1] == pytest.approx(-0.5)      # c1 z + c2
    assert sorted(np.abs(r[1])) == pytest.approx([0.0, 1.0])         # z (z + 1)


def test_integer_shape_finds_exact_zero_patterns():
    assert integer_shape([3e-9, 6e-9, 3e-9]).tolist() == [1, 2, 1]
    assert integer_shape([0.7, -1.4, 0.7]).tolist() == [1, -2, 1]
    assert integer_shape([0.2, 0.0, -0.2]).tolist() == [1, 0, -1]
    assert integer_shape([0.5, 0.5, 0.0]).tolist() == [1, 1, 0]
    assert integer_shape([1.0, -1.8, 1.0]) is None       # a notch: zeros inside the band
    assert integer_shape([0.0, 0.0, 0.0]) is None


@pytest.mark.parametrize("kind, order, f, fs", [("lowpass", 6, 50, 48000),
                                                ("lowpass", 8, 100, 96000),
                                                ("lowpass", 7, 30, 192000),
                                                ("highpass", 8, 20, 192000)])
def test_pairing_keeps_zeros_at_nyquist_and_dc(kind, order, f, fs):
    # The designs whose overall gain is near 1e-19: re-pairing through sos2zpk/zpk2sos
    # turns a zero pair at z = -1 into zeros at z = 0 (scipy warns "badly conditioned").
    # pair_sections keeps every numerator's shape: all zeros stay at +-1 (numpy.roots).
    sos = iir.butterworth_sos(kind, order, f, fs)
    out = pair_sections(sos)
    target = -1.0 if kind == "lowpass" else 1.0
    for b in out[:, :3]:
        roots = np.roots(b[: 3 if b[2] else 2])
        np.testing.assert_allclose(roots, target, atol=1e-6)   # a double root: 1e-8 rel
    ref = signal.butter(order, f, kind, fs=fs, output="sos")
    w = 2 * np.pi * np.geomspace(10, 0.45 * fs, 600) / fs
    h_ref, h = _h_ld(ref, w), _h_ld(out, w)
    live = 20 * np.log10(np.abs(h_ref).astype(float)) > -100
    # Same zeros and poles, multiplied in another order: 1e-9 relative (scipy.signal.butter).
    assert np.max(np.abs(h[live] / h_ref[live] - 1)) < 1e-9


def test_pairing_matches_zpk2sos_on_a_well_conditioned_chain():
    # An elliptic lowpass's sections shuffled: pair_sections puts each pole pair back with
    # the zero pair scipy.signal.zpk2sos gives it, poles nearest the unit circle last.
    good = signal.ellip(6, 0.5, 60, 1000, fs=48000, output="sos")
    bad = good[[2, 0, 1]].copy()
    bad[:, :3] = good[::-1, :3]                       # numerators mis-assigned too
    out = pair_sections(bad)
    np.testing.assert_allclose(out[:, 3:], good[:, 3:], atol=1e-12)
    shape = out[:, :3] / out[:, :1]
    np.testing.assert_allclose(shape, good[:, :3] / good[:, :1], atol=1e-9)
    assert np.all(np.diff(pole_radius(out)) >= 0)


def test_pairing_puts_an_eq_zero_pair_with_its_own_poles():
    # A notch's zeros (on the unit circle at 3 kHz) belong with the notch's poles, not
    # with the crossover's; the notch has the poles nearest the unit circle, so it is last.
    xo = iir.butterworth_sos("lowpass", 4, 2000, 48000)
    n = notch(3000, 30, 48000)
    swapped = np.vstack([np.hstack([xo[:1, :3], n[:, 3:]]),     # numerators swapped
                         np.hstack([n[:, :3], xo[:1, 3:]])])
    chain = np.vstack([swapped, xo[1:]])
    out = pair_sections(chain)
    np.testing.assert_allclose(out[-1], n[0], rtol=0, atol=1e-12)


def test_scaling_makes_every_cumulative_peak_0_db():
    # Jackson sec. 11.3: L-infinity scaling of a cascade; checked with scipy.signal.sosfreqz
    # of each cumulative chain on a dense grid (the peaks within 0.01 dB of 0 dB).
    sos = np.vstack([peaking(120, 9.0, 2.0, 48000), iir.butterworth_sos("lowpass", 6, 300,
                                                                         48000)])
    sc = scale_sections(sos)
    w = np.linspace(0, np.pi, 1 << 16)
    for k in range(1, len(sos) + 1):
        peak = np.max(np.abs(signal.sosfreqz(sc.sos[:k], worN=w)[1]))
        assert 20 * np.log10(peak) == pytest.approx(0.0, abs=0.01)
    full = signal.sosfreqz(sc.sos, worN=w)[1] * sc.gain
    np.testing.assert_allclose(full, signal.sosfreqz(sos, worN=w)[1], rtol=1e-9, atol=1e-12)
    # The band keeps its +9 dB peak as the factor after the chain (Audio EQ Cookbook).
    assert 20 * np.log10(sc.gain) == pytest.approx(9.0, abs=0.05)


def test_scaling_a_tiny_gain_does_not_underflow():
    # 16 sections of a 20 Hz lowpass at 192 kHz: the numerators' product is ~1e-120.
    sos = np.vstack([iir.butterworth_sos("lowpass", 8, 20, 192000)] * 4)
    sc = scale_sections(sos)
    assert np.all(np.isfinite(sc.sos)) and np.all(np.abs(sc.sos[:, :3]).max(axis=1) > 1e-12)
    assert sc.gain == pytest.approx(1.0, rel=1e-6)      # a lowpass passes DC at 0 dB


def test_bad_sections_raise():
    with pytest.raises(DesignError, match=r"sos: must have shape \(n, 6\)"):
        pair_sections(np.ones((2, 5)))
    with pytest.raises(DesignError, match="sos: section 1 has an all-zero numerator"):
        scale_sections(np.array([[0, 0, 0, 1, 0, 0.0]]))
