"""What the editor shows, computed from a report: plot data, the cursor readout, check texts.

Plain functions of a :class:`~planner.engine.Report` (no Textual here), so
that the widgets only draw. Every state reads as text ("ok", "FAIL"), never
by colour alone; every state is the engine's verdict (no threshold is restated here).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from planner import config
from planner.dsp.analysis import db
from planner.engine import Report
from planner.present.plots import Series
from planner.timeresp import impulse_responses
from planner.present.views import phase_difference_deg, time_series, view_series
from planner.units import format_hz

__all__ = ["VIEWS", "DRIVER_VIEWS", "PAIR_VIEWS", "TIME_VIEWS", "views_for", "PlotData",
           "impulse_of", "plot_data", "crossing_pair", "crossing_pairs", "phase_hint", "readout",
           "check_lines", "arith_line", "WarningItem", "warning_items", "arith_warning_items",
           "solve_preview", "solve_preview_series", "preview_range_db"]

#: The plot views, in the order the view key steps through them.
VIEWS = ("magnitude", "phase", "delay", "electrical", "drivers", "offaxis",
         "phase difference", "level difference", "impulse", "step")

#: The views that need drivers (the acoustic sum): left out while no band has one.
DRIVER_VIEWS = ("electrical", "drivers", "offaxis")

#: The views of one pair of bands at their crossing (they show the engine's phase hint).
PAIR_VIEWS = ("phase difference", "level difference")

#: The views drawn against time (ms) rather than frequency.
TIME_VIEWS = ("impulse", "step")

#: How far the difference views reach either side of their crossing (octaves).
_DIFF_SPAN_OCT = 2.0


def views_for(project) -> tuple[str, ...]:
    """The views the view key steps through for ``project`` (no driver views without drivers)."""
    if any(b.driver is not None for b in project.bands):
        return VIEWS
    return tuple(v for v in VIEWS if v not in DRIVER_VIEWS)


@dataclass(frozen=True, eq=False)
class PlotData:
    """Everything one plot needs, ready to draw (arrays already computed; compared by identity)."""

    series: tuple[Series, ...]
    unit: str
    ylim: tuple[float, float] | None
    title: str
    marks_hz: tuple[float, ...]
    cursor_hz: float
    hline: float | None
    time: bool = False          # x is time in ms (impulse, step), else frequency in Hz
    hint: str | None = None     # the engine's advice for the pair shown (difference views)


def phase_hint(r: Report, a: int, b: int) -> str | None:
    """The engine's advice for the crossing of bands ``a`` and ``b`` when it is outside its
    limit (what to delay, and by how much), as the warnings word it; None when in phase."""
    na, nb = r.project.bands[a].name, r.project.bands[b].name
    for w in r.warnings:
        if w.code == "phase" and w.text.startswith(f"bands {na} and {nb} "):
            return w.text
    return None


def crossing_pairs(r: Report) -> list[tuple[int, int, float]]:
    """Every pair of bands that cross, once, with its crossing frequency (checked crossings
    first, then the rest), for picking the pair the difference views show."""
    out, seen = [], set()
    for c in sorted(r.crossings, key=lambda c: (not c.checked, c.freq_hz)):
        if c.band_index not in seen:
            seen.add(c.band_index)
            out.append((*c.band_index, c.freq_hz))
    return out


def crossing_pair(r: Report, band: int, pair: tuple[int, int] | None = None
                  ) -> tuple[int, int, float | None]:
    """The two bands the difference views compare, for the selected ``band``.

    The crossing of ``band`` with the largest phase difference (checked
    crossings first); without one, ``band`` and its neighbour. Returns
    ``(a, b, crossing_hz or None)`` with ``a`` before ``b`` in project order.
    """
    n = len(r.project.bands)
    if pair is not None and all(0 <= k < n for k in pair) and pair[0] != pair[1]:
        a, b = sorted(pair)
        at = [c for c in r.crossings if c.band_index == (a, b)]
        at.sort(key=lambda c: (not c.checked, -abs(c.phase_diff_deg)))
        return a, b, at[0].freq_hz if at else None
    mine = [c for c in r.crossings if band in c.band_index]
    mine.sort(key=lambda c: (not c.checked, -abs(c.phase_diff_deg)))
    if mine:
        a, b = mine[0].band_index
        return a, b, mine[0].freq_hz
    n = len(r.project.bands)
    if n < 2:
        return band, band, None
    other = band + 1 if band + 1 < n else band - 1
    return min(band, other), max(band, other), None


def plot_data(r: Report, view: str, band: int, cursor_hz: float, impulse=None,
              span_ms: float | None = None, pair: tuple[int, int] | None = None) -> PlotData:
    """The series, unit, range and marks of ``view`` (one of :data:`VIEWS`).

    The time views need ``impulse``, the report's
    :class:`planner.timeresp.TimeResponse` (see :func:`impulse_of`).
    """
    marks = tuple(c.freq_hz for c in r.checked_crossings)
    if view in TIME_VIEWS:
        if impulse is None:
            raise ValueError(f"the {view} view needs the impulse responses")
        tr = impulse if view == "impulse" else impulse.step()
        series = time_series(tr, span_ms)
        span = f"first {span_ms:.3g} ms" if span_ms else "time in ms"
        return PlotData(tuple(series), "", None, f"{view} response ({span}; z/Z zoom)", (),
                        cursor_hz, None, time=True)
    if view in ("magnitude", "phase", "delay") + DRIVER_VIEWS:
        series, unit, ylim = view_series(r, view)
        title = {"offaxis": f"off-axis sum ({unit})", "drivers": f"drivers alone ({unit})",
                 "electrical": f"electrical, no drivers ({unit})"}.get(view, f"{view} ({unit})")
        if not series:
            title = f"{view}: no drivers in this project"
        return PlotData(tuple(series), unit, ylim, title, marks, cursor_hz,
                        0.0 if view in ("magnitude", "electrical", "offaxis") else None)
    if view not in VIEWS:
        raise ValueError(f"view must be one of {', '.join(VIEWS)}, not {view!r}")
    a, b, fc = crossing_pair(r, band, pair)
    f = r.freqs_hz
    na, nb = r.project.bands[a].name, r.project.bands[b].name
    if a == b:
        return PlotData((), "", None, f"{view}: needs two bands", (), cursor_hz, None)
    if fc is not None:
        keep = (f >= fc / 2 ** _DIFF_SPAN_OCT) & (f <= fc * 2 ** _DIFF_SPAN_OCT)
        where = f"near {format_hz(fc)}"
    else:
        keep = np.ones(len(f), bool)
        where = "(no crossing)"
    if view == "phase difference":
        y = phase_difference_deg(r, a, b)
        unit, ylim, label = "deg", (-180.0, 180.0), f"{na} - {nb} phase"
    else:
        y = db(r.responses.h[a]) - db(r.responses.h[b])
        unit, ylim, label = "dB", (-24.0, 24.0), f"{na} - {nb} level"
    s = Series(label, f[keep], y[keep], bold=True)
    return PlotData((s,), unit, ylim, f"{na} - {nb} {where} ({unit})",
                    tuple(m for m in ((fc,) if fc else ())), cursor_hz, 0.0,
                    hint=phase_hint(r, a, b))


def _at(s: Series, f_hz: float) -> float:
    x = np.asarray(s.x, float)
    if not len(x) or f_hz < x[0] or f_hz > x[-1]:
        return float("nan")
    return float(np.interp(np.log10(f_hz), np.log10(x), np.asarray(s.y, float)))


def _r1(v: float) -> float:
    """Rounded to 0.1 without a "-0.0"."""
    return round(v, 1) + 0.0


def impulse_of(r: Report):
    """The impulse responses of the report's bands and sum (:mod:`planner.timeresp`)."""
    return impulse_responses(r.designs, r.project.sample_rate,
                             [b.name for b in r.project.bands], r.active)


