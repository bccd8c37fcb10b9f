"""Text plots of responses, drawn with braille dots (presentation only: arrays in, text out).

A plot is a :class:`Canvas`: lines of runs of text, each run with a style
name (a colour, or ``None`` for the terminal's default). :func:`freq_plot`
and :func:`time_plot` return it as a string (ANSI colour codes only when
colour is on); the editor turns the runs into styled text for its widget
directly, without printing and re-parsing escape codes.

Drawing is vectorised with numpy. Each character cell of the plot area holds
2 x 4 dots of the Unicode braille patterns block (U+2800 plus one bit per
dot; dots 1-3 go down the left column, 4-6 down the right, 7 and 8 are the
bottom row, left and right: The Unicode Standard, chapter 21.1, "Braille
Patterns"). A series is mapped to dot coordinates, consecutive points are
joined by straight runs of dots, and the dots of each cell are packed into
its pattern. With colour, each band has a colour and a cell takes the colour
of the last series drawn through it (the emphasised sum is drawn last).
Without colour, bands are told apart by a marker character of their own
(one per cell they pass through) and the sum is drawn in braille. The axes,
ticks and legend depend only on the plot's size and ranges and are cached.

The frequency axis is logarithmic: ``log10(f)`` is spread evenly over the
columns and the ticks are at 1-2-5 steps of each decade.
"""

from __future__ import annotations

import os
from dataclasses import dataclass
from functools import lru_cache
from typing import Sequence

import numpy as np

from planner.defaults import PLOT_VIEWS as VIEWS, TIME_VIEWS

__all__ = ["Series", "Canvas", "freq_plot", "time_plot", "freq_canvas", "time_canvas",
           "braille_cells", "VIEWS", "TIME_VIEWS", "use_color", "downsample_log", "nice_ticks",
           "BRAILLE_BASE", "MARKERS", "COLORS", "plain_markers"]


_FREQ_TICKS = (10, 20, 50, 100, 200, 500, 1e3, 2e3, 5e3, 1e4, 2e4, 5e4, 1e5)
#: Colour of each band, in order (names understood by Rich and by :data:`_SGR`).
COLORS = ("blue", "yellow", "green", "magenta", "cyan", "red", "bright_blue", "bright_green")
#: Marker of each band when there is no colour (one character per cell).
MARKERS = ("o", "+", "x", "*", "#", "%", "@", "=")
_SUM_STYLE = "bold white"
_GUIDE_STYLE = "bright_black"
#: SGR parameters of the style names used here (ECMA-48, "select graphic rendition").
_SGR = {"blue": "34", "yellow": "33", "green": "32", "magenta": "35", "cyan": "36", "red": "31",
        "bright_blue": "94", "bright_green": "92", "bold white": "1;37", "bright_black": "90"}
#: First code point of the braille patterns block (no dot raised).
BRAILLE_BASE = 0x2800
#: Bit of each dot of a cell, ``[row][column]`` (dot numbers 1, 4 / 2, 5 / 3, 6 / 7, 8).
_DOT_BITS = np.array([[0x01, 0x08], [0x02, 0x10], [0x04, 0x20], [0x40, 0x80]], np.uint8)
#: The same as bit numbers (0 for 0x01 ... 7 for 0x80).
_DOT_BIT_INDEX = np.log2(_DOT_BITS).astype(np.intp)
_VLINE, _HLINE, _CROSS = ord("┊"), ord("┈"), ord("┼")


@dataclass(frozen=True)
class Series:
    """One line of a plot: a label, x and y values, and whether it is the emphasised sum."""

    label: str
    x: np.ndarray
    y: np.ndarray
    bold: bool = False


Run = tuple[str, "str | None"]


