"""Plain-language warnings of a check report: what is wrong, and what would help.

Each warning names its band (and filter) where it can, so the editor can
select it. They never fail the check: the verdicts are the report's
:class:`~planner.engine.result.CheckResult` s.
"""

from __future__ import annotations

from dataclasses import replace
from typing import Callable

import numpy as np

from planner import config
from planner import filters as fk
from planner import project as pj
from planner.dsp import analysis as an
from planner.engine.design import design_band, evaluate
from planner.engine.result import Report, Warning_, sum_within
from planner.engine.rounding import fraction_warnings
from planner.engine.safety import driver_warnings
from planner.errors import CrossplanError
from planner.model import Band
from planner.units import format_hz

__all__ = ["warnings_of", "LATENCY_TOL_SAMPLES", "phase_fixes", "PhaseFix", "PENDING_HINT"]


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


class PhaseFix:
    """One change tried for a crossing whose phase difference is over the limit.

    ``what`` is the change in words (``"add an all-pass (order 2, Q 0.707) at 350 Hz to
    tweeter"``), ``project`` the project with it made, ``band`` the band it changes,
    ``phase_deg`` the crossing's phase difference after it (None when the crossing is
    gone), ``worst_deg`` the largest phase difference of any checked crossing after it,
    and ``ok`` whether the whole check then passes.
    """

    def __init__(self, what, project, band, phase_deg, worst_deg, ok, adds_delay=False):
        self.what, self.project, self.band = what, project, band
        self.phase_deg, self.worst_deg, self.ok = phase_deg, worst_deg, ok
        #: the change delays a band (adds latency; an all-pass or inversion does not)
        self.adds_delay = adds_delay
        #: the figures come from a full analysis of ``project`` (not only from the
        #: report's responses)
        self.checked = False


def _sides(r: Report, c) -> tuple[set[int], set[int]]:
    """The bands joined to each band of crossing ``c`` by the other checked crossings."""
    edges = [x.band_index for x in r.checked_crossings if x.band_index != c.band_index]
    out = []
    for start in c.band_index:
        seen, todo = {start}, [start]
        other = c.band_index[1] if start == c.band_index[0] else c.band_index[0]
        while todo:
            k = todo.pop()
            for a, b in edges:
                for x, y in ((a, b), (b, a)):
                    if x == k and y not in seen and y != other:
                        seen.add(y)
                        todo.append(y)
        out.append(seen)
    return out[0], out[1]


def _candidates(r: Report, c) -> list[tuple[str, object, int, dict]]:
    """Changes that may bring crossing ``c`` in phase: (words, project, band changed, delta).

    ``delta`` maps each band the change touches to a band holding only the change
    (the inversion, the all-pass, the delay), whose response multiplies that band's.
    Each change has unit magnitude at every frequency, so the bands' levels, hence the
    crossing frequencies and the headroom, stay as they are.

    * inverting one band, when the bands are nearly opposite;
    * a second-order all-pass (Q 0.7071, the phase of a Linkwitz-Riley 4 pair's sum) or a
      first-order one at each other crossover frequency, in either band: the band that
      lacks the other crossover's filter then gets its phase (as a 3-way's woofer carries
      an all-pass at the upper crossover);
    * delaying the leading band by ``phi / (360 f)`` s (a delay of ``t`` turns the phase by
      ``-360 f t`` degrees, Oppenheim and Schafer sec. 2.7), alone or with every band
      joined to it by the other crossings, so that those stay as they are.
    """
    p = r.project
    fs = p.sample_rate
    d = c.phase_diff_deg
    out = []
    ia, ib = c.band_index
    if abs(d) >= 90.0:
        b = p.bands[ib]
        out.append((f"invert {b.name}", p.with_band(ib, replace(b, invert=not b.invert)), ib,
                    {ib: Band("change", invert=True)}))
    others = sorted({x.freq_hz for x in r.checked_crossings if x.band_index != c.band_index
                     and abs(x.freq_hz - c.freq_hz) > 0.01 * c.freq_hz},
                    key=lambda f: abs(np.log(f / c.freq_hz)))[:config.PHASE_HINT_NEAREST]
    for f in others:
        if not f < fs / 2:
            continue
        for order, q in ((2, 0.7071067811865476), (1, None)):
            raw = {"type": "allpass", "freq": round(f, 6), "order": order}
            if q is not None:
                raw["q"] = q
            flt = pj.check_filter(raw, fs)
            for i in (ia, ib):
                b = p.bands[i]
                label = (f"an all-pass (order 2, Q 0.707) at {format_hz(f)}" if order == 2
                         else f"a first-order all-pass at {format_hz(f)}")
                out.append((f"add {label} to {b.name}",
                            p.with_band(i, replace(b, filters=b.filters + (flt,))), i,
                            {i: Band("change", filters=(flt,))}))
    lead, ms = _aligning_delay(c)
    side_a, side_b = _sides(r, c)
    groups = [[lead]]
    side = sorted(side_a if lead == ia else side_b)
    if side != [lead]:
        groups.append(side)
    for g in groups:
        q = p
        delta = {}
        for i in g:
            b = q.bands[i]
            new_ms = round(b.delay_ms + ms, 6)
            q = q.with_band(i, replace(b, delay_ms=new_ms))
            delta[i] = Band("change", delay_ms=new_ms - b.delay_ms)
        names = " and ".join(p.bands[i].name for i in g)
        out.append((f"add delay_ms {ms:.4g} to {names}", q, lead, delta))
    return out


