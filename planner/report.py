"""Presenting a check report: plain text for the terminal, and plot series per view."""

from __future__ import annotations

import numpy as np

from planner.dsp.analysis import db, wrap_deg
from planner.engine import Report
from planner.filters import format_hz
from planner.plots import Series, freq_plot, time_plot

__all__ = ["text_report", "view_series", "plot_report", "time_series", "plot_time",
           "SAFETY_NOTE"]

SAFETY_NOTE = (
    "Caution: start at low volume, protect tweeters (a missing or wrong highpass can destroy "
    "one in seconds), be careful with boosts and test signals, and keep within the drivers' "
    "and amplifiers' limits and local rules on sound levels."
)


#: Crossings this many dB or less below the crossing floor are listed as information.
INFO_SPAN_DB = 20.0


def _state(ok: bool) -> str:
    return "ok  " if ok else "FAIL"


def text_report(r: Report) -> str:
    """The report of ``crossplan check`` as readable lines (no colour needed)."""
    p, a = r.project, r.project.analysis
    lines = [f"{p.name}  ({p.sample_rate / 1000:g} kHz, {len(p.bands)} bands, "
             f"{format_hz(a.f_min)} - {format_hz(a.f_max)})"]
    if any(r.active):
        lines.append(f"sum        {_state(r.flat_ok)} {r.max_dev_db:+.2f} dB at {format_hz(r.at_hz)}"
                     f"  (limit +/-{a.flatness_db:g} dB, ripple {r.ripple_db:.2f} dB)")
    else:
        lines.append("sum        FAIL every band is muted")
    checked = r.checked_crossings
    if not checked:
        lines.append("crossings  --   none above the floor "
                     f"({a.crossing_floor_db:g} dB)")
    for k, c in enumerate(checked):
        head = "crossings " if k == 0 else "          "
        lines.append(f"{head} {_state(c.ok)} {c.bands[0]}/{c.bands[1]} at {format_hz(c.freq_hz)}: "
                     f"{c.phase_diff_deg:+.1f} deg apart, level {c.level_db:.1f} dB "
                     f"(limit {a.phase_deg:g} deg)")
    # Crossings far below the floor (an FIR's stop-band lobes crossing each
    # other) are counted, not listed; check --json lists every one.
    deep = [c for c in r.crossings if not c.checked
            and c.level_db < a.crossing_floor_db - INFO_SPAN_DB]
    for c in r.crossings:
        if not c.checked and c not in deep:
            lines.append(f"           info {c.bands[0]}/{c.bands[1]} at {format_hz(c.freq_hz)}: "
                         f"{c.phase_diff_deg:+.1f} deg, level {c.level_db:.1f} dB "
                         "(below the floor, not checked)")
    if deep:
        lines.append(f"           info {len(deep)} more crossing(s) more than {INFO_SPAN_DB:g} dB "
                     f"below the floor, not listed (see check --json)")
    heads = ", ".join(f"{b.name} {b.peak_gain_db:+.1f} dB" + ("" if b.active else " (muted)")
                      for b in r.bands)
    lines.append(f"headroom   {_state(all(b.peak_gain_db <= 0.05 for b in r.bands if b.active))}"
                 f" peak gain: {heads}")
    gd = r.sum_group_delay_ms()
    gd = gd[np.isfinite(gd)]
    if gd.size:
        lines.append(f"delay      sum group delay {gd.min():.2f} .. {gd.max():.2f} ms")
    if any(b.latency_samples for b in r.bands):
        lats = ", ".join(f"{b.name} {b.latency_samples:g}" for b in r.bands if b.active)
        lines.append(f"latency    {lats} samples; sum {r.latency_samples:g} samples "
                     f"({r.latency_ms:.2f} ms), "
                     + ("bands aligned" if r.latencies_agree else "bands NOT aligned"))
    if r.warnings:
        lines.append("warnings")
        lines.extend(f"  - {w.text}" for w in r.warnings)
    lines.append(f"result     {'ok: all checks pass' if r.ok else 'FAIL'}")
    if any(w.code in ("headroom", "boost", "shallow-highpass") for w in r.warnings):
        lines.append(SAFETY_NOTE)
    return "\n".join(lines)


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
    from planner.timeresp import settle_samples

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