@dataclass(frozen=True)
class Canvas:
    """A drawn plot: ``lines`` of runs ``(text, style)``; ``style`` None is plain text.

    ``top``, ``left``, ``rows`` and ``cols`` place the plot area (character
    cells); ``x_range`` and ``y_range`` are the values at its edges (``x`` in
    ``log10(Hz)`` on a frequency plot).
    """

    lines: tuple[tuple[Run, ...], ...]
    top: int
    left: int
    rows: int
    cols: int
    x_range: tuple[float, float]
    y_range: tuple[float, float]

    def plain(self) -> str:
        """The plot as plain text (no escape codes)."""
        return "\n".join("".join(t for t, _ in line).rstrip() for line in self.lines)

    def ansi(self) -> str:
        """The plot with ANSI colour codes around the styled runs."""
        out = []
        for line in self.lines:
            out.append("".join(f"\x1b[{_SGR[s]}m{t}\x1b[0m" if s else t for t, s in line).rstrip())
        return "\n".join(out)

    def text(self, color: bool) -> str:
        """:meth:`ansi` with colour, else :meth:`plain`."""
        return self.ansi() if color else self.plain()


def use_color(color: bool | None = None) -> bool:
    """Colour unless asked not to or NO_COLOR is set (https://no-color.org)."""
    if color is not None:
        return color
    return not os.environ.get("NO_COLOR")


def _tick_label(f: float) -> str:
    return f"{f / 1000:g}k" if f >= 1000 else f"{f:g}"


def downsample_log(x: np.ndarray, y: np.ndarray, n: int) -> tuple[np.ndarray, np.ndarray]:
    """Keep about ``n`` points, evenly spaced in log frequency, keeping each bin's extreme.

    Picking, per bin, the point that deviates most from the bin's mean keeps
    narrow notches and peaks visible at low resolution.
    """
    x = np.asarray(x, float)
    y = np.asarray(y, float)
    if len(x) <= n:
        return x, y
    keep = _extremes_kept(_log_bins(x, n), y)
    return x[keep], y[keep]


def _log_bins(x: np.ndarray, n: int) -> tuple:
    """The bins of :func:`downsample_log` for ``x`` (``len(x) > n``): each point's bin, and
    for a sorted ``x`` the runs of points in the same bin. Series on one grid share them."""
    lx = np.log10(x)
    edges = np.linspace(lx[0], lx[-1], n + 1)
    idx = np.clip(np.searchsorted(edges, lx, side="right") - 1, 0, n - 1)
    counts = np.bincount(idx, minlength=n)
    runs = None
    if np.all(idx[1:] >= idx[:-1]):
        new_run = np.r_[True, idx[1:] != idx[:-1]]
        runs = (np.flatnonzero(new_run), np.cumsum(new_run) - 1)
    return n, idx, counts, runs


def _extremes_kept(bins: tuple, y: np.ndarray) -> np.ndarray:
    """Indices :func:`downsample_log` keeps of ``y``: per bin, the point farthest from the
    bin's mean (vectorised), and the first and last points."""
    n, idx, counts, runs = bins
    yz = np.nan_to_num(y)
    sums = np.bincount(idx, weights=yz, minlength=n)
    means = np.divide(sums, counts, out=np.zeros(n), where=counts > 0)
    dev = np.abs(yz - means[idx])
    if runs is not None:
        # Sorted x (a frequency grid): the bins are runs, so the first sample of
        # each run at its run's largest deviation is found without sorting.
        starts, run = runs
        top = np.maximum.reduceat(dev, starts)
        at_top = np.flatnonzero(dev == top[run])
        keep = at_top[np.r_[True, run[at_top][1:] != run[at_top][:-1]]]
    else:
        order = np.lexsort((-dev, idx))
        first = np.ones(len(order), bool)
        first[1:] = idx[order][1:] != idx[order][:-1]
        keep = np.sort(order[first])
    return np.unique(np.concatenate([[0], keep, [len(y) - 1]]))


