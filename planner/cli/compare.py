"""``crossplan compare FILE [--json] [--ripple-db R] [--atten-db A]``: IIR versus FIR per band.

Exit 0 when every band with a crossover was compared, 1 when some band's
spec cannot be met (the reason is printed; the other bands are still
shown), 2 for an invalid file or option.
"""

from __future__ import annotations

import argparse
import json
import math

from planner.compare import DEFAULT_ATTEN_DB, DEFAULT_RIPPLE_DB, IIR_FAMILIES


def _db_value(text: str) -> float:
    try:
        v = float(text)
    except ValueError:
        v = float("nan")
    if not (v > 0 and math.isfinite(v)):
        raise argparse.ArgumentTypeError(f"must be a positive number of dB, not {text!r}")
    return v


def _taps_value(text: str) -> int:
    try:
        v = int(text)
    except ValueError:
        v = 0
    if v < 3:
        raise argparse.ArgumentTypeError(f"must be a whole number of taps >= 3, not {text!r}")
    return v


def add_arguments(p, name):
    p.add_argument("file", metavar="FILE", help="project file (JSON)")
    p.add_argument("--json", action="store_true", help="print one JSON object")
    p.add_argument("--ripple-db", type=_db_value, default=DEFAULT_RIPPLE_DB, metavar="R",
                   help="pass band: where each band's response leaves an R dB window "
                        f"(default {DEFAULT_RIPPLE_DB:g})")
    p.add_argument("--atten-db", type=_db_value, default=DEFAULT_ATTEN_DB, metavar="A",
                   help="stop band: where each band's response stays A dB below its pass gain "
                        f"(default {DEFAULT_ATTEN_DB:g})")
    p.add_argument("--iir-family", choices=IIR_FAMILIES, default="auto",
                   help="IIR equivalents of FIR bands: auto (Butterworth up to order 8, "
                        "else elliptic), butterworth or elliptic")
    p.add_argument("--max-taps", type=_taps_value, default=None, metavar="N",
                   help="longest FIR equivalent tried (default 8191)")


def run(args) -> int:
    from planner.cli.common import designing

    return designing(lambda: _run(args))


def _run(args) -> int:
    from planner import compare
    from planner.cli.check import _finite
    from planner.cli.common import load_project
    from planner.dsp.fir import DEFAULT_MAX_TAPS
    from planner.errors import ProjectError

    if not args.atten_db > args.ripple_db:
        raise ProjectError(f"{args.atten_db:g} dB must be above --ripple-db "
                           f"({args.ripple_db:g} dB)", field="--atten-db")
    proj = load_project(args.file)
    c = compare.compare_project(proj, args.ripple_db, args.atten_db, args.iir_family,
                                args.max_taps or DEFAULT_MAX_TAPS)
    if args.json:
        print(json.dumps(_finite(c.to_dict()), indent=2, allow_nan=False))
    else:
        print(text(c))
    return 0 if c.ok else 1


# --------------------------------------------------------------------------
# the table (80 columns)

_LABEL, _COL = 20, 29


def _hz(f: float) -> str:
    from planner.filters import format_hz

    return format_hz(f)


def _spec_line(s) -> str:
    if s.kind == "lowpass":
        where = f"pass to {_hz(s.pass_hz)}, stop from {_hz(s.stop_hz)}"
    elif s.kind == "highpass":
        where = f"pass from {_hz(s.pass_hz)}, stop below {_hz(s.stop_hz)}"
    else:
        where = (f"pass {_hz(s.pass_hz[0])}-{_hz(s.pass_hz[1])}, "
                 f"stop below {_hz(s.stop_hz[0])} and from {_hz(s.stop_hz[1])}")
    return f"{s.kind}: {where}, level {s.pass_gain_db:+.2f} dB"


def _row(label: str, a: str, b: str) -> list[str]:
    """One table row; a cell too long for its column goes on to the next lines."""
    import textwrap

    ca = textwrap.wrap(a, _COL - 1) or [""]
    cb = textwrap.wrap(b, 80 - _LABEL - _COL) or [""]
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


def _band_lines(b) -> list[str]:
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
        lines.extend(_row(*r))
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
    return [f"{head:<{_LABEL}}{s.max_dev_db:+.2f} dB at {_hz(s.at_hz)}, ripple "
            f"{s.ripple_db:.2f} dB", lat]


def text(c) -> str:
    """The comparison as lines of at most 80 columns."""
    lines = [f"{c.name}  ({c.sample_rate / 1000:g} kHz)",
             "IIR and FIR meeting the magnitude spec read from each band's crossover:",
             f"ripple {c.ripple_db:g} dB, attenuation {c.atten_db:g} dB", ""]
    for b in c.bands:
        lines.extend(_band_lines(b))
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
    return "\n".join(_wrap(lines))


def _wrap(lines: list[str], width: int = 80) -> list[str]:
    import textwrap

    out = []
    for line in lines:
        if len(line) <= width:
            out.append(line)
            continue
        indent = len(line) - len(line.lstrip())
        out.extend(textwrap.wrap(line, width, subsequent_indent=" " * (indent + 2)))
    return out
