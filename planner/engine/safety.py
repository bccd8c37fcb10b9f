"""Warnings about drivers: level matching, data beyond its range, and what can damage a driver.

Speakers and ears can be damaged: a tweeter driven below its resonance or
with too shallow a highpass, a boost that asks a woofer for more excursion
than it has, a vented box unloaded below its tuning. These checks point at
such designs; they cannot know a driver's power handling, and they never
replace the manufacturers' limits. The thresholds are in
:mod:`planner.config` (common practice, no published source).
"""

from __future__ import annotations

from planner import config
from planner.engine.acoustic import TRIM_WARN_DB
from planner.engine.result import Report, Warning_
from planner.filters.driver import linkwitz_boost_db
from planner.model import Band, Filter
from planner.units import format_hz

__all__ = ["driver_warnings", "excursion_warnings"]

_TWEETERS = ("tweeter", "compression")


def _highpasses(band: Band) -> list[tuple[int, Filter]]:
    live = [(j, f) for j, f in enumerate(band.filters) if not f.bypass]
    return [(j, f) for j, f in live
            if f.type == "highpass" or (f.type == "split" and f.params.get("band", 0) > 0)]


def _edge(f: Filter) -> float:
    if f.type == "split":
        return float(f.params["crossovers"][f.params["band"] - 1])
    return float(f.params["freq"])


def _tweeter_warnings(i: int, band: Band) -> list[Warning_]:
    d = band.driver
    role = d.role or ("tweeter" if d.model == "tweeter" else None)
    if role not in _TWEETERS:
        return []
    hps = _highpasses(band)
    what = "compression driver" if role == "compression" else "tweeter"
    if not hps:
        return [Warning_(f"band {band.name} drives a {what} with no highpass at all: full-range "
                         "signal can destroy it in seconds; add a highpass of 12 dB/octave or "
                         "more", band=i, code="tweeter-highpass")]
    j, top = max(hps, key=lambda jf: _edge(jf[1]))
    out = []
    res = d.resonance_hz
    if res is not None and _edge(top) < config.TWEETER_RESONANCE_FACTOR * res:
        out.append(Warning_(
            f"band {band.name}: its {what}'s highpass at {format_hz(_edge(top))} is below "
            f"{config.TWEETER_RESONANCE_FACTOR:g} x its resonance ({format_hz(res)}): move it "
            f"to {format_hz(config.TWEETER_RESONANCE_FACTOR * res)} or above", band=i, filter=j,
            code="tweeter-highpass"))
    order = top.params.get("order", 2) if top.family != "fir" and top.type != "split" else 99
    if order < config.TWEETER_MIN_ORDER:
        out.append(Warning_(
            f"band {band.name}: its {what} is protected by a first-order (6 dB/octave) "
            f"highpass only; a {what} wants 12 dB/octave or more", band=i, filter=j,
            code="tweeter-highpass"))
    return out


def _boost_db(f: Filter) -> float:
    """What a filter boosts below config.LOW_BOOST_HZ (dB, 0 for none)."""
    p = f.params
    if f.type == "linkwitz_transform":
        return max(0.0, linkwitz_boost_db(p))
    if f.type == "low_shelf" or (f.type == "peaking" and p["freq"] <= config.LOW_BOOST_HZ):
        return max(0.0, p["gain_db"])
    return 0.0


def excursion_warnings(i: int, band: Band) -> list[Warning_]:
    """Low-frequency boosts that ask the driver for more excursion (any band)."""
    out = []
    for j, f in enumerate(band.filters):
        g = 0.0 if f.bypass else _boost_db(f)
        if g > config.LOW_BOOST_DB:
            out.append(Warning_(
                f"band {band.name}, filter {j + 1}: a {g:+.1f} dB boost at low frequencies "
                "asks the driver for more excursion and the amplifier for more power; check "
                "the driver's limits and add a subsonic highpass", band=i, filter=j,
                code="excursion"))
    return out


def _vented_warnings(i: int, band: Band) -> list[Warning_]:
    d = band.driver
    if d.model != "vented-box":
        return []
    fb = d.params["fc"]
    hps = [f for _, f in _highpasses(band)]
    if any(_edge(f) >= config.SUBSONIC_FRACTION * fb for f in hps):
        return []
    return [Warning_(f"band {band.name}: a vented box tuned near {format_hz(fb)} unloads below "
                     "its tuning (the cone moves freely there); add a subsonic highpass at "
                     f"{format_hz(config.SUBSONIC_FRACTION * fb)} or above", band=i,
                     code="subsonic")]


def _breakup_warnings(i: int, band: Band) -> list[Warning_]:
    p = band.driver.params
    if p.get("breakup_hz") is None or p["breakup_db"] <= config.BREAKUP_WARN_DB:
        return []
    f0 = p["breakup_hz"]
    for f in band.filters:
        if f.bypass or "freq" not in f.params:
            continue
        fr = f.params["freq"]
        cut = f.type in ("notch", "breakup_notch") or (f.type == "peaking"
                                                      and f.params["gain_db"] < 0)
        if cut and abs(fr / f0 - 1) < 0.25:
            return []                   # a cut at the peak
        if f.type == "lowpass" and fr <= f0 / 2:
            return []                   # the band hands over an octave or more below it
    return [Warning_(
        f"band {band.name}: its driver's break-up peak (+{p['breakup_db']:.1f} dB at "
        f"{format_hz(f0)}) is in the band: add a breakup_notch of {p['breakup_db']:.1f} dB at "
        f"{format_hz(f0)}, q {p.get('breakup_q', 4.0):g}", band=i, code="breakup")]


def _level_warnings(r: Report, i: int, band: Band) -> list[Warning_]:
    ac = r.bands[i].acoustics
    if ac is None or ac.suggested_gain_db is None:
        return []
    off = band.gain_db - ac.suggested_gain_db
    if abs(off) <= TRIM_WARN_DB:
        return []
    return [Warning_(
        f"band {band.name}: its driver's level ({ac.level_db:.1f} dB) with gain_db "
        f"{band.gain_db:+.1f} stands {off:+.1f} dB from the reference ({r.drivers.reference_db:.1f} "
        f"dB): gain_db {ac.suggested_gain_db:+.1f} matches it", band=i, code="level")]


def _data_warnings(i: int, band: Band, f_min: float, f_max: float) -> list[Warning_]:
    d = band.driver
    if d.data is None or not d.extrapolate:
        return []
    lo, hi = float(d.data.freqs_hz[0]), float(d.data.freqs_hz[-1])
    if lo <= f_min and hi >= f_max:
        return []
    return [Warning_(f"band {band.name}: {d.data.path} covers {format_hz(lo)} - {format_hz(hi)}; "
                     "beyond it the response is extrapolated by its edge slopes (extrapolate is "
                     "on), not measured", band=i, code="extrapolated")]


def driver_warnings(r: Report) -> list[Warning_]:
    """Every driver warning of the report's project (active bands)."""
    out: list[Warning_] = []
    a = r.project.analysis
    for i, band in enumerate(r.project.bands):
        if not r.active[i]:
            continue
        out.extend(excursion_warnings(i, band))
        if band.driver is None:
            continue
        out.extend(_tweeter_warnings(i, band))
        out.extend(_vented_warnings(i, band))
        out.extend(_breakup_warnings(i, band))
        out.extend(_data_warnings(i, band, a.f_min, a.f_max))
        if r.acoustic:
            out.extend(_level_warnings(r, i, band))
    return out