def _peak_readout(d: PlotData) -> str:
    """``"peak ms/value: woofer 1.02/+0.31 tweeter 0.10/+0.52 sum ..."``: the largest |value|
    of each series, and when."""
    parts = []
    for s in d.series:
        y = np.asarray(s.y, float)
        label = s.label.replace(" (off)", "")
        if not len(y) or not np.any(y):
            parts.append(f"{label} --")
            continue
        k = int(np.argmax(np.abs(y)))
        parts.append(f"{label} {float(s.x[k]):.2f}/{y[k]:+.2f}")
    return "peak ms/value: " + " ".join(parts)


def readout(d: PlotData) -> str:
    """``"at 2.4 kHz dB: woofer -6.0 tweeter -6.0 sum +0.0"`` (interpolated linearly in log f);
    for the time views, where and how high each response peaks."""
    if d.time:
        return _peak_readout(d)
    parts = []
    for s in d.series:
        v = _at(s, d.cursor_hz)
        label = s.label.replace(" (off)", "")
        parts.append(f"{label} {_r1(v):+.1f}" if np.isfinite(v) else f"{label} --")
    unit = f" {d.unit}" if d.unit else ""
    text = f"at {format_hz(d.cursor_hz)}{unit}: " + " ".join(parts)
    return text + (f"\n{d.hint}" if d.hint else "")