def _aligning_delay(c) -> tuple[int, float]:
    """The band of crossing ``c`` that leads, and the delay (ms) that turns it back by the
    phase difference there: a delay of ``t`` turns the phase by ``-360 f t`` degrees
    (Oppenheim and Schafer sec. 2.7)."""
    d = c.phase_diff_deg
    return c.band_index[0 if d > 0 else 1], abs(d) / (360.0 * c.freq_hz) * 1000.0


def _screened(r: Report, c, candidates: list) -> list[PhaseFix]:
    """The figures each change of ``candidates`` (from :func:`_candidates`) would give,
    from the report's own responses.

    A change multiplies the bands in its ``delta`` by the responses of their delta
    bands (unit magnitude), so the crossings stay where they are and only their phases
    move: each checked crossing's phase difference after the change is the one before
    plus the change's phase there (exact). The sum after it is the report's checked
    sum with the changed bands' terms replaced, on the report's grid (the grid was
    refined for the sum before; a full analysis confirms a change before a hint names
    it as checked). Every delta band is evaluated in one pass.
    """
    if not candidates:
        return []
    fs = r.project.sample_rate
    a = r.project.analysis
    freqs = r.freqs_hz
    nf = len(freqs)
    h = r.checked_h if r.checked_h is not None else r.responses.h
    base = r.checked_sum_h if r.checked_sum_h is not None else r.sum_h
    xs = r.checked_crossings
    grid = np.concatenate([freqs, [x.freq_hz for x in xs]])
    deltas = [(i, b) for *_, delta in candidates for i, b in delta.items()]
    turns = evaluate([design_band(b, fs) for _, b in deltas], grid, fs).h
    t_db = 0.0 if r.target_db is None else r.target_db
    others_ok = all(ch.state != "fail" for ch in r.checks if ch.name not in ("sum", "crossings"))
    before = np.array([x.phase_diff_deg for x in xs], dtype=float)
    first = np.array([x.band_index[0] for x in xs], dtype=int)
    second = np.array([x.band_index[1] for x in xs], dtype=int)
    mine = np.array([x.band_index == c.band_index for x in xs], dtype=bool)
    out, row = [], 0
    for what, proj, band, delta in candidates:
        total = base.copy()
        turn_deg = np.zeros(len(xs))
        for i in delta:
            g = turns[row]
            row += 1
            if r.active[i]:
                total += h[i] * (g[:nf] - 1.0)
            ang = np.degrees(np.angle(g[nf:]))
            turn_deg += np.where(first == i, ang, 0.0) - np.where(second == i, ang, 0.0)
        max_dev, _, _ = an.flatness(freqs, total, t_db)
        flat_ok = sum_within(max_dev, a.flatness_db)
        after = np.abs(an.wrap_deg(before + turn_deg))
        worst = float(after.max()) if len(after) else 0.0
        same = float(after[mine].min()) if mine.any() else None
        out.append(PhaseFix(what, proj, band, same, worst,
                            flat_ok and worst <= a.phase_deg and others_ok,
                            what.startswith("add delay")))
    return out


def _order(fixes: list[PhaseFix]) -> list[PhaseFix]:
    # Passing first; then the smallest worst phase (to 0.1 deg); then this crossing's own
    # phase; then no added latency.
    return sorted(fixes, key=lambda x: (not x.ok, round(x.worst_deg, 1),
                                        round(x.phase_deg, 1) if x.phase_deg is not None
                                        else np.inf, x.adds_delay, x.worst_deg))


def _cited(fixes: list[PhaseFix], limit: float) -> list[PhaseFix]:
    """The fixes a hint names: the first that brings the crossing within ``limit`` and the
    first passing alternative of the other kind (latency or none) after it."""
    good = [x for x in fixes if x.phase_deg is not None and x.phase_deg <= limit]
    if not good:
        return []
    alt = [x for x in good[1:] if x.ok and x.worst_deg <= limit
           and x.adds_delay != good[0].adds_delay]
    return good[:1] + alt[:1]


