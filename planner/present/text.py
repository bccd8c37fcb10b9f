"""A check report and a comparison as plain text for the terminal (no colour needed)."""

from __future__ import annotations

import math
import textwrap

import numpy as np

from planner import config
from planner.engine import Report
from planner.units import format_hz

__all__ = ["text_report", "compare_text", "SAFETY_NOTE", "failure_summary"]


SAFETY_NOTE = (
    "Caution: start at low volume, protect tweeters (a missing or wrong highpass can destroy "
    "one in seconds), be careful with boosts and test signals, and keep within the drivers' "
    "and amplifiers' limits and local rules on sound levels."
)


def _state(c) -> str:
    """A check's state as text, 4 columns wide (``ok  ``, ``warn``, ``FAIL``)."""
    return f"{c.text:<4}"


def _headroom_note(h) -> str:
    limit = f"limit {h.figures['limit_db']:+g} dB"
    return f"{limit}, enforced" if h.enforced else f"{limit}, a warning only"


def text_report(r: Report) -> str:
    """The report of ``crossplan check`` as readable lines (no colour needed).

    Every state is the engine's (:attr:`planner.engine.Report.checks`):
    ``ok``, ``warn`` (outside its limit, not enforced) or ``FAIL``.
    """
    p, a = r.project, r.project.analysis
    s, x, h = r.check("sum"), r.check("crossings"), r.check("headroom")
    lines = [f"{p.name}  ({p.sample_rate / 1000:g} kHz, {len(p.bands)} bands, "
             f"{format_hz(a.f_min)} - {format_hz(a.f_max)})"]
    lines.extend(_acoustic_head(r))
    if not s.figures["muted"]:
        f = s.figures
        tgt = "" if f.get("target") is None else f" from the target {f['target']}"
        aside = " (voicing set aside)" if f.get("voicing_set_aside") else ""
        lines.append(f"sum        {_state(s)} {f['max_dev_db']:+.2f} dB at {format_hz(f['at_hz'])}"
                     f"{tgt}{aside}  (limit +/-{f['limit_db']:g} dB, ripple "
                     f"{f['ripple_db']:.2f} dB)")
    else:
        lines.append(f"sum        {_state(s)} every band is muted")
    if r.voiced is not None:
        v = r.voiced
        lines.append(f"voiced     info {v['max_dev_db']:+.2f} dB at {format_hz(v['at_hz'])} from "
                     f"{'the target ' + f['target'] if f.get('target') else '0 dB'} with the "
                     f"voicing ({'; '.join(v['filters'])}); not checked")
    checked = r.checked_crossings
    if not checked:
        lines.append("crossings  --   none above the floor "
                     f"({x.figures['floor_db']:g} dB)")
    for k, c in enumerate(checked):
        head = "crossings " if k == 0 else "          "
        lines.append(f"{head} {'ok  ' if c.ok else 'FAIL'} {c.bands[0]}/{c.bands[1]} at "
                     f"{format_hz(c.freq_hz)}: {c.phase_diff_deg:+.1f} deg apart, level "
                     f"{c.level_db:.1f} dB (limit {x.figures['limit_deg']:g} deg)")
    # Crossings far below the floor (an FIR's stop-band lobes crossing each
    # other) are counted, not listed; check --json lists every one.
    span = config.INFO_SPAN_DB
    deep = [c for c in r.crossings if not c.checked
            and c.level_db < x.figures["floor_db"] - span]
    for c in r.crossings:
        if not c.checked and c not in deep:
            lines.append(f"           info {c.bands[0]}/{c.bands[1]} at {format_hz(c.freq_hz)}: "
                         f"{c.phase_diff_deg:+.1f} deg, level {c.level_db:.1f} dB "
                         "(below the floor, not checked)")
    if deep:
        lines.append(f"           info {len(deep)} more crossing(s) more than {span:g} dB "
                     f"below the floor, not listed (see check --json)")
    heads = ", ".join(f"{b.name} {b.peak_gain_db:+.1f} dB" + ("" if b.active else " (muted)")
                      for b in r.bands)
    lines.append(f"headroom   {_state(h)} peak gain: {heads} ({_headroom_note(h)})")
    gd = r.sum_group_delay_ms()
    gd = gd[np.isfinite(gd)]
    if gd.size:
        lines.append(f"delay      sum group delay {gd.min():.2f} .. {gd.max():.2f} ms")
    lines.extend(_acoustic_info(r))
    if any(b.latency_samples for b in r.bands):
        lats = ", ".join(f"{b.name} {b.latency_samples:g}" for b in r.bands if b.active)
        fir = any(b.fir_taps for b in r.bands if b.active)
        lines.append(f"latency    {lats} samples; sum {r.latency_samples:g} samples "
                     f"({r.latency_ms:.2f} ms), "
                     + (("bands aligned" if r.latencies_agree else "bands NOT aligned")
                        if fir else "the bands' delays"))
    if r.warnings:
        lines.append("warnings")
        lines.extend(f"  - {w.text}" for w in r.warnings)
    lines.append(f"result     {_result(r)}")
    if any(w.code in SAFETY_CODES for w in r.warnings):
        lines.append(SAFETY_NOTE)
    return "\n".join(lines)


