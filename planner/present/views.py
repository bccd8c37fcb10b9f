"""The series of each plot view of a report, and the plots of ``crossplan plot``."""

from __future__ import annotations

import numpy as np

from planner.defaults import PLOT_VIEWS
from planner.dsp.analysis import db, wrap_deg
from planner.engine import Report
from planner.present.plots import Series, freq_plot, time_plot
from planner.timeresp import settle_samples

__all__ = ["view_series", "plot_report", "phase_difference_deg", "time_series", "plot_time"]


def view_series(r: Report, view: str) -> tuple[list[Series], str, tuple | None]:
    """Series, y unit and y range of a view (:data:`planner.defaults.PLOT_VIEWS`).

    ``magnitude``, ``phase`` and ``delay`` show the report's bands and sum
    (acoustic when a band has a driver), ``magnitude`` also the target curve
    (``analysis.target``) when there is one; ``electrical`` the bands without
    their drivers; ``drivers`` the drivers alone, relative to the reference
    level; ``offaxis`` the sum at a few vertical angles. A view with nothing
    to show (drivers of an electrical report) has no series.
    """
    f = r.freqs_hz
    names = [b.name + ("" if r.active[i] else " (off)") for i, b in enumerate(r.project.bands)]
    out: list[Series] = []
    if view == "magnitude":
        for n, h in zip(names, r.responses.h):
            out.append(Series(n, f, db(h)))
        if r.target_db is not None:          # the curve the sum is checked against
            out.append(Series(f"target {r.target_name}", f, np.asarray(r.target_db, float)))
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
    if view == "electrical":
        el = r.electrical_h()
        for n, h in zip(names, el):
            out.append(Series(n, f, db(h)))
        act = np.asarray(r.active, dtype=bool)
        out.append(Series("sum (electrical)", f, db(el[act].sum(axis=0)), bold=True))
        top = max(6.0, float(np.ceil(max(s.y.max() for s in out) / 6) * 6))
        return out, "dB", (-42.0, top)
    if view == "drivers":
        return _driver_series(r, names), "dB", None
    if view == "offaxis":
        return _off_axis_series(r), "dB", (-42.0, 12.0)
    raise ValueError(f"view must be one of {', '.join(PLOT_VIEWS)}, not {view!r}")


def _driver_series(r: Report, names: list[str]) -> list[Series]:
    """Each driver's response relative to the reference level (bands with a driver)."""
    if not r.acoustic:
        return []
    d = r.drivers.all_bands(r.freqs_hz)
    return [Series(f"{n} driver", r.freqs_hz, db(d[i]))
            for i, (n, b) in enumerate(zip(names, r.project.bands)) if b.driver is not None]


#: How many angles the off-axis plot draws (spread over the project's angles, 0 included).
OFF_AXIS_LINES = 5


def _off_axis_series(r: Report) -> list[Series]:
    """The sum at a few vertical angles (the on-axis one emphasised)."""
    ox = r.off_axis
    if ox is None:
        return []
    idx = np.unique(np.round(np.linspace(0, len(ox.angles_deg) - 1, OFF_AXIS_LINES)).astype(int))
    zero = int(np.argmin(np.abs(ox.angles_deg)))
    idx = np.unique(np.append(idx, zero))
    return [Series(f"{ox.angles_deg[k]:+.0f} deg", ox.freqs_hz, ox.level_db[k], bold=k == zero)
            for k in idx]


def plot_report(r: Report, view: str = "magnitude", width: int = 80, height: int = 22,
                color: bool | None = None) -> str:
    """The plot of ``crossplan plot``: one series per band plus the sum (see :func:`view_series`)."""
    series, unit, ylim = view_series(r, view)
    if not series:
        why = ("no band has a driver" if not r.acoustic
               else "no driver has a position_mm on the baffle")
        return f"{r.project.name}: {view}: nothing to plot ({why})"
    marks = [c.freq_hz for c in r.checked_crossings]
    title = f"{r.project.name}: {view}" + (" (acoustic)" if r.acoustic and view in (
        "magnitude", "phase", "delay") else "")
    return freq_plot(series, width=width, height=height, ylabel=unit, ylim=ylim,
                     title=title, color=color, marks_hz=marks,
                     hline=0.0 if view in ("magnitude", "electrical", "offaxis") else None)


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