def check_lines(r: Report) -> tuple[str, str, str]:
    """The check bar: sum flatness; worst crossing; headroom per band (each one line at 80 columns).

    The states are the engine's (:attr:`planner.engine.Report.checks`): ``ok``, ``warn``
    (outside its limit but not enforced: headroom by default) or ``FAIL``.
    """
    sc, xc, hc = r.check("sum"), r.check("crossings"), r.check("headroom")
    f = sc.figures
    if not f["muted"]:
        s = (f"sum       {sc.text:<4} {f['max_dev_db']:+.2f} dB at {format_hz(f['at_hz'])} "
             f"(limit +/-{f['limit_db']:g} dB, ripple {f['ripple_db']:.2f} dB)")
    else:
        s = f"sum       {sc.text:<4} every band is muted"
    w = xc.figures["worst"]
    if w is None:
        x = f"crossing  --   none above the floor ({xc.figures['floor_db']:g} dB)"
    else:
        x = (f"crossing  {xc.text:<4} {w.phase_diff_deg:+.1f} deg at "
             f"{format_hz(w.freq_hz)} {w.bands[0]}/{w.bands[1]} "
             f"(limit {xc.figures['limit_deg']:g} deg)")
    heads = ", ".join(f"{b.name} {_r1(b.peak_gain_db):+.1f}" + ("" if b.active else " off")
                      for b in r.bands)
    return s, x, f"headroom  {hc.text:<4} peak dB: {heads}"


def arith_line(rx) -> str:
    """The check bar's line for the target arithmetic (a :class:`planner.export.RateExport`).

    ``"arith     ok   q1.31: max dev 0.0001 dB tweeter, inner peak +2.1 dB woofer"``
    (the largest response deviation from the float64 design, and the highest level inside a
    chain),
    or ``FAIL`` naming the failing bands and sections (details in the warnings).
    """
    name = rx.arith.name
    live = [b for b in rx.bands if b.active] or rx.bands
    if not rx.arith_ok:
        bad = [f"{b.name} " + (f"sec {b.arith.failed_section}" if b.arith.failed_section
                               else "FIR") for b in rx.bands if not b.arith.ok]
        return f"arith     FAIL {name}: cannot hold {', '.join(bad)} (see warnings)"
    worst = max(live, key=lambda b: b.arith.deviation_db)
    peak = max(live, key=lambda b: b.peak_internal_gain_db)
    return (f"arith     ok   {name}: max dev {worst.arith.deviation_db:.2g} dB {worst.name}, "
            f"inner peak {_r1(peak.peak_internal_gain_db):+.1f} dB {peak.name}")


@dataclass(frozen=True)
class WarningItem:
    """A warning as listed, and what selecting it selects."""

    text: str
    band: int | None
    filter: int | None


def warning_items(r: Report) -> list[WarningItem]:
    """The report's warnings, each with the band (and filter) it is about."""
    return [WarningItem(w.text, w.band, w.filter) for w in r.warnings]


def arith_warning_items(rx) -> list[WarningItem]:
    """Warnings from the target arithmetic: a band it cannot hold (with what helps), and a
    fixed-point chain whose internal level rises above full scale (how much pre-attenuation
    avoids it; floating point has the range to carry it)."""
    out = []
    for i, b in enumerate(rx.bands):
        a = b.arith
        if not a.ok:
            where = f"section {a.failed_section}" if a.failed_section else "its FIR"
            hint = f"; try {a.suggestions[0]}" if a.suggestions else ""
            out.append(WarningItem(f"band {b.name}, {where}: {rx.arith.name} cannot hold the "
                                   f"design at {rx.fs_hz:g} Hz: {a.reason}{hint}", i, None))
        elif (rx.arith.kind == "fixed" and b.active
              and b.peak_internal_gain_db > config.HEADROOM_LIMIT_DB):
            out.append(WarningItem(
                f"band {b.name}: its sections peak at {b.peak_internal_gain_db:+.1f} dB inside "
                f"the chain, above full scale in {rx.arith.name}; attenuate its input by "
                f"{b.peak_internal_gain_db:.1f} dB (export --pre-attenuate does it)", i, None))
    return out


