"""planner.units: values as people type them, and back.

The expected numbers are the SI prefix definitions (k = 10**3, u = 10**-6,
BIPM SI Brochure, 9th ed., 2019, table 7) applied to the typed text.
"""

import math

import pytest
from hypothesis import given, strategies as st

from planner import units
from planner.errors import ProjectError


@pytest.mark.parametrize("text, unit, value", [
    ("2k", "Hz", 2000.0),
    ("2.2 kHz", "Hz", 2200.0),
    ("2.2kHz", "Hz", 2200.0),
    ("2,2k", "Hz", 2200.0),          # decimal comma
    ("350", "Hz", 350.0),
    ("350 Hz", "Hz", 350.0),
    ("1e3", "Hz", 1000.0),
    ("-3 dB", "dB", -3.0),
    ("+1.5", "dB", 1.5),
    ("-3dB", "dB", -3.0),
    ("0.7", "", 0.7),
    (".5", "", 0.5),
    ("1.5ms", "ms", 1.5),
    ("250us", "ms", 0.25),
    ("0.002 s", "ms", 2.0),
])
def test_parse_reads_what_people_type(text, unit, value):
    assert units.parse(text, unit) == pytest.approx(value, rel=1e-12)  # float rounding only


def test_named_parsers():
    assert units.parse_freq_hz("2.5k") == 2500.0
    assert units.parse_db("-6 dB") == -6.0
    assert units.parse_ms("1.5 ms") == 1.5
    assert units.parse_number("4") == 4.0


def test_parse_refuses_other_units_kind():
    with pytest.raises(ProjectError, match=r"freq: cannot read '3 dB' as a frequency: unknown unit 'dB'"):
        units.parse("3 dB", "Hz", field="freq")


def test_parse_refuses_words():
    with pytest.raises(ProjectError, match=r"q: cannot read 'abc' as a number"):
        units.parse("abc", "", field="q")


def test_parse_refuses_empty():
    with pytest.raises(ProjectError, match=r"gain_db: empty; type a level in dB"):
        units.parse("  ", "dB", field="gain_db")


def test_parse_refuses_overflow():
    with pytest.raises(ProjectError, match=r"is not a finite number"):
        units.parse("1e308k", "Hz")


def test_parse_refuses_unknown_unit_name():
    with pytest.raises(ValueError, match=r"unit must be one of"):
        units.parse("1", "V")


@pytest.mark.parametrize("value, unit, text", [
    (2200.0, "Hz", "2.2 kHz"),
    (350.0, "Hz", "350 Hz"),
    (-3.0, "dB", "-3 dB"),
    (1.5, "ms", "1.5 ms"),
    (0.7, "", "0.7"),
])
def test_format_writes_plain_text(value, unit, text):
    assert units.format(value, unit) == text


_finite = st.floats(min_value=-1e9, max_value=1e9, allow_nan=False, allow_infinity=False)


@given(_finite, st.sampled_from(["Hz", "dB", "ms", ""]))
def test_format_then_parse_round_trips(value, unit):
    # format keeps 10 significant digits: the round trip is exact to 1e-9 relative.
    back = units.parse(units.format(value, unit), unit)
    assert math.isclose(back, value, rel_tol=1e-9, abs_tol=1e-300)


@pytest.mark.parametrize("text", ["1,000", "3,500", "3,500 Hz", "-1,250 dB", "2,200k"])
def test_a_comma_before_three_digits_is_refused_as_ambiguous(text):
    # "1,000" is one thousand in English and one (a decimal comma) elsewhere: guessing
    # either silently gave 1 Hz for 1000 Hz, so the text is refused with what to type.
    with pytest.raises(ProjectError, match=r"ambiguous: a comma before three digits .*type -?\d+ "):
        units.parse(text, "Hz", "freq")


@pytest.mark.parametrize("text", ["1,000.5", "1.000,5", "1,000,000", "1.2.3"])
def test_two_separators_are_refused(text):
    with pytest.raises(ProjectError, match="more than one separator"):
        units.parse(text, "Hz", "freq")


@pytest.mark.parametrize("text, value", [("1,5", 1.5), ("2,25k", 2250.0), ("1,0001", 1.0001),
                                         ("1.000", 1.0)])
def test_a_decimal_comma_that_is_not_ambiguous_still_reads(text, value):
    assert units.parse(text, "Hz") == pytest.approx(value, rel=1e-12)  # float rounding only


def test_a_frequency_far_below_the_range_gets_a_note_and_a_guess():
    note = units.outside_range_note(2.0, 20.0, 20000.0)
    # log2(20 / 2) = 3.32 octaves below f_min (plain arithmetic).
    assert note == ("2 Hz is 3.3 octaves below the analysed range (20 Hz .. 20 kHz); "
                    "did you mean 2 kHz?")


def test_a_frequency_within_two_octaves_of_the_range_gets_no_note():
    assert units.outside_range_note(15.0, 20.0, 20000.0) is None   # a subsonic highpass
    assert units.outside_range_note(5.0, 20.0, 20000.0) is None    # exactly 2 octaves
    assert units.outside_range_note(40000.0, 20.0, 20000.0) is None


def test_a_frequency_far_above_the_range_gets_a_note():
    assert "octaves above" in units.outside_range_note(90000.0, 20.0, 20000.0)


def test_ms_to_samples_is_the_decimal_product_rounded_once():
    # Reference: Python's fractions (exact rational arithmetic) on the numbers as written.
    from fractions import Fraction

    from hypothesis import given, strategies as st

    @given(st.floats(0.0, 1000.0, allow_nan=False), st.sampled_from([44100.0, 48000.0,
                                                                      88200.0, 96000.0,
                                                                      192000.0, 22050.0]))
    def check(ms, fs):
        exact = Fraction(repr(ms)) * Fraction(repr(fs)) / 1000
        got = units.ms_to_samples(ms, fs)
        assert got == float(exact)                       # correctly rounded
        assert abs(got - ms * fs / 1000.0) <= 2 * math.ulp(got) + 1e-300   # plain: 1-2 ulp

    check()


def test_ms_to_samples_prints_as_typed():
    # 0.04837 ms at 48 kHz: plain float arithmetic gives 2.3217600000000003.
    assert repr(units.ms_to_samples(0.04837, 48000)) == "2.32176"
    assert repr(units.ms_to_samples(0.01753, 96000)) == "1.68288"
