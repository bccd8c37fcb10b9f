"""Number formats against the fixed-point definition and IEEE 754.

Sources: two's-complement word ranges (numpy.iinfo), IEEE 754 binary32 rounding
(numpy.float32).
"""

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from planner.dsp.fixed import Arith, parse_arith
from planner.errors import ExportError


# ---------------------------------------------------------------- parse_arith

@pytest.mark.parametrize("text, dtype", [("q1.15", np.int16), ("q2.30", np.int32),
                                         ("q1.31", np.int32), ("q1.7", np.int8),
                                         ("q4.60", np.int64)])
def test_q_range_equals_twos_complement_word(text, dtype):
    # qM.N is a (M+N)-bit two's-complement integer times 2^-N: its range is
    # numpy.iinfo(intW) scaled by 2^-N, exactly (floats compared with ==).
    a = parse_arith(text)
    info = np.iinfo(dtype)
    assert a.word_bits == info.bits
    assert a.min_value == float(info.min) * 2.0 ** -a.frac_bits
    assert a.max_value == float(info.max) * 2.0 ** -a.frac_bits


def test_q1_23_range_exact():
    # 24-bit word (no numpy type): definition [-2^(M-1), 2^(M-1) - 2^-N].
    a = parse_arith(" Q1.23 ")
    assert (a.kind, a.int_bits, a.frac_bits) == ("fixed", 1, 23)
    assert a.min_value == -1.0 and a.max_value == 1.0 - 2.0 ** -23


def test_float_names_parse():
    assert parse_arith("float64") == Arith("float64")
    assert parse_arith("FLOAT32").name == "float32"


@pytest.mark.parametrize("bad", ["int16", "q0.15", "q1.64", "q1", "float16", "", "q1.-3"])
def test_bad_arith_text_raises(bad):
    with pytest.raises(ExportError, match=r"^arith: .*is not a known format; use 'float64'"):
        parse_arith(bad)


def test_non_string_arith_raises():
    with pytest.raises(ExportError, match=r"arith: 32 is not a format name"):
        parse_arith(32)


# ---------------------------------------------------------------- rounding

@settings(max_examples=300, deadline=None)
@given(n=st.integers(1, 40), m=st.integers(1, 4), data=st.data())
def test_fixed_round_error_at_most_half_lsb(n, m, data):
    # Round to nearest: |q(x) - x| <= 2^-(N+1) for x inside the range, and
    # q(x) is an integer multiple of 2^-N (definition of qM.N).
    a = Arith("fixed", m, n)
    x = data.draw(st.floats(a.min_value, a.max_value, allow_nan=False))
    q, sat = a.quantize(np.array([x]))
    assert not sat[0]
    assert abs(q[0] - x) <= 2.0 ** -(n + 1)
    assert (q[0] * 2.0 ** n) == np.round(q[0] * 2.0 ** n)


def test_fixed_saturates_and_reports():
    # Values beyond the range clip to the ends; a value that rounds past the
    # top (1 - 2^-17 rounds to 1.0 in q1.15) saturates too.
    a = parse_arith("q1.15")
    q, sat = a.quantize(np.array([1.5, -1.0, -1.2, 1 - 2.0 ** -17, 0.25]))
    np.testing.assert_array_equal(q, [1 - 2.0 ** -15, -1.0, -1.0, 1 - 2.0 ** -15, 0.25])
    np.testing.assert_array_equal(sat, [True, False, True, True, False])


@settings(max_examples=300, deadline=None)
@given(st.floats(-1e30, 1e30, allow_nan=False))
def test_float32_rounding_equals_numpy_cast(x):
    # IEEE 754 binary32 round-to-nearest-even, as numpy.float32 casts.
    q, sat = parse_arith("float32").quantize(np.array([x]))
    assert q[0] == float(np.float32(x)) and not sat[0]


def test_float32_overflow_saturates():
    q, sat = parse_arith("float32").quantize(np.array([1e40]))
    assert sat[0] and q[0] == float(np.finfo(np.float32).max)
