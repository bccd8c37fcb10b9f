"""A thinned run of benchmarks/design_sweep.py: every IIR family, order and kind at six
cut-offs from 10 Hz to 0.45 fs, at 44.1 and 192 kHz, against scipy.signal's analog
prototypes (butter/bessel with analog=True, freqs_zpk) through the bilinear transform
(Oppenheim and Schafer, 3rd ed., sec. 7.2.2; Linkwitz-Riley as a squared Butterworth,
Linkwitz 1976)."""

import importlib.util
import sys
import warnings
from pathlib import Path

import pytest
from scipy import signal

ROOT = Path(__file__).resolve().parents[2]


@pytest.fixture(scope="module")
def rows():
    spec = importlib.util.spec_from_file_location("design_sweep",
                                                  ROOT / "benchmarks" / "design_sweep.py")
    mod = importlib.util.module_from_spec(spec)
    sys.modules["design_sweep"] = mod        # its dataclass looks its module up there
    spec.loader.exec_module(mod)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", signal.BadCoefficients)
        return mod.thin_sweep()


def test_the_sweep_covers_every_family_order_and_kind(rows):
    # Butterworth 8 + Linkwitz-Riley 4 + Bessel 3 norms x 8 orders, 2 kinds, 2 rates x 6.
    assert len(rows) == (8 + 4 + 24) * 2 * 2 * 6


def test_every_design_is_stable(rows):
    worst = max(rows, key=lambda r: r.max_radius)
    assert worst.max_radius < 1.0, worst


def test_every_design_is_the_bilinear_image_of_its_analog_prototype(rows):
    # Exact in theory; 0.01 dB is the sweep's tolerance, wherever the level is above -100 dB.
    worst = max(rows, key=lambda r: r.identity_err_db)
    assert worst.identity_err_db <= 0.01, worst


def test_far_below_nyquist_the_design_follows_the_unwarped_analog_filter(rows):
    # Within 0.01 dB an octave either side of the cut-off while f_c <= 0.002 fs (the full
    # sweep's table in docs/design-sweep.md gives each family's limit).
    low = [r for r in rows if r.fc / r.fs <= 0.002]
    assert low and max(r.near_err_db for r in low) <= 0.01


def test_near_nyquist_the_warping_shows(rows):
    # At 0.45 fs the tangent warps the axis: the digital filter is far from the analog one.
    high = [r for r in rows if r.fc / r.fs > 0.4 and r.kind == "lowpass"
            and r.family == "butterworth" and r.order == 8]
    assert high and min(r.near_err_db for r in high) > 1.0
