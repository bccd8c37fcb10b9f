"""Crossover points: the filters on either side of a split, found and moved as one.

A crossover point is a frequency at which one band's lowpass side meets
another band's highpass side: the lowpass and highpass filters (any family)
at that frequency, plus the all-passes tied to it (an all-pass at the same
frequency in another band, as a 3-way's woofer carries for the upper split),
and the bands of a complementary FIR split at one of its crossovers. Moving
the point moves them all, so the mating filters stay matched; one edit,
undone as one.

Filters are matched by frequency to within :data:`SAME_HZ_REL` (relative).
"""

from __future__ import annotations

from dataclasses import dataclass

from planner import edits
from planner.errors import ProjectError
from planner.model import Project

__all__ = ["SAME_HZ_REL", "Member", "CrossoverPoint", "crossover_points", "move_crossover"]

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

    def bands(self) -> tuple[int, ...]:
        return tuple(sorted({m.band for m in self.members}))

    def describe(self, project: Project) -> str:
        names = [project.bands[i].name for i in self.bands()]
        return f"{self.freq_hz:g} Hz ({' / '.join(names)})"


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
            points.append(CrossoverPoint(freq, members))
    return points


def move_crossover(project: Project, point: CrossoverPoint, freq_hz: float) -> Project:
    """Move every filter of ``point`` to ``freq_hz`` (one checked edit).

    Raises
    ------
    ProjectError
        The new frequency is refused by a filter (named by its path).
    """
    p = project
    split_done = set()
    for m in point.members:
        f = p.bands[m.band].filters[m.filter]
        if m.role == "split":
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