#: Warnings after which the report repeats the safety note.
SAFETY_CODES = ("headroom", "boost", "shallow-highpass", "tweeter-highpass", "excursion",
                "subsonic")


def _acoustic_head(r: Report) -> list[str]:
    """``acoustic   sum of driver x filters, flat to 87.0 dB (...)`` and each band's level."""
    if not r.acoustic:
        return []
    d = r.drivers
    how = "the least sensitive driver" if d.auto_reference else "acoustics.reference_db"
    out = [f"acoustic   drivers x filters, held flat to {d.reference_db:.1f} dB ({how})"]
    for b, band in zip(r.bands, r.project.bands):
        ac = b.acoustics
        if band.driver is None or ac is None:
            continue
        what = band.driver.model or f"file {band.driver.data.path}"
        lv = "" if ac.level_db is None else f", level {ac.level_db:.1f} dB"
        trim = ("" if ac.suggested_gain_db is None else
                f", gain_db {ac.suggested_gain_db:+.1f} matches it (now {band.gain_db:+.1f})")
        tgt = ("" if ac.target_dev_db is None else
               f", {ac.target_dev_db:.2f} dB from its target at {format_hz(ac.target_at_hz)}")
        out.append(f"           {b.name}: {what}{lv}{trim}{tgt}")
    return out


def _acoustic_info(r: Report) -> list[str]:
    """Group delay against audibility thresholds, and the vertical listening window."""
    if not r.acoustic:
        return []
    out = []
    gda = r.group_delay_audibility()
    if gda:
        parts = ", ".join(f"{format_hz(g['freq_hz'])} {g['excess_ms']:+.2f}"
                          + ("!" if g["above"] else "") + f"/{g['threshold_ms']:g}" for g in gda)
        out.append(f"           excess group delay/audible (ms, Blauert and Laws 1978; "
                   f"information): {parts}")
    ox = r.off_axis
    if ox is not None:
        lobes = "; ".join(f"{'/'.join(lb['bands'])} lobe at {lb['lobe_deg']:+.0f} deg "
                          f"({format_hz(lb['freq_hz'])})" for lb in ox.lobes)
        out.append(f"off-axis   within {ox.window_db:g} dB of on-axis from {ox.window_deg[0]:+.0f} "
                   f"to {ox.window_deg[1]:+.0f} deg at {r.project.acoustics.distance_m:g} m"
                   + (f"; {lobes}" if lobes else ""))
    return out


