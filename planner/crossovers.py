"""Crossover points: the filters on either side of a split, found and moved as one.

A crossover point is a frequency at which one band's lowpass side meets
another band's highpass side: the lowpass and highpass filters (any family)
at that frequency, plus the all-passes tied to it (an all-pass at the same
frequency in another band, as a 3-way's woofer carries for the upper split),
and the bands of a complementary FIR split at one of its crossovers. Moving
the point moves them all, so the mating filters stay matched; one edit,
undone as one.

Filters are matched by frequency to within :data:`SAME_HZ_REL` (relative).

A point can also be named in the project file (``"crossovers": {"upper":
{"freq": 3000}}``, with the filters saying ``"crossover": "upper"``): then
its filters take their frequency from that one value, and moving it
(:func:`move_crossover`, :func:`move_named_crossover`) changes that value.
:func:`name_crossover` names a point found by frequency and ties its filters
to it; :func:`find_crossover` finds a point by name or frequency.
"""

from __future__ import annotations

from dataclasses import dataclass

from planner import edits, units
from planner.errors import CrossplanError, ProjectError
from planner.model import Project

__all__ = ["SAME_HZ_REL", "Member", "CrossoverPoint", "crossover_points", "move_crossover",
           "find_crossover", "name_crossover", "move_named_crossover"]

#: Two filter frequencies this close (relative) are one crossover.
SAME_HZ_REL = 1e-6


@dataclass(frozen=True)
class Member:
    """One filter of a crossover point: band and filter indices, and its role there."""

    band: int
    filter: int
    role: str            # "lowpass", "highpass", "allpass" or "split"


@dataclass(frozen=True)
class CrossoverPoint:
    """A crossover frequency and every filter that belongs to it."""

    freq_hz: float
    members: tuple[Member, ...]
    #: the name of the project's crossover its filters are tied to, or None
    name: str | None = None

    def bands(self) -> tuple[int, ...]:
        return tuple(sorted({m.band for m in self.members}))

    def describe(self, project: Project) -> str:
        names = [project.bands[i].name for i in self.bands()]
        named = f" {self.name!r}" if self.name else ""
        return f"{self.freq_hz:g} Hz{named} ({' / '.join(names)})"


def _same(a: float, b: float) -> bool:
    return abs(a - b) <= SAME_HZ_REL * max(abs(a), abs(b))


def crossover_points(project: Project) -> list[CrossoverPoint]:
    """Every crossover point of the project, lowest first.

    A point needs a lowpass side and a highpass side in two different bands
    (or a split's crossover); all-passes at its frequency join it.
    """
    found: list[tuple[float, Member]] = []
    for i, b in enumerate(project.bands):
        for j, f in enumerate(b.filters):
            if f.type in ("lowpass", "highpass", "allpass") and "freq" in f.params:
                found.append((float(f.params["freq"]), Member(i, j, f.type)))
            elif f.type == "split":
                for x in f.params["crossovers"]:
                    found.append((float(x), Member(i, j, "split")))
    points: list[CrossoverPoint] = []
    for freq, _ in sorted(found, key=lambda fm: fm[0]):
        if any(_same(freq, p.freq_hz) for p in points):
            continue
        members = tuple(m for fr, m in found if _same(fr, freq))
        lows = {m.band for m in members if m.role == "lowpass"}
        highs = {m.band for m in members if m.role == "highpass"}
        splits = [m for m in members if m.role == "split"]
        if (lows and highs and lows != highs) or len({m.band for m in splits}) > 1:
            links = [project.bands[m.band].filters[m.filter].crossover for m in members]
            named = [x for x in links if x is not None]
            points.append(CrossoverPoint(freq, members, named[0] if named else None))
    # A named crossover is a point even when its filters alone do not make one.
    for name in project.crossovers:
        if any(p.name == name for p in points):
            continue
        tied = tuple(Member(i, j, project.bands[i].filters[j].type)
                     for i, j in project.linked(name))
        if tied:
            points.append(CrossoverPoint(float(project.crossovers[name]["freq"]), tied, name))
    points.sort(key=lambda p: p.freq_hz)
    return points


def move_crossover(project: Project, point: CrossoverPoint, freq_hz: float) -> Project:
    """Move every filter of ``point`` to ``freq_hz`` (one checked edit).

    Filters tied to a named crossover move by that crossover's one value
    (:func:`planner.edits.set_crossover`); the others each get the new
    ``freq``; a split's crossover list has the point's entry replaced.

    Raises
    ------
    ProjectError
        The new frequency is refused by a filter (named by its path).
    """
    p = project
    split_done = set()
    names_done = set()
    for m in point.members:
        f = p.bands[m.band].filters[m.filter]
        if f.crossover is not None:
            if f.crossover not in names_done:
                p = edits.set_crossover(p, f.crossover, freq_hz)
                names_done.add(f.crossover)
        elif m.role == "split":
            if m.band in split_done:
                continue
            xo = [freq_hz if _same(x, point.freq_hz) else x for x in f.params["crossovers"]]
            p = edits.set_filter_params(p, m.band, m.filter, crossovers=xo)
            split_done.update(range(len(p.bands)))   # a split edit moves every band of it
        else:
            p = edits.set_filter_params(p, m.band, m.filter, freq=freq_hz)
    if p is project:
        raise ProjectError("the crossover point has no filters to move", field="crossover")
    return p


def find_crossover(project: Project, key: str | float) -> CrossoverPoint:
    """The crossover point named ``key``, or the one at the frequency ``key`` (Hz, or text
    such as ``"3k"``; matched within 1 %).

    Raises
    ------
    ProjectError
        ``field='crossover'``: no such point (the points there are are listed).
    """
    from_units = None
    points = crossover_points(project)
    for p in points:
        if p.name is not None and p.name == key:
            return p
    try:
        from_units = float(key) if not isinstance(key, str) else units.parse_freq_hz(key)
    except (CrossplanError, ValueError):
        from_units = None
    if from_units is not None:
        near = [p for p in points if abs(p.freq_hz - from_units) <= 0.01 * from_units]
        if near:
            return min(near, key=lambda p: abs(p.freq_hz - from_units))
    have = "; ".join(p.describe(project) for p in points) or "none"
    raise ProjectError(f"no crossover named or at {key!r}; the project's crossovers: {have}",
                       field="crossover")


def name_crossover(project: Project, point: CrossoverPoint, name: str) -> Project:
    """Name ``point`` in the project (``crossovers[name] = {"freq": ...}``) and tie its
    lowpass, highpass and all-pass filters to it (one checked edit). A split's bands keep
    their list of crossovers."""
    p = edits.add_crossover(project, name, point.freq_hz)
    for m in point.members:
        if m.role != "split":
            p = edits.link_filter(p, m.band, m.filter, name)
    return p


def move_named_crossover(project: Project, name: str, freq_hz: float) -> Project:
    """Move the named crossover to ``freq_hz``: one value, every filter tied to it follows,
    and any other filter of the same point (at its frequency, not tied) too."""
    return move_crossover(project, find_crossover(project, name), freq_hz)
