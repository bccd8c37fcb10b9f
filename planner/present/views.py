"""The series of each plot view of a report, and the plots of ``crossplan plot``."""

from __future__ import annotations

import numpy as np

from planner.dsp.analysis import db, wrap_deg
from planner.engine import Report
from planner.present.plots import Series, freq_plot, time_plot
from planner.timeresp import settle_samples

__all__ = ["view_series", "plot_report", "phase_difference_deg", "time_series", "plot_time"]


def view_series(r: Report, view: str) -> tuple[list[Series], str, tuple | None]:
    """Series, y unit and y range for a view: magnitude, phase or delay."""
    f = r.freqs_hz
    names = [b.name + ("" if r.active[i] else " (off)") for i, b in enumerate(r.project.bands)]
    out: list[Series] = []
    if view == "magnitude":
        for n, h in zip(names, r.responses.h):
            out.append(Series(n, f, db(h)))
        out.append(Series("sum", f, db(r.sum_h), bold=True))
        top = max(6.0, float(np.ceil(max(s.y.max() for s in out) / 6) * 6))
        return out, "dB", (-42.0, top)
    if view == "phase":
        for n, h in zip(names, r.responses.h):
            out.append(Series(n, f, np.degrees(np.angle(h))))
        out.append(Series("sum", f, np.degrees(np.angle(r.sum_h)), bold=True))
        return out, "deg", (-180.0, 180.0)
    if view == "delay":
        gd = r.band_group_delay_ms()
        for n, g in zip(names, gd):
            out.append(Series(n, f, g))
        out.append(Series("sum", f, r.sum_group_delay_ms(), bold=True))
        return out, "ms", None
    raise ValueError(f"view must be one of magnitude, phase, delay, not {view!r}")


def plot_report(r: Report, view: str = "magnitude", width: int = 80, height: int = 22,
                color: bool | None = None) -> str:
    """The plot of ``crossplan plot``: one series per band plus the sum."""
    series, unit, ylim = view_series(r, view)
    marks = [c.freq_hz for c in r.checked_crossings]
    return freq_plot(series, width=width, height=height, ylabel=unit, ylim=ylim,
                     title=f"{r.project.name}: {view}", color=color, marks_hz=marks,
                     hline=0.0 if view == "magnitude" else None)


def phase_difference_deg(r: Report, a: int, b: int) -> np.ndarray:
    """Phase of band ``a`` minus band ``b`` in degrees, wrapped, on the report's grid."""
    ha, hb = r.responses.h[a], r.responses.h[b]
    return wrap_deg(np.degrees(np.angle(ha) - np.angle(hb)))


def time_series(tr, span_ms: float | None = None) -> list[Series]:
    """Series of a :class:`planner.timeresp.TimeResponse`: one per band plus the sum, time in ms.

    The span shown is ``span_ms`` or, by default, until every response has
    settled (:func:`planner.timeresp.settle_samples`) plus a tenth.
    """
    if span_ms is None:
        n = int(np.ceil(settle_samples(tr) * 1.1))
    else:
        n = int(np.ceil(span_ms * tr.fs_hz / 1000.0)) + 1
    n = max(2, min(n, tr.sum.shape[-1]))
    t = tr.time_ms[:n]
    out = [Series(name + ("" if on else " (off)"), t, row[:n])
           for name, on, row in zip(tr.names, tr.active, tr.bands)]
    out.append(Series("sum", t, tr.sum[:n], bold=True))
    return out


def plot_time(tr, title: str, width: int = 80, height: int = 22, color: bool | None = None,
              span_ms: float | None = None) -> str:
    """The impulse or step plot of ``crossplan plot --view impulse|step`` (time in ms)."""
    return time_plot(time_series(tr, span_ms), width=width, height=height, xlabel="ms",
                     ylabel="", title=f"{title}: {tr.kind} response", color=color)
