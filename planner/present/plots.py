"""Text plots of responses with plotext (presentation only: arrays in, text out).

plotext keeps global state and, in some versions, rewrites its data in
place when it draws a log axis. So every call here starts from a clean
figure and plots ``log10(f)`` on a linear axis with decade ticks of its own.
Each series is downsampled to about twice the plot's width before drawing:
the analysis stays dense, the drawing stays fast.
"""

from __future__ import annotations

import os
from dataclasses import dataclass
from typing import Sequence

import numpy as np

from planner.defaults import PLOT_VIEWS as VIEWS, TIME_VIEWS

__all__ = ["Series", "freq_plot", "time_plot", "VIEWS", "TIME_VIEWS", "use_color",
           "downsample_log", "plain_markers"]


_FREQ_TICKS = (10, 20, 50, 100, 200, 500, 1e3, 2e3, 5e3, 1e4, 2e4, 5e4, 1e5)
_COLORS = ("blue", "orange", "green", "magenta", "cyan", "red", "yellow", "gray")


@dataclass(frozen=True)
class Series:
    """One line of a plot: a label, x and y values, and whether it is the emphasised sum."""

    label: str
    x: np.ndarray
    y: np.ndarray
    bold: bool = False


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
    lx = np.log10(x)
    edges = np.linspace(lx[0], lx[-1], n + 1)
    idx = np.clip(np.searchsorted(edges, lx, side="right") - 1, 0, n - 1)
    # For each bin choose the sample farthest from the bin mean (vectorised).
    counts = np.bincount(idx, minlength=n)
    sums = np.bincount(idx, weights=np.nan_to_num(y), minlength=n)
    means = np.divide(sums, counts, out=np.zeros(n), where=counts > 0)
    dev = np.abs(np.nan_to_num(y) - means[idx])
    order = np.lexsort((-dev, idx))
    first = np.ones(len(order), bool)
    first[1:] = idx[order][1:] != idx[order][:-1]
    keep = np.sort(order[first])
    keep = np.unique(np.concatenate([[0], keep, [len(x) - 1]]))
    return x[keep], y[keep]


def nice_ticks(lo: float, hi: float, max_ticks: int) -> list[float]:
    """Round tick values (steps of 1, 2, 3, 5, 6 x 10^k) covering [lo, hi], at most ``max_ticks``."""
    span = hi - lo
    if not np.isfinite(span) or span <= 0 or max_ticks < 2:
        return [lo, hi] if np.isfinite(span) else []
    raw = span / (max_ticks - 1)
    mag = 10.0 ** np.floor(np.log10(raw))
    step = next(m * mag for m in (1, 2, 3, 5, 6, 10, 20) if m * mag >= raw)
    first = np.ceil(lo / step) * step
    ticks = np.arange(first, hi + step * 1e-9, step)
    return [float(round(t, 10)) + 0.0 for t in ticks]


def _tick_text(v: float) -> str:
    return f"{v:g}"


def plain_markers(series: Sequence[Series]) -> list[str]:
    """Markers that tell the series apart without colour: a letter per band (its name's
    first letter not taken yet, else a digit), the bold sum in heavy blocks. plotext draws
    the marker beside each label in the legend too."""
    out, taken = [], set()
    for s in series:
        if s.bold:
            out.append("hd")
            continue
        pick = next((ch for ch in s.label.lower() if ch.isalpha() and ch not in taken), None)
        pick = pick or next(str(d) for d in range(10) if str(d) not in taken)
        taken.add(pick)
        out.append(pick)
    return out


def _setup(plt, width: int, height: int, color: bool, title: str | None):
    plt.clear_figure()
    plt.plotsize(max(width, 20), max(height, 6))
    if color:
        plt.theme("pro")
    else:
        plt.theme("clear")
    if title:
        plt.title(title)


def _finish(plt, color: bool) -> str:
    s = plt.build()
    if not color:
        s = plt.uncolorize(s)
    return s