def _result(r: Report) -> str:
    """``ok: all checks pass`` (naming the checks that only warn), or ``FAIL: ...`` naming
    the failing checks."""
    failed = [c.name for c in r.checks if c.state == "fail"]
    if failed:
        return "FAIL: " + ", ".join(failed)
    warned = [c.name for c in r.checks if c.state == "warn"]
    if warned:
        return f"ok: all checks pass ({', '.join(warned)}: warning only, not enforced)"
    return "ok: all checks pass"


def failure_summary(r: Report) -> str:
    """The failing checks of ``r`` in one phrase, with their figures (empty when none fails).

    ``sum +1.42 dB at 2.2 kHz (limit +/-1 dB); crossing woofer/tweeter at
    2.2 kHz 180.0 deg apart (limit 20 deg)``: for the one final line of
    ``crossplan export``.
    """
    parts = []
    for c in r.checks:
        if c.state != "fail":
            continue
        f = c.figures
        if c.name == "sum":
            tgt = "" if f.get("target") is None else f" from the target {f['target']}"
            parts.append("sum: every band is muted" if f["muted"] else
                         f"sum {f['max_dev_db']:+.2f} dB at {format_hz(f['at_hz'])}{tgt} "
                         f"(limit +/-{f['limit_db']:g} dB)")
        elif c.name == "crossings":
            parts.extend(f"crossing {x.bands[0]}/{x.bands[1]} at {format_hz(x.freq_hz)} "
                         f"{x.phase_diff_deg:+.1f} deg apart (limit {f['limit_deg']:g} deg)"
                         for x in f["failing"])
        elif c.name == "headroom":
            parts.extend(f"headroom {r.bands[i].name} {r.bands[i].peak_gain_db:+.2f} dB "
                         f"(limit {f['limit_db']:+g} dB)" for i in f["over"])
        else:
            parts.append(c.name)
    return "; ".join(parts)


#: Label and IIR column widths of the comparison table.
_LABEL, _COL = 20, 29


def _spec_line(s) -> str:
    if s.kind == "lowpass":
        where = f"pass to {format_hz(s.pass_hz)}, stop from {format_hz(s.stop_hz)}"
    elif s.kind == "highpass":
        where = f"pass from {format_hz(s.pass_hz)}, stop below {format_hz(s.stop_hz)}"
    else:
        where = (f"pass {format_hz(s.pass_hz[0])}-{format_hz(s.pass_hz[1])}, "
                 f"stop below {format_hz(s.stop_hz[0])} and from {format_hz(s.stop_hz[1])}")
    return f"{s.kind}: {where}, level {s.pass_gain_db:+.2f} dB"


def _row(label: str, a: str, b: str, width: int = 80) -> list[str]:
    """One table row; a cell too long for its column goes on to the next lines."""
    ca = textwrap.wrap(a, _COL - 1) or [""]
    cb = textwrap.wrap(b, width - _LABEL - _COL) or [""]
    out = []
    for k in range(max(len(ca), len(cb))):
        x = ca[k] if k < len(ca) else ""
        y = cb[k] if k < len(cb) else ""
        out.append(f"  {label if k == 0 else '':<{_LABEL - 2}}{x:<{_COL}}{y}".rstrip())
    return out


def _pct(x: float, x_db: float) -> str:
    if x <= 0:
        return "none"
    return f"{100 * x:.1f} % ({x_db:.1f} dB)"


def _ratio(x: float | None) -> str:
    if x is None:
        return "-"
    if not math.isfinite(x):
        return "inf"
    return f"{x:.3g}x"