def _worst(r: Report) -> tuple[str, str]:
    """The worst crossing's phase (``"+21.7 deg"``) and where (``"mid/tweeter 3 kHz"``)."""
    w = r.worst_crossing
    if w is None:
        return "none", ""
    return f"{w.phase_diff_deg:+.1f} deg", f"{w.bands[0]}/{w.bands[1]} {format_hz(w.freq_hz)}"


def _fit_changes(f) -> list[str]:
    """``"tweeter peak 7.5 kHz: gain -0.80 -> -0.34 dB"`` for every fitted gain that moved."""
    old = f.before.project
    out = []
    for label, name, g in zip(f.labels, f.names, f.gains_db):
        # names are "bands[i].filters[j].gain_db" or "bands[i].gain_db"
        parts = name.replace("]", "").replace("[", ".").split(".")
        i = int(parts[1])
        g0 = old.bands[i].filters[int(parts[3])].params["gain_db"] if "filters" in name \
            else old.bands[i].gain_db
        if abs(g - g0) > 5e-3:
            out.append(f"{label}: gain {g0:+.2f} -> {g:+.2f} dB")
    return out


def solve_preview_series(result) -> list[Series]:
    """The sum's level before (plain) and after (bold) a solver's result, for the preview's
    plot: the whole analysed range of each report."""
    b, a = result.before, result.after
    return [Series("before", b.freqs_hz, db(b.sum_h)),
            Series("after", a.freqs_hz, db(a.sum_h), bold=True)]


def preview_range_db(series: list[Series], limit_db: float) -> float:
    """Half the y range of the preview's plot: the check's limit, or the largest level
    plotted when that is larger, with 10 % to spare (the scale then says what the change
    is worth against the limit)."""
    peaks = [float(np.max(np.abs(s.y[np.isfinite(s.y)]))) for s in series
             if np.isfinite(s.y).any()]
    return 1.1 * max([limit_db, *peaks])


def solve_preview(kind: str, result) -> str:
    """What a solver would change, before and after, for the editor's preview.

    ``kind`` is ``"align"`` (an :class:`planner.solve.alignment.Alignment`)
    or ``"fit"`` (an :class:`planner.solve.eqfit.Fit`). Lines: the sum's
    flatness and the worst crossing before and after, each check's state,
    then the changes per band.
    """
    b, a = result.before, result.after
    lim = b.project.analysis
    (wb, at_b), (wa, at_a) = _worst(b), _worst(a)
    lines = [f"{'':18}{'before':>14}{'after':>14}",
             f"{'sum flatness':18}{b.max_dev_db:>+11.2f} dB{a.max_dev_db:>+11.2f} dB"
             f"   limit +/-{lim.flatness_db:g} dB",
             f"{'worst crossing':18}{wb:>14}{wa:>14}   limit {lim.phase_deg:g} deg",
             (f"{'':18}at {at_a or at_b}" if at_a == at_b or not (at_a and at_b)
              else f"{'':18}at {at_b}, then at {at_a}") if (at_b or at_a) else "",
             f"{'checks':18}{'ok' if b.ok else 'FAIL':>14}{'ok' if a.ok else 'FAIL':>14}"]
    lines = [ln for ln in lines if ln]
    if kind == "fit":
        lines.insert(2, f"{'largest error':18}{result.before_max_db:>+11.2f} dB"
                        f"{result.max_error_db:>+11.2f} dB   target {result.target.name}")
        changes = _fit_changes(result)
    else:
        changes = list(result.changes)
    lines.append("")
    lines.append("changes:" if changes else "changes: none")
    lines += [f"  {c}" for c in changes]
    extra = getattr(result, "at_bounds", None) or getattr(result, "at_limits", None)
    if extra:
        lines.append("stopped by its bounds (e, the project settings, widens them):")
        lines += [f"  {x}" for x in extra]
    up = [n for n0, n in zip(b.project.bands, result.project.bands) if n.gain_db > n0.gain_db + 1e-6]
    boost = kind == "fit" and max((float(g) for g in result.gains_db), default=0.0) > 0
    if up or boost:
        lines.append("note: a level goes up; check the headroom and start quiet.")
    return "\n".join(lines)