def phase_fixes(r: Report, c, reanalyse: Callable, budget: list | None = None) -> list[PhaseFix]:
    """Every candidate change for crossing ``c`` (:func:`_candidates`), best first.

    Each is first judged from the report's own responses (:func:`_screened`: the
    crossings' phases after it exactly, the sum's flatness on the report's grid); the
    ones a hint would name are then checked by analysing the changed project again
    (``reanalyse(project) -> Report``), and the order is made again with their
    figures, until the named ones are all checked. Order: those that pass the whole
    check, then by the largest phase difference after (to 0.1 deg), then by this
    crossing's own phase difference after (to 0.1 deg: when another crossing sets the
    largest, the change that lines this one up best comes first), then those that add
    no latency. ``budget`` (a one-item list, the analyses left) is used up by the full
    analyses; when it runs out, the fixes not yet checked keep their first figures and
    ``checked`` False.
    """
    try:
        out = _screened(r, c, _candidates(r, c))
    except CrossplanError:        # a change that cannot be made: none judged this way
        out = []
    limit = r.project.analysis.phase_deg
    while True:
        out = _order(out)
        todo = [x for x in _cited(out, limit) if not x.checked]
        if not todo:
            return out
        for x in todo:
            if budget is not None:
                if budget[0] <= 0:
                    return out
                budget[0] -= 1
            try:
                rr = reanalyse(x.project)
            except CrossplanError:
                out.remove(x)
                continue
            same = [y for y in rr.checked_crossings if y.band_index == c.band_index]
            x.phase_deg = None if not same else min(abs(y.phase_diff_deg) for y in same)
            x.worst_deg = max((abs(y.phase_diff_deg) for y in rr.checked_crossings),
                              default=0.0)
            x.ok, x.checked = rr.ok, True


def _unchecked_hint(r: Report, c) -> tuple[str, int]:
    """The delay that lines the crossing's two bands up there, not checked against the rest."""
    d = c.phase_diff_deg
    if abs(d) >= config.INVERT_HINT_DEG:
        return "try inverting one (not checked)", c.band_index[1]
    i, ms = _aligning_delay(c)
    return (f"band {r.project.bands[i].name} leads by {abs(d):.0f} deg there: add delay_ms "
            f"{ms:.4g} to it, or an all-pass at another crossover (not checked)"), i


def _phase_hint(r: Report, c, reanalyse: Callable | None,
                budget: list | None = None) -> tuple[str, int]:
    """The change that brings crossing ``c`` within the limit, found by trying candidates
    (:func:`phase_fixes`) and checking each; or, when none does, the best one tried."""
    limit = r.project.analysis.phase_deg
    if reanalyse is None or (budget is not None and budget[0] <= 0):
        return _unchecked_hint(r, c)
    fixes = phase_fixes(r, c, reanalyse, budget)
    cited = _cited(fixes, limit)
    if cited:
        f = cited[0]
        rest = "" if f.ok else " (another check still fails)"
        how = "checked" if f.checked else "from this analysis's responses, not checked again"
        alt = cited[1:]
        also = f"; or {alt[0].what} ({alt[0].phase_deg:.1f} deg)" if alt else ""
        return (f"{f.what}: that brings them to {f.phase_deg:.1f} deg apart, {how}{rest}{also}",
                f.band)
    tried = [x for x in fixes if x.phase_deg is not None]
    if tried:
        f = min(tried, key=lambda x: x.phase_deg)
        return (f"no single inversion, all-pass or delay tried brings them within {limit:g} "
                f"deg; the closest, {f.what}, leaves {f.phase_deg:.1f} deg (crossplan align "
                "searches further)", f.band)
    return "no single inversion, all-pass or delay tried helps (crossplan align searches " \
        "further)", c.band_index[1]


#: The phase warning's hint while the fixes are still being tried (the editor shows the
#: check first and the hints a moment later).
PENDING_HINT = "looking for a change that fixes it ..."


def warnings_of(r: Report, reanalyse: Callable | None = None,
                pending: bool = False) -> list[Warning_]:
    """Plain-language warnings about the sum, the crossings, headroom and risky filters.

    ``reanalyse(project) -> Report`` (the engine's analysis without warnings) lets a
    crossing's phase hint try its candidate fixes and name one that works. With
    ``pending`` (and no ``reanalyse``) a crossing out of phase gets
    :data:`PENDING_HINT` instead, to be replaced by the checked one.
    """
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
    budget = [config.PHASE_HINT_TRIALS if len(p.bands) <= config.PHASE_HINT_MAX_BANDS else 0]
    failing = sorted((c for c in r.checked_crossings if not c.ok),
                     key=lambda c: -c.level_db)      # the loudest crossings first
    for c in failing:
        deg = abs(c.phase_diff_deg)
        where = f"bands {c.bands[0]} and {c.bands[1]} are {deg:.0f} deg apart at {format_hz(c.freq_hz)}"
        if pending and reanalyse is None:
            hint, band = PENDING_HINT, c.band_index[1]
        else:
            hint, band = _phase_hint(r, c, reanalyse, budget)
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