def nice_ticks(lo: float, hi: float, max_ticks: int) -> list[float]:
    """Round tick values (steps of 1, 2 or 5 x 10^k) inside [lo, hi], at most ``max_ticks``."""
    span = hi - lo
    if not np.isfinite(span) or span <= 0 or max_ticks < 2:
        return [lo, hi] if np.isfinite(span) else []
    raw = span / (max_ticks - 1)
    mag = 10.0 ** np.floor(np.log10(raw))
    # The finest round step whose ticks inside [lo, hi] are at most max_ticks: a step a
    # little under span / (max_ticks - 1) still fits when the range does not start on one
    # (+/-0.55 takes -0.5, 0, 0.5 for 3 ticks).
    for m in (0.5, 1, 2, 5, 10, 20):
        step = m * mag
        first = np.ceil(lo / step - 1e-9) * step
        ticks = np.arange(first, hi + step * 1e-9, step)
        if len(ticks) <= max_ticks:
            break
    return [float(round(t, 10)) + 0.0 for t in ticks]


def _tick_text(v: float) -> str:
    return f"{v:g}"


# -- dots -----------------------------------------------------------------------------------

def braille_cells(xd: np.ndarray, yd: np.ndarray, rows: int, cols: int) -> np.ndarray:
    """Pack dots into braille cells: the dot bits (0-255) of each of ``rows x cols`` cells.

    ``xd`` (0 to ``2 * cols - 1``, left to right) and ``yd`` (0 to
    ``4 * rows - 1``, top to bottom) are integer dot coordinates; dots outside
    are dropped. The character of a cell is ``chr(BRAILLE_BASE + bits)``.
    """
    xd = np.asarray(xd, np.intp)
    yd = np.asarray(yd, np.intp)
    ok = (xd >= 0) & (xd < 2 * cols) & (yd >= 0) & (yd < 4 * rows)
    xd, yd = xd[ok], yd[ok]
    # One flag per (cell, bit); packbits (least significant bit first) makes each cell's byte.
    flags = np.zeros(rows * cols * 8, bool)
    bit = _DOT_BIT_INDEX[yd % 4, xd % 2]
    flags[((yd // 4) * cols + xd // 2) * 8 + bit] = True
    return np.packbits(flags.reshape(-1, 8), axis=1, bitorder="little").reshape(rows, cols)


def _scale(v: np.ndarray, lo: float, hi: float, n: int) -> np.ndarray:
    """Dot index 0 .. n - 1 of values ``v`` on [lo, hi] (rounded to the nearest dot)."""
    if hi <= lo:
        return np.zeros(len(v), np.intp)
    return np.rint((v - lo) / (hi - lo) * (n - 1)).astype(np.intp)


def _line_dots(xd: np.ndarray, yd: np.ndarray, joined: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """The dots of straight runs between consecutive points (where ``joined``), and the points.

    Each run takes ``max(|dx|, |dy|)`` steps, so it leaves no gap in either
    direction; all runs are made at once (no loop over points).
    """
    if len(xd) < 2:
        return xd, yd
    dx, dy = np.diff(xd), np.diff(yd)
    steps = np.where(joined, np.maximum(np.abs(dx), np.abs(dy)), 0)
    total = int(steps.sum())
    if total == 0:
        return xd, yd
    seg = np.repeat(np.arange(len(steps)), steps)
    start = np.cumsum(steps) - steps
    t = (np.arange(total) - start[seg] + 1) / steps[seg]
    lx = xd[seg] + np.rint(dx[seg] * t).astype(np.intp)
    ly = yd[seg] + np.rint(dy[seg] * t).astype(np.intp)
    return np.concatenate([xd, lx]), np.concatenate([yd, ly])


def _series_dots(x: np.ndarray, y: np.ndarray, xr, yr, rows: int, cols: int):
    """Dot coordinates of one series (x already on the axis' scale), NaN gaps left open."""
    ok = np.isfinite(x) & np.isfinite(y)
    if not ok.any():
        return np.zeros(0, np.intp), np.zeros(0, np.intp)
    idx = np.flatnonzero(ok)
    joined = np.diff(idx) == 1          # do not join across a NaN gap
    xd = _scale(x[idx], xr[0], xr[1], 2 * cols)
    yd = (4 * rows - 1) - _scale(np.clip(y[idx], yr[0], yr[1]), yr[0], yr[1], 4 * rows)
    return _line_dots(xd, yd, joined)


# -- frame (axes, ticks, legend): cached, it depends only on sizes and ranges ---------------

@dataclass(frozen=True)
class _Frame:
    title: str | None
    left_labels: tuple[str, ...]      # one per plot row, with the axis character
    x_axis: str
    tick_row: str
    legend: tuple[Run, ...]
    top: int
    left: int
    rows: int
    cols: int


@lru_cache(maxsize=64)
def _frame(width: int, height: int, title: str | None, ylabel: str, xlabel: str,
           y_range: tuple[float, float], y_ticks: tuple[float, ...],
           x_ticks: tuple[tuple[float, str], ...], x_range: tuple[float, float],
           legend: tuple[tuple[str, str, str | None], ...]) -> _Frame:
    top = 1 if title else 0
    rows = max(1, height - top - 3)               # x axis, tick labels, legend
    labels = [_tick_text(t) for t in y_ticks]
    margin = max([len(s) for s in labels] + [len(ylabel), 1])
    left = margin + 1
    cols = max(1, width - left)
    # y ticks: the row of each value, first one wins a row.
    row_label = [""] * rows
    ydots = 4 * rows
    for t, s in zip(y_ticks, labels):
        r = int((ydots - 1 - _scale(np.array([t]), *y_range, ydots)[0]) // 4)
        if 0 <= r < rows and not row_label[r]:
            row_label[r] = s
    left_labels = tuple(f"{s:>{margin}}" + ("┤" if s else "│") for s in row_label)
    # x ticks: the column of each value; a label only where it does not touch the previous one.
    axis = ["─"] * cols
    ticks = [" "] * width
    last_end = len(ylabel) - 1 if ylabel else -1     # the unit of y opens the row
    for v, s in x_ticks:
        c = int(_scale(np.array([v]), *x_range, 2 * cols)[0] // 2)
        if not 0 <= c < cols:
            continue
        axis[c] = "┬"
        start = min(max(left + c - len(s) // 2, 0), width - len(s))
        if start > last_end + 1 and start + len(s) <= width:
            ticks[start:start + len(s)] = s
            last_end = start + len(s) - 1
    unit_on_legend = ""
    if xlabel and last_end + 1 + len(xlabel) < width:
        ticks[width - len(xlabel):] = xlabel
    elif xlabel:
        unit_on_legend = xlabel       # no room after the last tick label: end of the legend row
    ticks[:len(ylabel)] = ylabel
    runs: list[Run] = []
    used = 0
    room = width - (len(unit_on_legend) + 2 if unit_on_legend else 0)
    for mark, label, style in legend:
        piece = f"{mark} {label}"
        gap = "  " if runs else ""
        if used + len(gap) + len(piece) > room:
            break
        if gap:
            runs.append((gap, None))
        runs.append((mark, style))
        runs.append((f" {label}", None))
        used += len(gap) + len(piece)
    if unit_on_legend:
        runs.append((" " * (width - used - len(unit_on_legend)) + unit_on_legend, None))
    return _Frame(title[:width] if title else None, left_labels,
                  " " * margin + "└" + "".join(axis), "".join(ticks), tuple(runs), top, left,
                  rows, cols)


# -- drawing --------------------------------------------------------------------------------

def plain_markers(series: Sequence[Series]) -> list[str]:
    """Markers that tell the series apart without colour: a letter per band (the first
    letter of its name not taken yet, else a digit, else one of :data:`MARKERS`), and
    braille for the bold sum. The legend shows each mark beside its label."""
    out, taken = [], set()
    for k, s in enumerate(series):
        if s.bold:
            out.append("⣿")
            continue
        pick = next((ch for ch in s.label.lower() if ch.isalpha() and ch not in taken), None)
        pick = pick or next((str(d) for d in range(10) if str(d) not in taken),
                            MARKERS[k % len(MARKERS)])
        taken.add(pick)
        out.append(pick)
    return out


def _style_and_mark(i: int, s: Series, color: bool, plain: Sequence[str]) -> tuple[str, str | None]:
    """Legend mark and style of series ``i`` (``bold`` is the sum: white, braille)."""
    if color:
        return "⣿", (_SUM_STYLE if s.bold else COLORS[i % len(COLORS)])
    return plain[i], None


def _draw(series_xy, styles, frame: _Frame, x_range, y_range, color: bool,
          vlines: Sequence[float], hline: float | None) -> Canvas:
    """Put the series on the frame: braille (or markers), guides, and the runs of each row.

    All series' dots are placed at once; a cell belongs to the last series
    through it (its colour, or its marker), and shows the braille dots of
    every braille series through it.
    """
    rows, cols = frame.rows, frame.cols
    n_cells = rows * cols
    xs, ys, ks = [], [], []
    for k, (x, y) in enumerate(series_xy):
        xd, yd = _series_dots(x, y, x_range, y_range, rows, cols)
        xs.append(xd)
        ys.append(yd)
        ks.append(np.full(len(xd), k, np.intp))
    xd, yd, kd = (np.concatenate(v) if v else np.zeros(0, np.intp) for v in (xs, ys, ks))
    ok = (xd >= 0) & (xd < 2 * cols) & (yd >= 0) & (yd < 4 * rows)
    xd, yd, kd = xd[ok], yd[ok], kd[ok]
    cell = (yd // 4) * cols + xd // 2
    owner = np.full(n_cells, -1, np.intp)
    np.maximum.at(owner, cell, kd)                # the last series drawn owns the cell
    is_braille = np.array([color or m == "⣿" for m, _ in styles] + [False], bool)
    marks = np.array([0 if (color or m == "⣿") else ord(m) for m, _ in styles] + [0], np.uint32)
    b = is_braille[kd]
    codes = braille_cells(xd[b], yd[b], rows, cols).ravel()
    chars = np.full(n_cells, ord(" "), np.uint32)
    guide = np.zeros((rows, cols), bool)
    for v in vlines:
        if x_range[0] <= v <= x_range[1]:
            c = int(_scale(np.array([v]), *x_range, 2 * cols)[0] // 2)
            guide[:, c] = True
    chars[guide.ravel()] = _VLINE
    if hline is not None and y_range[0] <= hline <= y_range[1]:
        r = int((4 * rows - 1 - _scale(np.array([hline]), *y_range, 4 * rows)[0]) // 4)
        chars[r * cols:(r + 1) * cols] = np.where(guide[r], _CROSS, _HLINE)
        guide[r] = True
    drawn = owner >= 0
    own_braille = drawn & is_braille[owner]
    chars = np.where(own_braille & (codes > 0), BRAILLE_BASE + codes.astype(np.uint32), chars)
    chars = np.where(drawn & ~is_braille[owner], marks[owner], chars)
    drawn = (own_braille & (codes > 0)) | (drawn & ~is_braille[owner])
    chars = chars.reshape(rows, cols)
    row_text = chars.view(f"<U{cols}").ravel()
    lines: list[tuple[Run, ...]] = []
    if frame.title is not None:
        lines.append(((frame.title, None),))
    if not color:
        for r in range(rows):
            lines.append(((frame.left_labels[r], None), (str(row_text[r]).ljust(cols), None)))
    else:
        # Style of each cell: its series' colour; guides grey; empty cells plain.
        palette = [st for _, st in styles] + [_GUIDE_STYLE, None]
        ids = np.where(drawn, owner, np.where(guide.ravel(), len(styles), len(styles) + 1))
        ids = ids.reshape(rows, cols)
        change = np.ones((rows, cols), bool)
        change[:, 1:] = ids[:, 1:] != ids[:, :-1]
        rr, cc = np.nonzero(change)               # where each run starts, row by row
        ends = np.r_[cc[1:], cols]
        ends[np.r_[rr[1:] != rr[:-1], True]] = cols
        starts_of = np.searchsorted(rr, np.arange(rows + 1))
        pal = [palette[i] for i in ids[rr, cc].tolist()]
        cc_l, ends_l = cc.tolist(), ends.tolist()
        for r in range(rows):
            text = str(row_text[r]).ljust(cols)
            runs: list[Run] = [(frame.left_labels[r], None)]
            runs += [(text[cc_l[i]:ends_l[i]], pal[i]) for i in range(starts_of[r], starts_of[r + 1])]
            lines.append(tuple(runs))
    lines.append(((frame.x_axis, None),))
    lines.append(((frame.tick_row, None),))
    lines.append(frame.legend or (("", None),))
    return Canvas(tuple(lines), frame.top, frame.left, rows, cols, x_range, y_range)


def _auto_range(ys: list[np.ndarray]) -> tuple[float, float]:
    """y range of the data (NaN and inf ignored), a little wider than the data."""
    finite = [y[np.isfinite(y)] for y in ys]
    finite = [y for y in finite if len(y)]
    if not finite:
        return (-1.0, 1.0)
    lo = min(float(y.min()) for y in finite)
    hi = max(float(y.max()) for y in finite)
    if hi - lo < 1e-12:
        return (lo - 1.0, hi + 1.0)
    pad = 0.04 * (hi - lo)
    return (lo - pad, hi + pad)


def freq_canvas(series: Sequence[Series], width: int = 80, height: int = 20,
                ylabel: str = "dB", ylim: tuple[float, float] | None = None,
                title: str | None = None, color: bool | None = None,
                marks_hz: Sequence[float] = (), hline: float | None = None) -> Canvas:
    """The :class:`Canvas` of :func:`freq_plot` (same parameters)."""
    color = use_color(color)
    width, height = max(width, 20), max(height, 6)
    n = max(2 * width, 16)
    xy, kept = [], []
    shared: dict[int, tuple] = {}        # the bins of each grid (series share the analysis's)
    for i, s in enumerate(series):
        x, y = np.asarray(s.x, float), np.asarray(s.y, float)
        if len(x) > n:
            bins = shared.get(id(s.x))
            if bins is None:
                bins = shared[id(s.x)] = _log_bins(x, n)
            keep = _extremes_kept(bins, y)
            x, y = x[keep], y[keep]
        ok = x > 0
        if not np.any(ok & np.isfinite(y)):
            continue
        xy.append((np.log10(x[ok]), y[ok]))
        kept.append((i, s))
    plain = plain_markers(series)
    styles = [_style_and_mark(i, s, color, plain) for i, s in kept]
    if xy:
        x_range = (min(float(x.min()) for x, _ in xy), max(float(x.max()) for x, _ in xy))
    else:
        x_range = (np.log10(20.0), np.log10(20000.0))
    if x_range[1] <= x_range[0]:
        x_range = (x_range[0] - 0.5, x_range[0] + 0.5)
    y_range = tuple(map(float, ylim)) if ylim is not None else _auto_range([y for _, y in xy])
    if ylabel == "deg" and y_range == (-180.0, 180.0):
        y_ticks = (-180.0, -90.0, 0.0, 90.0, 180.0)
    else:
        y_ticks = tuple(nice_ticks(y_range[0], y_range[1], max(3, (height - 4) // 3)))
    lo, hi = 10 ** x_range[0], 10 ** x_range[1]
    x_ticks = tuple((float(np.log10(t)), _tick_label(t)) for t in _FREQ_TICKS
                    if lo * 0.9999 <= t <= hi * 1.0001)
    legend = tuple((m, s.label, st) for (m, st), (_, s) in zip(styles, kept))
    frame = _frame(width, height, title, ylabel, "Hz", y_range, y_ticks, x_ticks, x_range,
                   legend)
    vlines = [float(np.log10(m)) for m in marks_hz if m > 0]
    return _draw(xy, styles, frame, x_range, y_range, color, vlines, hline)


def freq_plot(series: Sequence[Series], width: int = 80, height: int = 20,
              ylabel: str = "dB", ylim: tuple[float, float] | None = None,
              title: str | None = None, color: bool | None = None,
              marks_hz: Sequence[float] = (), hline: float | None = None) -> str:
    """A response plot on a log-frequency axis, as text.

    Parameters
    ----------
    series : sequence of Series
        x in Hz.
    width, height : int
        Size in character cells (at least 20 x 6).
    ylabel : str
        Unit of y.
    ylim : (float, float), optional
        y range; by default from the data (NaN and inf ignored). Values
        outside are drawn at the edge.
    title : str, optional
        The first line.
    color : bool, optional
        ANSI colours; by default unless NO_COLOR is set (:func:`use_color`).
    marks_hz : sequence of float
        Frequencies to mark with a vertical line (crossings, a cursor).
    hline : float, optional
        A reference level to draw (0 dB).

    Returns
    -------
    str
        ``height`` lines of at most ``width`` characters.
    """
    color = use_color(color)
    return freq_canvas(series, width, height, ylabel, ylim, title, color, marks_hz,
                       hline).text(color)


def _minmax_downsample(x: np.ndarray, y: np.ndarray, n: int) -> tuple[np.ndarray, np.ndarray]:
    """About ``n`` points keeping the min and max of each bin, so ringing is not averaged away."""
    if len(x) <= n:
        return x, y
    step = int(np.ceil(len(x) / (n / 2)))
    m = (len(x) // step) * step
    xb = x[:m].reshape(-1, step)
    yb = y[:m].reshape(-1, step)
    return np.repeat(xb[:, 0], 2), np.stack([yb.min(axis=1), yb.max(axis=1)], axis=1).ravel()


def time_canvas(series: Sequence[Series], width: int = 80, height: int = 20,
                xlabel: str = "ms", ylabel: str = "", title: str | None = None,
                color: bool | None = None) -> Canvas:
    """The :class:`Canvas` of :func:`time_plot` (same parameters)."""
    color = use_color(color)
    width, height = max(width, 20), max(height, 6)
    n = max(2 * width, 16)
    xy, kept = [], []
    for i, s in enumerate(series):
        x, y = _minmax_downsample(np.asarray(s.x, float), np.asarray(s.y, float), n)
        if not np.any(np.isfinite(x) & np.isfinite(y)):
            continue
        xy.append((x, y))
        kept.append((i, s))
    plain = plain_markers(series)
    styles = [_style_and_mark(i, s, color, plain) for i, s in kept]
    if xy:
        x_range = (min(float(np.nanmin(x)) for x, _ in xy), max(float(np.nanmax(x)) for x, _ in xy))
    else:
        x_range = (0.0, 1.0)
    if x_range[1] <= x_range[0]:
        x_range = (x_range[0] - 0.5, x_range[0] + 0.5)
    y_range = _auto_range([y for _, y in xy])
    y_ticks = tuple(nice_ticks(y_range[0], y_range[1], max(2, (height - 4) // 3)))
    x_ticks = tuple((t, _tick_text(t)) for t in nice_ticks(*x_range, max(2, width // 10)))
    legend = tuple((m, s.label, st) for (m, st), (_, s) in zip(styles, kept))
    frame = _frame(width, height, title, ylabel, xlabel, y_range, y_ticks, x_ticks, x_range,
                   legend)
    return _draw(xy, styles, frame, x_range, y_range, color, (), 0.0 if y_range[0] < 0 < y_range[1]
                 else None)


def time_plot(series: Sequence[Series], width: int = 80, height: int = 20,
              xlabel: str = "ms", ylabel: str = "", title: str | None = None,
              color: bool | None = None) -> str:
    """A plot on a linear axis (impulse and step responses): x as given, as text."""
    color = use_color(color)
    return time_canvas(series, width, height, xlabel, ylabel, title, color).text(color)