def _band_lines(b, width: int = 80) -> list[str]:
    lines = [f"{b.name}"]
    if b.status != "ok":
        if b.message:
            lines.append(f"  {b.status}: {b.message}")
        else:
            lines.append(f"  {b.status} (full-range EQ only)")
        return lines
    lines[0] += f"  {_spec_line(b.spec)}"
    i, f = b.iir, b.fir

    def who(side, family):
        return f"{family} ({'project' if side.source == 'project' else 'equivalent'})"

    rows = [
        ("", who(i, "IIR"), who(f, "FIR")),
        ("design", i.design, f.design),
        ("order / taps", f"order {i.order}, {i.sections} sections", f"{f.taps} taps"),
        ("multiplies/sample", f"{i.multiplies_per_sample}",
         f"{f.multiplies_per_sample} ({f.multiplies_per_sample_direct} direct)"),
        ("latency", f"{i.latency_samples:g} smp = {i.latency_ms:.3f} ms",
         f"{f.latency_samples:g} smp = {f.latency_ms:.3f} ms"),
        ("group delay var.", f"{i.group_delay_variation_ms:.3f} ms",
         f"{f.group_delay_variation_ms:.3f} ms"),
        ("pre-ringing", _pct(i.pre_ringing, i.pre_ringing_db),
         _pct(f.pre_ringing, f.pre_ringing_db)),
        ("measured ripple", f"{i.ripple_db:.2f} dB", f"{f.ripple_db:.2f} dB"),
        ("measured atten.", f"{i.atten_db:.1f} dB", f"{f.atten_db:.1f} dB"),
    ]
    for r in rows:
        lines.extend(_row(*r, width=width))
    lines.append(f"  {'FIR / IIR':<{_LABEL - 2}}multiplies {_ratio(b.multiplies_ratio)} "
                 f"({_ratio(b.multiplies_ratio_direct)} with the FIR in direct form)")
    return lines


def _build_lines(s) -> list[str]:
    head = f"sum, all {s.family.upper()}"
    if not s.complete:
        return [f"{head:<{_LABEL}}not built: no {s.family.upper()} design for "
                f"{', '.join(s.missing)}"]
    lat = f"{'':<{_LABEL}}latency {s.latency_samples:g} smp = {s.latency_ms:.3f} ms"
    if s.max_dev_db is None:
        return [f"{head:<{_LABEL}}every band is muted", lat]
    how = [f"from the target {s.target}"] if s.target else []
    if s.voicing_set_aside:
        how.append("voicing set aside")
    how_text = f" ({', '.join(how)})" if how else ""
    return [f"{head:<{_LABEL}}{s.max_dev_db:+.2f} dB at {format_hz(s.at_hz)}, ripple "
            f"{s.ripple_db:.2f} dB{how_text}", lat]


def compare_text(c, width: int = 80) -> str:
    """A :class:`planner.compare.Comparison` as lines of at most ``width`` columns (>= 70)."""
    lines = [f"{c.name}  ({c.sample_rate / 1000:g} kHz)",
             "IIR and FIR meeting the magnitude spec read from each band's crossover:",
             f"ripple {c.ripple_db:g} dB, attenuation {c.atten_db:g} dB", ""]
    for b in c.bands:
        lines.extend(_band_lines(b, width))
        lines.append("")
    lines.extend(_build_lines(c.iir_sum))
    lines.extend(_build_lines(c.fir_sum))
    al = c.fir_sum.align_samples
    if c.fir_sum.complete and any(al):
        lines.append(" " * _LABEL + "aligned: " + ", ".join(
            f"{b.name} +{a:g}" for b, a in zip(c.bands, al) if a) + " samples")
    if c.fir_sum.inverted:
        lines.append(" " * _LABEL + f"kept inverted as in the project: "
                     f"{', '.join(c.fir_sum.inverted)}")
    if c.fir_sum.complete and c.fir_sum.max_dev_db is not None and any(
            b.own == "iir" for b in c.bands if b.status == "ok"):
        lines.append(" " * _LABEL + "(independent equivalents are not complementary: for a "
                     "flat")
        lines.append(" " * _LABEL + " FIR sum use a split of the fir family)")
    return "\n".join(_wrap(lines, width))


def _wrap(lines: list[str], width: int = 80) -> list[str]:
    out = []
    for line in lines:
        if len(line) <= width:
            out.append(line)
            continue
        indent = len(line) - len(line.lstrip())
        out.extend(textwrap.wrap(line, width, subsequent_indent=" " * (indent + 2)))
    return out
