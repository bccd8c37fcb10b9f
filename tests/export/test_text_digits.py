"""The text export prints each coefficient with the digits its number format holds.

Typing the printed text back in must give the exact stored value: float64 by
Python's float() (IEEE 754 binary64, shortest round-trip repr), float32 by
numpy.float32() (IEEE 754 binary32: at most 9 significant digits, IEEE Std
754-2008 sec. 5.12.2), qM.N by the printed integer divided by 2^N (two's
complement words). References are the float64 design of
planner.engine.design_band rounded by numpy itself, not the export's own
rounding.
"""

import re

import numpy as np
import pytest

from planner import engine, export, project
from tests.conftest import two_way

LINE = re.compile(r"^    ([ab][012]) = (\S+)(?:  \((-?\d+) / 2\^(\d+)\))?$", re.M)


def _proj():
    d = two_way(4, fc=2200.0)
    d["bands"][1]["filters"].append({"type": "peaking", "freq": 6000, "gain_db": -2.0, "q": 1.4})
    return project.from_dict(d)


def _blocks(text):
    return re.split(r"^band ", text, flags=re.M)[1:]


def _design_rows(p, i, fs):
    """[b0, b1, b2, a1, a2] of band i's float64 design, in chain order."""
    sos = engine.design_band(export.project_at_rate(p, fs).bands[i], fs).sos
    return np.asarray(sos)[:, [0, 1, 2, 4, 5]]


def _written(tmp_path, arith):
    res = export.write_export(_proj(), [48000], "text", tmp_path, arith=arith)
    return res, res.files[0].read_text()


def test_float64_text_reads_back_as_the_design_exactly(tmp_path):
    res, text = _written(tmp_path, "float64")
    for i, blk in enumerate(_blocks(text)):
        got = np.array([float(v) for _, v, _, _ in LINE.findall(blk)]).reshape(-1, 5)
        np.testing.assert_array_equal(got, _design_rows(res.rates[0].project, i, 48000))


def test_float32_text_reads_back_as_numpy_float32_of_the_design(tmp_path):
    res, text = _written(tmp_path, "float32")
    for i, blk in enumerate(_blocks(text)):
        vals = [v for _, v, _, _ in LINE.findall(blk)]
        got = np.array([np.float32(v) for v in vals], dtype=np.float32).reshape(-1, 5)
        ref = _design_rows(res.rates[0].project, i, 48000).astype(np.float32)
        np.testing.assert_array_equal(got, ref)
        # At most 9 significant digits (binary32 needs no more to round-trip).
        for v in vals:
            digits = re.sub(r"[eE].*$", "", v).replace("-", "").replace(".", "").lstrip("0")
            assert len(digits) <= 9, v


@pytest.mark.parametrize("arith,frac", [("q2.30", 30), ("q1.23", 23)])
def test_fixed_text_gives_the_word_and_the_exact_value(tmp_path, arith, frac):
    res, text = _written(tmp_path, arith)
    assert f"(the integer word / 2^{frac})" in text
    rx = res.rates[0]
    for i, blk in enumerate(_blocks(text)):
        rows = LINE.findall(blk)
        assert rows and all(n for _, _, n, _ in rows)       # every coefficient has its word
        for _, dec, n, shift in rows:
            assert int(shift) == frac
            assert float(dec) == int(n) / 2.0 ** frac        # the decimal is the word, exactly
            assert -2 ** (rx.arith.word_bits - 1) <= int(n) < 2 ** (rx.arith.word_bits - 1)
        # The feedback words against the design rounded here: a1 * 2^(N - k) to the nearest
        # integer (k the section's post-shift), as a two's complement word stores it.
        words = np.array([int(n) for _, _, n, _ in rows]).reshape(-1, 5)
        k = np.asarray(rx.bands[i].shifts or [0] * len(words))
        ref = _design_rows(rx.project, i, 48000)[:, 3:]
        np.testing.assert_array_equal(words[:, 3:], np.round(ref * 2.0 ** (frac - k[:, None])))


def test_a_delay_typed_in_ms_prints_as_its_decimal_product(tmp_path):
    # 0.04837 ms at 48 kHz is 2.32176 samples (the decimal product, Python's fractions);
    # plain float arithmetic made it 2.3217600000000003 in the text.
    from fractions import Fraction

    d = two_way(4, fc=2200.0)
    d["bands"][1]["delay_ms"] = 0.04837
    res = export.write_export(project.from_dict(d), [48000], "text", tmp_path)
    text = res.files[0].read_text()
    (value,) = re.findall(r"delay_samples\s+(\S+)", _blocks(text)[1])
    assert value == "2.32176"
    assert float(value) == float(Fraction("0.04837") * 48000 / 1000)
