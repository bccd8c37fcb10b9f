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


def test_plain_markers_tell_bands_apart_by_letter():
    from planner.present.plots import Series, plain_markers
    x = np.array([100.0, 1000.0])
    s = [Series(n, x, x) for n in ("woofer", "mid", "midhigh", "tweeter")] + \
        [Series("sum", x, x, bold=True)]
    assert plain_markers(s) == ["w", "m", "i", "t", "hd"]


def test_plot_to_a_file_writes_no_colour_codes(capsys):
    from planner.cli import main
    assert main(["plot", str(Path(__file__).parents[1] / "presets" / "three-way.json"), "--width", "60",
                 "--height", "14"]) == 0
    out = capsys.readouterr().out
    assert "\x1b[" not in out                 # stdout is not a terminal here
    assert "ww woofer" in out and "tt tweeter" in out
