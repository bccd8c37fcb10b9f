"""What the solvers found, as plain text and as JSON-ready dicts.

Before and after side by side: the sum's flatness, the phase at each
crossing (matched by its two bands), the latency; then the changes, the
bounds that stopped the search, and where the result was written.
"""

from __future__ import annotations

import textwrap

from planner.engine import Report
from planner.present.text import SAFETY_NOTE
from planner.units import format_hz

__all__ = ["alignment_text", "alignment_dict", "fit_text", "fit_dict", "summary_dict"]


def _fold(lines: list[str], width: int = 80) -> str:
    """Lines longer than ``width`` folded at spaces, continued with an indent (a
    ``wrote PATH`` line stays whole: a path is copied, not read)."""
    out = []
    for line in lines:
        if len(line) <= width or line.startswith("wrote "):
            out.append(line)
        else:
            lead = len(line) - len(line.lstrip())
            out += textwrap.wrap(line, width - 1, subsequent_indent=" " * (lead + 4))
    return "\n".join(out)


def _crossings(r: Report) -> dict:
    return {c.bands: c for c in r.checked_crossings}


def summary_dict(r: Report) -> dict:
    """The figures a solver reports of one project: flatness, crossings, latency, verdict."""
    return {"ok": r.ok, "max_dev_db": r.max_dev_db, "at_hz": r.at_hz,
            "crossings": [{"bands": list(c.bands), "freq_hz": c.freq_hz,
                           "phase_diff_deg": c.phase_diff_deg, "ok": c.ok}
                          for c in r.checked_crossings],
            "latency_ms": max((b.delay_ms for b in r.project.bands), default=0.0)}


def _side_by_side(before: Report, after: Report) -> list[str]:
    a = before.project.analysis
    lines = [f"{'':24}{'before':>14}{'after':>14}",
             (f"{'sum flatness':24}{before.max_dev_db:>+11.2f} dB{after.max_dev_db:>+11.2f} dB"
              f"   (limit +/-{a.flatness_db:g} dB)")]
    b0, b1 = _crossings(before), _crossings(after)
    for pair in list(b0) + [p for p in b1 if p not in b0]:
        c0, c1 = b0.get(pair), b1.get(pair)
        where = format_hz((c1 or c0).freq_hz)
        label = f"{pair[0]}/{pair[1]} {where}"
        v0 = f"{c0.phase_diff_deg:+.1f} deg" if c0 else "--"
        v1 = f"{c1.phase_diff_deg:+.1f} deg" if c1 else "--"
        lines.append(f"{label[:24]:24}{v0:>14}{v1:>14}   (limit {a.phase_deg:g} deg)")
    lat0 = max((b.delay_ms for b in before.project.bands), default=0.0)
    lat1 = max((b.delay_ms for b in after.project.bands), default=0.0)
    lines.append(f"{'largest band delay':24}{lat0:>11.4g} ms{lat1:>11.4g} ms")
    lines.append(f"{'checks':24}{'ok' if before.ok else 'FAIL':>14}"
                 f"{'ok' if after.ok else 'FAIL':>14}")
    return lines


def alignment_text(a, written: str | None, target: str = "flat") -> str:
    """The report of ``crossplan align``."""
    p = a.before.project
    lines = [f"align: {p.name} ({len(p.bands)} bands, target {target})"]
    lines += _side_by_side(a.before, a.after)
    if not a.improved:
        lines.append("no better alignment found within the bounds; nothing written")
        return _fold(lines)
    lines.append(f"latency added: {a.latency_added_ms:+.4g} ms")
    lines.append("changes:")
    lines += [f"  {c}" for c in a.changes]
    if a.at_bounds:
        lines.append("bounds reached (widen them: the options, or the file's solve section):")
        lines += [f"  {b}" for b in a.at_bounds]
    if any(b1.gain_db > b0.gain_db + 1e-6 for b0, b1 in zip(p.bands, a.project.bands)):
        lines.append("note: a band's level went up; check the headroom.")
        lines += textwrap.wrap(SAFETY_NOTE, 79)
    lines.append(f"wrote {written}")
    return _fold(lines)


def alignment_dict(a, written: str | None) -> dict:
    """The JSON of ``crossplan align --json``."""
    return {"improved": a.improved, "written": written,
            "before": summary_dict(a.before), "after": summary_dict(a.after),
            "objective_before": a.objective_before, "objective_after": a.objective_after,
            "latency_added_ms": a.latency_added_ms, "changes": list(a.changes),
            "at_bounds": list(a.at_bounds)}


def fit_text(f, written: str) -> str:
    """The report of ``crossplan fit``."""
    p = f.before.project
    r = f.result
    lines = [f"fit: {p.name} to target {f.target.name} ({len(f.names)} gains, {r.method})",
             f"{'':24}{'before':>14}{'after':>14}",
             (f"{'largest error':24}{f.before_max_db:>+11.2f} dB{r.max_error_db:>+11.2f} dB"
              f"   at {format_hz(r.max_at_hz)}"),
             f"{'rms error':24}{f.before_rms_db:>11.2f} dB{r.rms_error_db:>11.2f} dB"]
    lines.append(f"largest error: {r.max_error_db:+.2f} dB at {format_hz(r.max_at_hz)}: {f.why}")
    lines.append("gains (dB):")
    idle = set(f.left_alone)
    cells = [f"{lab} {g:+.2f}" + ("*" if n in idle else "")
             for lab, n, g in zip(f.labels, f.names, f.gains_db)]
    width = max((len(c) for c in cells), default=0) + 3
    per = max(1, 78 // width)
    lines += ["  " + "".join(f"{c:<{width}}" for c in cells[k:k + per]).rstrip()
              for k in range(0, len(cells), per)]
    if idle:
        lines.append("  * left alone: its band hardly plays where the filter acts")
    if f.at_limits:
        lines.append("at their limits:")
        lines += [f"  {x}" for x in f.at_limits]
    boost = max((g for g in f.gains_db), default=0.0)
    if boost > 0:
        lines.append(f"note: boosts up to {boost:+.1f} dB; check the headroom.")
        lines += textwrap.wrap(SAFETY_NOTE, 79)
    h = f.after.check("headroom")
    lines.append(f"headroom: {h.text} (peak gain "
                 f"{max(b.peak_gain_db for b in f.after.bands):+.1f} dB)")
    lines.append(f"wrote {written}")
    return _fold(lines)


def fit_dict(f, written: str) -> dict:
    """The JSON of ``crossplan fit --json``."""
    r = f.result
    return {"written": written, "target": f.target.name, "method": r.method,
            "gains": [{"field": n, "gain_db": float(g)} for n, g in zip(f.names, f.gains_db)],
            "before": {"max_error_db": f.before_max_db, "rms_error_db": f.before_rms_db},
            "after": {"max_error_db": r.max_error_db, "max_at_hz": r.max_at_hz,
                      "rms_error_db": r.rms_error_db, "why": f.why,
                      "headroom_ok": f.after.headroom_ok},
            "at_limits": list(f.at_limits), "left_alone": list(f.left_alone)}
