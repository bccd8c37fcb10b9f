"""Plot helpers: downsampling keeps extremes; ticks are round; NO_COLOR is honoured."""

from pathlib import Path

import numpy as np

from planner.present import plots


def test_downsample_keeps_a_narrow_notch():
    f = np.geomspace(20, 20000, 4000)
    y = np.zeros_like(f)
    y[2000] = -40.0  # one-point notch
    x2, y2 = plots.downsample_log(f, y, 100)
    assert len(x2) <= 103 and y2.min() == -40.0


def test_nice_ticks_are_round_and_inside():
    t = plots.nice_ticks(-42, 6, 6)
    assert t == [-40.0, -30.0, -20.0, -10.0, 0.0]
    assert plots.nice_ticks(0, 1.3, 4) == [0.0, 0.5, 1.0]


def test_freq_plot_without_color_has_no_escape_codes():
    f = np.geomspace(20, 20000, 300)
    s = plots.freq_plot([plots.Series("a", f, -np.log10(f))], width=60, height=15, color=False)
    assert "\x1b[" not in s
    assert max(len(line) for line in s.splitlines()) <= 60


def test_no_color_env(monkeypatch):
    monkeypatch.setenv("NO_COLOR", "1")
    assert plots.use_color() is False
    monkeypatch.delenv("NO_COLOR")
    assert plots.use_color() is True


# -- the braille renderer ---------------------------------------------------------------------
# The expected characters are computed here from the Unicode Standard's braille
# patterns block (chapter 21.1; code chart U+2800-U+28FF): a cell is U+2800 plus
# 2**(n - 1) for each raised dot n, with dots 1, 2, 3 down the left column, 4, 5, 6
# down the right column, and 7 (left), 8 (right) in a fourth row below them.

import re

import pytest

#: (row, column) of each dot number inside a cell, per the standard.
DOT_AT = {1: (0, 0), 2: (1, 0), 3: (2, 0), 4: (0, 1), 5: (1, 1), 6: (2, 1), 7: (3, 0), 8: (3, 1)}
NUMBER_OF = {rc: n for n, rc in DOT_AT.items()}


def braille_char(dots_in_cell) -> str:
    """The pattern with the given (row, column) dots raised, from the dot numbering above."""
    return chr(0x2800 + sum(2 ** (NUMBER_OF[rc] - 1) for rc in set(dots_in_cell)))


def test_braille_glyphs_from_the_standard():
    # Spot checks against the code chart: U+2801 is dot 1, U+2880 is dot 8, U+28FF all eight.
    assert braille_char([(0, 0)]) == "\u2801" == "⠁"
    assert braille_char([(3, 1)]) == "\u2880" == "⢀"
    assert braille_char(DOT_AT.values()) == "\u28ff" == "⣿"


