"""The response text format: layout, round trip and tolerant reading.

Sources: the common plain-text frequency-response layout (frequency, magnitude, phase
columns; comment lines): common practice, no published standard.
"""

import numpy as np
import pytest

from planner.dsp.response_text import format_response_text, parse_response_text
from planner.errors import CrossplanError


# ---------------------------------------------------------------- text

def test_format_response_text_layout():
    text = format_response_text([1000.0, 2000.0], [-3.0103, 0.5], [-90.0, 12.25],
                                header_lines=["woofer, 1 m", "gated 7 ms"])
    assert text == ("# woofer, 1 m\n# gated 7 ms\n"
                    "1000  -3.0103  -90.000\n2000  0.5000  12.250\n")


def test_older_star_comments_still_read():
    # Files written by earlier versions (and by other tools) mark comments with '*'.
    r = parse_response_text("* woofer, 1 m\n* gated 7 ms\n1000 -3 -90\n2000 0.5 12.25\n")
    assert r.header == ["woofer, 1 m", "gated 7 ms"]
    np.testing.assert_array_equal(r.freqs_hz, [1000.0, 2000.0])


def test_format_parse_round_trip():
    f = np.geomspace(20, 20000, 50)
    rng = np.random.default_rng(2)
    m, p = rng.uniform(-40, 10, 50), rng.uniform(-180, 180, 50)
    r = parse_response_text(format_response_text(f, m, p, ["a", "b"]))
    # Written to 8 significant digits, 0.0001 dB, 0.001 deg: half a step each.
    np.testing.assert_allclose(r.freqs_hz, f, rtol=5e-8)
    np.testing.assert_allclose(r.mag_db, m, atol=5e-5 + 1e-12)
    np.testing.assert_allclose(r.phase_deg, p, atol=5e-4 + 1e-12)
    assert r.header == ["a", "b"]


def test_parse_tolerates_commas_tabs_titles_and_no_phase():
    text = ("# exported\n\nFreq(Hz), SPL(dB)\n"
            "20,\t-1.5\n"
            "  100   -0.25  \n"
            "1e3;0\n")
    r = parse_response_text(text)
    np.testing.assert_array_equal(r.freqs_hz, [20, 100, 1000])
    np.testing.assert_array_equal(r.mag_db, [-1.5, -0.25, 0.0])
    assert r.phase_deg is None and r.header == ["exported", "Freq(Hz), SPL(dB)"]


def test_parse_extra_columns_ignored():
    r = parse_response_text("100 1 2 3 4\n200 1 2 3 4\n")
    np.testing.assert_array_equal(r.phase_deg, [2, 2])


def test_parse_mixed_column_counts_raise():
    with pytest.raises(CrossplanError, match=r"line 2: has 2 columns where earlier lines have 3"):
        parse_response_text("100 0 0\n200 0\n")


def test_parse_non_increasing_frequency_raises():
    with pytest.raises(CrossplanError, match=r"line 3: frequency 150 Hz must be above the previous line's 200 Hz"):
        parse_response_text("100 0\n200 0\n150 0\n")


def test_parse_garbage_after_data_raises():
    with pytest.raises(CrossplanError, match=r"line 2: expected numbers 'freq_hz mag_db \[phase_deg\]', got 'oops'"):
        parse_response_text("100 0\noops\n")


def test_parse_empty_raises():
    with pytest.raises(CrossplanError, match=r"text: no data lines"):
        parse_response_text("* only a comment\n")


def test_parse_nonpositive_frequency_raises():
    with pytest.raises(CrossplanError, match=r"line 1: frequency 0 Hz must be above 0"):
        parse_response_text("0 1\n")


# The array-speed reader must give exactly what the line-by-line reader gives, or leave
# the text to it: compared on random texts (good rows mixed with broken ones).
from hypothesis import HealthCheck, example, given, settings  # noqa: E402

from planner.dsp import response_text as _rt  # noqa: E402
from tests.test_fuzz_pipeline import measurement_texts  # noqa: E402


def _slow(text, monkeypatch_fast):
    try:
        with monkeypatch_fast():
            return _rt.parse_response_text(text)
    except CrossplanError as e:
        return str(e)


@settings(max_examples=300, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(text=measurement_texts())
@example(text="5 0 0\n,")          # a last line of one separator is not a blank line
@example(text="5 0\n6 1\n;\n")
def test_fast_reader_agrees_with_the_line_reader(text):
    import contextlib

    @contextlib.contextmanager
    def no_fast():
        real = _rt._fast_parse
        _rt._fast_parse = lambda t: None
        try:
            yield
        finally:
            _rt._fast_parse = real

    want = _slow(text, no_fast)
    try:
        got = _rt.parse_response_text(text)
    except CrossplanError as e:
        got = str(e)
    if isinstance(want, str):
        assert got == want
    else:
        assert not isinstance(got, str)
        np.testing.assert_array_equal(got.freqs_hz, want.freqs_hz)
        np.testing.assert_array_equal(got.mag_db, want.mag_db)
        assert (got.phase_deg is None) == (want.phase_deg is None)
        if want.phase_deg is not None:
            np.testing.assert_array_equal(got.phase_deg, want.phase_deg)
        assert got.header == want.header


def test_a_large_clean_file_takes_the_fast_reader():
    f = np.geomspace(10, 20000, 2000)
    text = _rt.format_response_text(f, 80 + 0 * f, -f / 100, ["title"])
    assert _rt._fast_parse(text) is not None