def freq_plot(series: Sequence[Series], width: int = 80, height: int = 20,
              ylabel: str = "dB", ylim: tuple[float, float] | None = None,
              title: str | None = None, color: bool | None = None,
              marks_hz: Sequence[float] = (), hline: float | None = None) -> str:
    """A response plot on a log-frequency axis.

    Parameters
    ----------
    series : sequence of Series
        x in Hz.
    width, height : int
        Size in character cells.
    ylabel : str
        Unit of y.
    ylim : (float, float), optional
        y range; by default from the data (NaN and inf ignored).
    marks_hz : sequence of float
        Frequencies to mark with a vertical line (crossings, a cursor).
    hline : float, optional
        A reference level to draw (0 dB).
    """
    import plotext as plt

    color = use_color(color)
    _setup(plt, width, height, color, title)
    n = max(2 * width, 16)
    xs_all = []
    plain = plain_markers(series)
    for i, s in enumerate(series):
        x, y = downsample_log(s.x, s.y, n)
        ok = np.isfinite(y) & (x > 0)
        x, y = x[ok], y[ok]
        if ylim is not None:
            y = np.clip(y, ylim[0], ylim[1])
        if not len(x):
            continue
        xs_all.append(x)
        kw = {"label": s.label}
        if color:
            kw["color"] = "white" if s.bold else _COLORS[i % len(_COLORS)]
        kw["marker"] = ("hd" if s.bold else "braille") if color else plain[i]
        plt.plot(np.log10(x).tolist(), y.tolist(), **kw)
    if xs_all:
        lo = min(float(x.min()) for x in xs_all)
        hi = max(float(x.max()) for x in xs_all)
        ticks = [t for t in _FREQ_TICKS if lo <= t <= hi * 1.0001]
        plt.xticks([float(np.log10(t)) for t in ticks], [_tick_label(t) for t in ticks])
        plt.xlim(np.log10(lo), np.log10(hi))
        for m in marks_hz:
            if lo <= m <= hi:
                plt.vline(float(np.log10(m)), "gray" if color else None)
    if hline is not None:
        plt.hline(hline, "gray" if color else None)
    if ylim is not None:
        plt.ylim(*ylim)
        if ylabel == "deg" and tuple(ylim) == (-180.0, 180.0):
            ticks = [-180.0, -90.0, 0.0, 90.0, 180.0]
        else:
            ticks = nice_ticks(ylim[0], ylim[1], max(2, (height - 4) // 3))
        plt.yticks(ticks, [_tick_text(t) for t in ticks])
    plt.xlabel("Hz")
    plt.ylabel(ylabel)
    return _finish(plt, color)


def time_plot(series: Sequence[Series], width: int = 80, height: int = 20,
              xlabel: str = "ms", ylabel: str = "", title: str | None = None,
              color: bool | None = None) -> str:
    """A plot on a linear axis (impulse and step responses): x as given."""
    import plotext as plt

    color = use_color(color)
    _setup(plt, width, height, color, title)
    n = max(2 * width, 16)
    plain = plain_markers(series)
    for i, s in enumerate(series):
        x, y = np.asarray(s.x, float), np.asarray(s.y, float)
        if len(x) > n:
            # Keep min and max per bin so that ringing is not averaged away.
            step = int(np.ceil(len(x) / (n / 2)))
            m = (len(x) // step) * step
            xb = x[:m].reshape(-1, step)
            yb = y[:m].reshape(-1, step)
            x = np.repeat(xb[:, 0], 2)
            y = np.stack([yb.min(axis=1), yb.max(axis=1)], axis=1).ravel()
        kw = {"label": s.label,
              "marker": ("hd" if s.bold else "braille") if color else plain[i]}
        if color:
            kw["color"] = "white" if s.bold else _COLORS[i % len(_COLORS)]
        plt.plot(x.tolist(), y.tolist(), **kw)
    plt.xlabel(xlabel)
    if ylabel:
        plt.ylabel(ylabel)
    return _finish(plt, color)