@pytest.mark.parametrize("seed", range(5))
def test_braille_cells_match_an_independent_packing(seed):
    rng = np.random.default_rng(seed)
    rows, cols = 7, 13
    xd = rng.integers(-2, 2 * cols + 2, 300)     # some outside: dropped
    yd = rng.integers(-2, 4 * rows + 2, 300)
    got = plots.braille_cells(xd, yd, rows, cols)
    expected = {}
    for x, y in zip(xd, yd):
        if 0 <= x < 2 * cols and 0 <= y < 4 * rows:
            expected.setdefault((y // 4, x // 2), []).append((y % 4, x % 2))
    for r in range(rows):
        for c in range(cols):
            want = braille_char(expected[(r, c)]) if (r, c) in expected else "\u2800"
            assert chr(0x2800 + int(got[r, c])) == want, (r, c)


def _row_text(canvas, r):
    """The plot-area cells of plot row ``r`` (without the y labels)."""
    line = "".join(t for t, _ in canvas.lines[canvas.top + r])
    return line[canvas.left:canvas.left + canvas.cols]


def _style_at(canvas, r, c):
    pos = 0
    for text, style in canvas.lines[canvas.top + r]:
        if pos <= canvas.left + c < pos + len(text):
            return style
        pos += len(text)
    raise AssertionError("cell outside the line")


def _dot(v, lo, hi, n):
    """Dot index of value v on [lo, hi] spread over n dots, nearest (the stated convention)."""
    return int(np.floor((v - lo) / (hi - lo) * (n - 1) + 0.5))


def test_a_level_at_the_top_of_the_range_raises_dots_1_and_4_along_the_top_row():
    f = np.array([20.0, 20000.0])
    c = plots.freq_canvas([plots.Series("a", f, np.array([6.0, 6.0]))], width=60, height=16,
                          ylim=(-40.0, 6.0), color=True)
    assert _row_text(c, 0) == braille_char([(0, 0), (0, 1)]) * c.cols   # U+2809


@pytest.mark.parametrize("f_hz, y_db", [(31.5, -3.0), (440.0, -17.2), (1000.0, -25.0),
                                        (7300.0, -38.9), (19000.0, -0.4)])
def test_a_point_lands_on_its_cell_and_dot(f_hz, y_db):
    # Band "a" spans the axis at the top of the range; band "b" is one point. Its cell
    # and dot follow from log10(f) spread over the columns' dots and y over the rows'.
    lo, hi, y0, y1 = 20.0, 20000.0, -40.0, 6.0
    series = [plots.Series("a", np.array([lo, hi]), np.array([y1, y1])),
              plots.Series("b", np.array([f_hz]), np.array([y_db]))]
    c = plots.freq_canvas(series, width=72, height=20, ylim=(y0, y1), color=True)
    xd = _dot(np.log10(f_hz), np.log10(lo), np.log10(hi), 2 * c.cols)
    yd = 4 * c.rows - 1 - _dot(y_db, y0, y1, 4 * c.rows)
    r, col = yd // 4, xd // 2
    assert _row_text(c, r)[col] == braille_char([(yd % 4, xd % 2)])
    assert _style_at(c, r, col) == plots.COLORS[1]
    # Nothing else of band b anywhere below the top row.
    others = [(rr, cc) for rr in range(1, c.rows) for cc in range(c.cols)
              if _row_text(c, rr)[cc] not in " ┊┈┼" and (rr, cc) != (r, col)]
    assert others == []


def test_lines_join_points_without_gaps_and_not_across_nan():
    f = np.geomspace(20, 20000, 9)
    y = np.array([0, -40, 0, -40, np.nan, -40, 0, -40, 0], float)
    c = plots.freq_canvas([plots.Series("a", f, y)], width=60, height=14, ylim=(-40, 0),
                          color=False)
    cols_hit = [any(_row_text(c, r)[k] != " " for r in range(c.rows)) for k in range(c.cols)]
    # The NaN between points 4 and 6 leaves the columns strictly between them empty.
    x4 = _dot(np.log10(f[3]), np.log10(20), np.log10(20000), 2 * c.cols) // 2
    x6 = _dot(np.log10(f[5]), np.log10(20), np.log10(20000), 2 * c.cols) // 2
    assert not any(cols_hit[x4 + 1:x6])
    assert all(cols_hit[:x4 + 1]) and all(cols_hit[x6:])


def test_no_color_gives_each_band_its_marker_and_the_sum_braille():
    f = np.geomspace(20, 20000, 400)
    bands = [plots.Series(f"b{k}", f, -3.0 * k * np.ones_like(f)) for k in range(3)]
    s = plots.Series("sum", f, -20 * np.ones_like(f), bold=True)
    c = plots.freq_canvas([*bands, s], width=60, height=20, ylim=(-30, 3), color=False)
    text = c.plain()
    assert "\x1b" not in text and all(st is None for line in c.lines for _, st in line)
    marks = plots.plain_markers([*bands, s])
    for k in range(3):
        row = _dot(-3.0 * k, -30, 3, 4 * c.rows)
        assert set(_row_text(c, (4 * c.rows - 1 - row) // 4)) == {marks[k]}
    assert len(set(marks[:3])) == 3 and marks[3] == "⣿"
    legend = text.splitlines()[-1]
    assert legend.startswith(f"{marks[0]} b0  {marks[1]} b1  {marks[2]} b2")
    sum_row = _row_text(c, (4 * c.rows - 1 - _dot(-20, -30, 3, 4 * c.rows)) // 4)
    assert all(0x2800 < ord(ch) <= 0x28FF for ch in sum_row)


def test_color_plot_codes_and_sizes():
    f = np.geomspace(20, 20000, 300)
    series = [plots.Series("a", f, -np.log10(f)), plots.Series("b", f, np.log10(f))]
    s = plots.freq_plot(series, width=64, height=18, color=True, title="t")
    lines = s.splitlines()
    assert len(lines) == 18
    plain = re.sub(r"\x1b\[[0-9;]*m", "", s)
    assert max(len(line) for line in plain.splitlines()) <= 64
    assert "\x1b[34m" in s and "\x1b[33m" in s      # blue and yellow (ECMA-48 SGR 34, 33)


def test_decade_ticks_sit_on_their_columns():
    f = np.geomspace(20, 20000, 50)
    c = plots.freq_canvas([plots.Series("a", f, np.zeros_like(f))], width=80, height=12,
                          ylim=(-1, 1), color=False)
    axis = "".join(t for t, _ in c.lines[c.top + c.rows])[c.left:]
    for f_tick in (100.0, 1000.0, 10000.0):
        col = _dot(np.log10(f_tick), np.log10(20), np.log10(20000), 2 * c.cols) // 2
        assert axis[col] == "┬", f_tick
    labels = "".join(t for t, _ in c.lines[c.top + c.rows + 1])
    assert "100" in labels and "1k" in labels and "10k" in labels
    # The unit ends the tick row, or the legend row when the last tick label leaves no room.
    assert labels.rstrip().endswith("Hz") or c.plain().rstrip().endswith("Hz")


def test_plain_markers_tell_bands_apart_by_letter():
    from planner.present.plots import Series, plain_markers
    x = np.array([100.0, 1000.0])
    s = [Series(n, x, x) for n in ("woofer", "mid", "midhigh", "tweeter")] + \
        [Series("sum", x, x, bold=True)]
    assert plain_markers(s) == ["w", "m", "i", "t", "⣿"]


def test_plot_to_a_file_writes_no_colour_codes(capsys):
    from planner.cli import main
    assert main(["plot", str(Path(__file__).parents[1] / "presets" / "three-way.json"), "--width", "60",
                 "--height", "14"]) == 0
    out = capsys.readouterr().out
    assert "\x1b[" not in out                 # stdout is not a terminal here
    assert "w woofer" in out and "t tweeter" in out


def test_nice_ticks_use_the_1_2_5_series_and_fill_a_small_range():
    # Steps of 1, 2 or 5 x 10^k (the "nice numbers" of P. Heckbert, Graphics Gems, 1990;
    # cited from memory). A +/-0.55 dB preview with room for 3 labels gets the limits
    # +/-0.5 and 0, not 0 alone.
    assert plots.nice_ticks(-0.55, 0.55, 3) == [-0.5, 0.0, 0.5]
    assert plots.nice_ticks(0, 1, 5) == [0.0, 0.5, 1.0]
    for lo, hi, n in ((-42, 6, 4), (-0.3, 0.7, 6), (20, 95, 5), (-1e-3, 2e-3, 4)):
        t = plots.nice_ticks(lo, hi, n)
        assert 1 <= len(t) <= n and all(lo - 1e-12 <= x <= hi + 1e-12 for x in t)
        step = t[1] - t[0] if len(t) > 1 else None
        if step:
            mant = step / 10 ** np.floor(np.log10(step))
            assert min(abs(mant - m) for m in (1, 2, 5)) < 1e-9, (lo, hi, n, t)


def test_series_on_one_grid_draw_as_series_on_their_own_copies():
    # The bins of the log-frequency downsampling are made once per grid and shared by the
    # series on it: the picture must be the one each series gives with a grid of its own.
    rng = np.random.default_rng(5)
    f = np.geomspace(20.0, 20000.0, 3000)
    ys = [rng.normal(0.0, 3.0, f.size) - 10.0 * k for k in range(4)]
    ys[2][1234] = -60.0          # a narrow notch, which the downsampling must keep
    shared = [plots.Series(f"s{k}", f, y) for k, y in enumerate(ys)]
    own = [plots.Series(f"s{k}", f.copy(), y) for k, y in enumerate(ys)]
    a = plots.freq_plot(shared, width=70, height=20, color=False)
    b = plots.freq_plot(own, width=70, height=20, color=False)
    assert a == b
    x, y = plots.downsample_log(f, ys[2], 140)
    assert -60.0 in y and len(x) < 300
