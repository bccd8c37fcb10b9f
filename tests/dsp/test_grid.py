"""planner.dsp.grid: roots, features, refinement and zoom, against numpy and scipy.signal."""

import numpy as np
import pytest
from scipy import signal

from planner import config
from planner.dsp import grid

FS = 48000.0


def _sort(z):
    z = np.asarray(z, complex)
    return z[np.lexsort((np.round(z.imag, 6), np.round(z.real, 6)))]


def test_quadratic_roots_match_numpy_roots():
    # Reference: numpy.roots (companion-matrix eigenvalues), on random real quadratics,
    # including real, repeated and complex roots.
    rng = np.random.default_rng(3)
    c = rng.normal(size=(300, 3))
    c[:50, 1] = 2 * np.sqrt(np.abs(c[:50, 0] * c[:50, 2])) * np.sign(c[:50, 0] * c[:50, 2] + 0.5)
    got = grid.quadratic_roots(c[:, 0], c[:, 1], c[:, 2])
    for row, r in zip(c, got):
        assert _sort(r) == pytest.approx(_sort(np.roots(row)), rel=1e-6, abs=1e-6)


def test_quadratic_roots_of_lower_degree_keep_the_finite_root():
    # 0 z^2 + 2 z + 1: one root, -1/2; the other is not finite.
    r = grid.quadratic_roots(np.array([0.0]), np.array([2.0]), np.array([1.0]))[0]
    assert r[np.isfinite(r)] == pytest.approx([-0.5])


def test_section_roots_match_sos2zpk():
    # Reference: scipy.signal.sos2zpk of an elliptic lowpass (zeros on the unit circle).
    sos = signal.ellip(6, 0.5, 60, 3000, fs=FS, output="sos")
    z, p = grid.section_roots(sos)
    zr, pr, _ = signal.sos2zpk(sos)
    assert _sort(z.ravel()) == pytest.approx(_sort(zr), abs=1e-9)
    assert _sort(p.ravel()) == pytest.approx(_sort(pr), abs=1e-9)


@pytest.mark.parametrize("fs", [44100.0, 48000.0, 96000.0, 192000.0])
@pytest.mark.parametrize("q", [30.0, 100.0, 300.0])
def test_notch_feature_is_at_its_frequency_with_its_bandwidth(fs, q):
    # scipy.signal.iirnotch: zeros on the circle at w0, -3 dB bandwidth w0 / Q. The poles'
    # angle differs from w0 by O((1 - r)^2) (5e-4 relative covers Q 30); the bandwidth from
    # the pole radius, (1 - r) fs / pi, is the -3 dB bandwidth to first order in 1 - r.
    b, a = signal.iirnotch(3150.0, q, fs=fs)
    f0, bw = grid.narrow_features(np.concatenate([b, a])[None, :], fs)
    assert len(f0) == 2                                   # the zero and the pole of the pair
    assert f0 == pytest.approx([3150.0, 3150.0], rel=5e-4)
    assert bw == pytest.approx([3150.0 / q] * 2, rel=0.02)


def test_far_roots_are_not_features():
    # A Butterworth lowpass at 3 kHz: zeros at z = -1 (real), poles far from the circle.
    f0, _ = grid.narrow_features(signal.butter(4, 3000, fs=FS, output="sos"), FS,
                                 near=0.05)
    assert len(f0) == 0


def test_feature_points_surround_a_narrow_feature_and_skip_a_wide_one():
    pts = grid.feature_points(np.array([3150.0, 1000.0]), np.array([10.5, 500.0]),
                              20.0, 20000.0, 1024)
    k = np.asarray(config.GRID_FEATURE_OFFSETS)
    expect = 3150.0 + 10.5 * np.concatenate([-k[::-1], [0.0], k])
    assert np.sort(pts) == pytest.approx(expect)          # only the 10.5 Hz wide one


def test_feature_points_are_bounded_narrowest_first():
    f0 = np.geomspace(100, 10000, 1000)
    bw = f0 / np.linspace(50, 1000, 1000)                 # Q 50 .. 1000
    pts = grid.feature_points(f0, bw, 20.0, 20000.0, 1024, max_features=10)
    assert len(pts) <= 10 * (2 * len(config.GRID_FEATURE_OFFSETS) + 1)
    assert np.any(np.isclose(pts, f0[-1]))                # the narrowest is kept
    assert not np.any(np.isclose(pts, f0[0]))             # the widest is not


def test_fast_cells_split_only_where_a_level_jumps():
    f = np.geomspace(100, 1000, 11)
    lv = np.zeros((1, 11))
    lv[0, 5:] = 3.0                                       # a 3 dB step between f[4] and f[5]
    new = grid.fast_cells(f, lv, np.array([-np.inf]), step_db=1.0, split=3)
    assert len(new) == 3 and np.all((new > f[4]) & (new < f[5]))
    # below the row's floor the jump does not count
    assert len(grid.fast_cells(f, lv - 100, np.array([-50.0]), step_db=1.0)) == 0


def test_fast_cells_are_bounded():
    f = np.geomspace(100, 1000, 1001)
    lv = np.where(np.arange(1001) % 2, 10.0, -10.0)[None, :]   # every cell jumps 20 dB
    assert len(grid.fast_cells(f, lv, np.array([-np.inf]), max_cells=7, split=2)) == 14


def test_zoom_extremes_finds_a_narrow_maximum():
    # A Lorentzian peak 0.01 Hz wide at 1000.123 Hz, bracketed by grid points at 999 and 1001.
    def value(c, f):
        return -10 * np.log10(1 + ((f - 1000.123) / 0.005) ** 2)

    x, v = grid.zoom_extremes(value, np.array([999.0]), np.array([1001.0]),
                              np.array([1000.0]), value(None, np.array([1000.0])))
    assert x[0] == pytest.approx(1000.123, abs=1e-6)
    assert v[0] == pytest.approx(0.0, abs=1e-6)


def test_zoom_extremes_never_worse_than_the_start():
    rng = np.random.default_rng(0)

    def value(c, f):
        return np.sin(37 * np.log(f)) + 0.1 * rng.normal(size=len(f))

    x0 = np.array([500.0, 2000.0])
    v0 = np.array([5.0, -5.0])                            # the first start cannot be beaten
    x, v = grid.zoom_extremes(value, x0 * 0.9, x0 * 1.1, x0, v0)
    assert x[0] == pytest.approx(500.0, rel=1e-12) and v[0] == 5.0 and v[1] >= -5.0


def test_local_extremes_largest_first_ends_included():
    v = np.array([3.0, 1.0, 2.0, 0.0, 5.0, 4.0])
    assert list(grid.local_extremes(v, 2)) == [4, 0]
