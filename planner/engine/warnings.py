"""Plain-language warnings of a check report: what is wrong, and what would help.

Each warning names its band (and filter) where it can, so the editor can
select it. They never fail the check: the verdicts are the report's
:class:`~planner.engine.result.CheckResult` s.
"""

from __future__ import annotations

from planner import config
from planner import filters as fk
from planner.engine.result import Report, Warning_
from planner.engine.rounding import fraction_warnings
from planner.engine.safety import driver_warnings
from planner.units import format_hz

__all__ = ["warnings_of", "LATENCY_TOL_SAMPLES"]


#: Latencies closer than this (samples) count as equal (see :mod:`planner.config`).
LATENCY_TOL_SAMPLES = config.LATENCY_TOL_SAMPLES


def _fmt_samples(x: float) -> str:
    return f"{x:.0f}" if abs(x - round(x)) < 1e-9 else f"{x:.3f}"


def _latency_warnings(r: Report) -> list[Warning_]:
    """Active bands whose latencies differ, when an FIR is among them.

    Each band that leads the latest one gets a warning naming both, the
    difference in samples and ms, and the delay_ms that would align it.
    Projects of IIR bands only are left alone: there a difference of
    delay_ms is a choice (driver alignment), not an FIR's latency.
    """
    p, fs = r.project, r.project.sample_rate
    act = [i for i, on in enumerate(r.active) if on]
    if not any(r.designs[i].fir is not None for i in act) or r.latencies_agree:
        return []

    def what(i):
        d = r.designs[i]
        if d.fir is None:
            return f"IIR, latency {_fmt_samples(d.latency_samples)} samples"
        return f"FIR, latency {_fmt_samples(d.latency_samples)} samples"

    late = max(act, key=lambda i: r.designs[i].latency_samples)
    top = r.designs[late].latency_samples
    out = []
    for i in act:
        diff = top - r.designs[i].latency_samples
        if diff <= LATENCY_TOL_SAMPLES:
            continue
        ms = 1000.0 * diff / fs
        name = p.bands[i].name
        new = p.bands[i].delay_ms + ms
        out.append(Warning_(
            f"band {name} ({what(i)}) leads band {p.bands[late].name} ({what(late)}) by "
            f"{_fmt_samples(diff)} samples ({ms:.6g} ms): add delay_ms {ms:.6g} to {name}"
            + (f" (making it {new:.6g})" if p.bands[i].delay_ms else ""),
            band=i, code="latency"))
    return out


def _kind_warnings(r: Report) -> list[Warning_]:
    """Warnings each filter kind raises about its filters across the active bands.

    A kind with ``project_warnings`` (the bands of a complementary FIR split,
    which must add up to a pure delay) is given every live filter of it in
    an active band.
    """
    p = r.project
    found: dict = {}
    for i, on in enumerate(r.active):
        if not on:
            continue
        for j, f in enumerate(p.bands[i].filters):
            kind = fk.kind_of(f)
            if not f.bypass and kind.project_warnings is not None:
                found.setdefault(kind.key, (kind, []))[1].append((i, p.bands[i].name, j, f.params))
    return [Warning_(w.text, w.band, w.filter, w.code)
            for kind, items in found.values() for w in kind.project_warnings(items)]


def _phase_hint(r: Report, c) -> tuple[str, int]:
    """What would bring a crossing's phase difference to 0: inverting, or a delay (with value).

    A band that leads by ``phi`` degrees at ``f`` Hz lines up with the other
    when delayed by ``phi / (360 f)`` seconds (a delay of ``t`` turns the
    phase by ``-360 f t`` degrees, Oppenheim and Schafer sec. 2.7); the
    phase difference is that of the first band minus the second.
    """
    d = c.phase_diff_deg
    if abs(d) >= config.INVERT_HINT_DEG:
        return "try inverting one", c.band_index[1]
    lead = 0 if d > 0 else 1
    i = c.band_index[lead]
    ms = abs(d) / (360.0 * c.freq_hz) * 1000.0
    band = r.project.bands[i]
    new = band.delay_ms + ms
    return (f"band {band.name} leads by {abs(d):.0f} deg there: add delay_ms {ms:.4g} to "
            f"{band.name}" + (f" (making it {new:.4g})" if band.delay_ms else "")
            + " to line them up at the crossing (an all-pass at the crossing does it too, "
            "without delaying the rest of the band)"), i


def warnings_of(r: Report) -> list[Warning_]:
    """Plain-language warnings about the sum, the crossings, headroom and risky filters."""
    p, a = r.project, r.project.analysis
    out: list[Warning_] = []
    if not any(r.active):
        out.append(Warning_("every band is muted: nothing is summed", code="all-muted"))
        return out
    out.extend(_kind_warnings(r))
    out.extend(_latency_warnings(r))
    if not r.flat_ok:
        out.append(Warning_(
            f"the sum deviates by {r.max_dev_db:+.2f} dB at {format_hz(r.at_hz)} "
            f"(limit +/-{a.flatness_db:g} dB)", code="flatness"))
    for c in r.checked_crossings:
        if c.ok:
            continue
        deg = abs(c.phase_diff_deg)
        where = f"bands {c.bands[0]} and {c.bands[1]} are {deg:.0f} deg apart at {format_hz(c.freq_hz)}"
        hint, band = _phase_hint(r, c)
        out.append(Warning_(f"{where}: {hint}", band=band, code="phase"))
    for i in r.check("headroom").figures["over"]:
        b = r.bands[i]
        out.append(Warning_(
            f"band {b.name} peaks at {b.peak_gain_db:+.1f} dB near {format_hz(b.peak_at_hz)}: "
            f"lower its gain by {b.peak_gain_db:.1f} dB (or attenuate its input) "
            "so that it cannot clip", band=i, code="headroom"))
    for i, band in enumerate(p.bands):
        live = [(j, f) for j, f in enumerate(band.filters) if not f.bypass]
        for j, f in live:
            g = f.params.get("gain_db", 0.0)
            if f.type in ("peaking", "low_shelf", "high_shelf") and g > config.BOOST_WARN_DB:
                out.append(Warning_(
                    f"band {band.name}, filter {j + 1}: a {g:+.1f} dB boost drives the driver "
                    "harder and eats headroom; check the manufacturer's limits",
                    band=i, filter=j, code="boost"))
        hps = [(j, f) for j, f in live if f.type == "highpass"]
        if hps and band.driver is None:    # bands with a driver: planner.engine.safety
            j, top = max(hps, key=lambda jf: jf[1].params["freq"])
            order = top.params.get("order", 2)
            if (top.params["freq"] >= config.TWEETER_HIGHPASS_HZ
                    and order < config.TWEETER_MIN_ORDER and top.family != "fir"):
                # Common practice, no published source: a tweeter wants a
                # highpass of at least 12 dB/octave.
                out.append(Warning_(
                    f"band {band.name} is protected only by a first-order (6 dB/octave) "
                    f"highpass at {format_hz(top.params['freq'])}: a tweeter usually needs "
                    "12 dB/octave or more", band=i, filter=j, code="shallow-highpass"))
    out.extend(driver_warnings(r))
    out.extend(fraction_warnings(r))
    return out
