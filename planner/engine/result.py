"""The engine's result: a :class:`Report` of one project at one rate, and its parts.

Every verdict is decided once, in :mod:`planner.engine.analyse`, and held
here as a :class:`CheckResult`; the text report, the JSON and the editor
read the verdicts and never compare a figure with a limit themselves.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from functools import cached_property
from types import MappingProxyType
from typing import Any, Mapping

import numpy as np

from planner import config
from planner.dsp.response import BandResponses
from planner.engine.acoustic import group_delay_audibility, off_axis
from planner.engine.design import BandDesign
from planner.model import Project

__all__ = ["CrossingResult", "BandResult", "CheckResult", "STATE_TEXT", "Warning_", "Report",
           "check_state", "sum_within"]


@dataclass(frozen=True)
class CrossingResult:
    """A crossing of two bands, named in project order (``bands[0]`` first)."""

    bands: tuple[str, str]
    band_index: tuple[int, int]
    freq_hz: float
    phase_diff_deg: float
    level_db: float
    checked: bool     # above the crossing floor: it counts
    ok: bool

    def to_dict(self) -> dict:
        return {"bands": list(self.bands), "freq_hz": self.freq_hz,
                "phase_diff_deg": self.phase_diff_deg, "level_db": self.level_db, "ok": self.ok}


@dataclass(frozen=True)
class BandResult:
    """Per-band figures of the report."""

    name: str
    active: bool
    peak_gain_db: float
    peak_at_hz: float
    sections: int
    fir_taps: int
    latency_samples: float = 0.0
    latency_ms: float = 0.0
    fir_linear_phase: bool = True
    #: the band has a driver and the report is acoustic
    acoustic: bool = False
    #: the band's acoustic figures (:class:`planner.engine.acoustic.BandAcoustics`), when
    #: the report is acoustic
    acoustics: Any = None

    def to_dict(self) -> dict:
        d = {"name": self.name, "active": self.active, "peak_gain_db": self.peak_gain_db,
             "peak_at_hz": self.peak_at_hz, "sections": self.sections,
             "fir_taps": self.fir_taps, "latency_samples": self.latency_samples,
             "latency_ms": self.latency_ms, "fir_linear_phase": self.fir_linear_phase,
             "acoustic": self.acoustic}
        if self.acoustics is not None:
            d["driver"] = self.acoustics.to_dict()
        return d


#: How each check state reads, as text (never by colour alone): only ``fail`` says FAIL.
STATE_TEXT = {"ok": "ok", "warn": "warn", "fail": "FAIL"}


@dataclass(frozen=True)
class CheckResult:
    """The verdict of one check of the report, decided once by the engine.

    Attributes
    ----------
    name : str
        ``"sum"`` (flatness), ``"crossings"`` (phase at the crossings above
        the floor) or ``"headroom"`` (peak gain of each active band).
    state : str
        ``"ok"``, ``"warn"`` (outside its limit but not enforced) or
        ``"fail"`` (outside its limit and enforced: the result fails).
    enforced : bool
        Whether a failure of this check fails the result.
    figures : Mapping
        The numbers behind the verdict, for presenters (per check: see
        :func:`analyse`); presenters print these and never re-decide.
    """

    name: str
    state: str
    enforced: bool
    figures: Mapping[str, Any]

    def __post_init__(self):
        if self.state not in STATE_TEXT:
            raise ValueError(f"state must be one of {', '.join(STATE_TEXT)}, not {self.state!r}")
        object.__setattr__(self, "figures", MappingProxyType(dict(self.figures)))

    @property
    def ok(self) -> bool:
        """Within its limit (a ``warn`` is not ok, though it does not fail the result)."""
        return self.state == "ok"

    @property
    def text(self) -> str:
        """``"ok"``, ``"warn"`` or ``"FAIL"``."""
        return STATE_TEXT[self.state]


def sum_within(max_dev_db: float, limit_db: float) -> bool:
    """The sum check's rule: its largest deviation is a number and within +/- ``limit_db``."""
    return bool(np.isfinite(max_dev_db) and abs(max_dev_db) <= limit_db)


def check_state(within: bool, enforced: bool) -> str:
    """``ok`` within its limit; outside it ``fail`` when the check is enforced, else ``warn``."""
    return "ok" if within else ("fail" if enforced else "warn")


@dataclass(frozen=True)
class Warning_:
    """A plain-language warning, pointing at a band (and filter) where it can."""

    text: str
    band: int | None = None
    filter: int | None = None
    code: str = ""


@dataclass
class Report:
    """The result of checking a project at its sample rate.

    The arrays (``freqs_hz``, ``responses``, ``sum_h``) are there for plots;
    :meth:`to_dict` gives the JSON form of ``crossplan check --json``.
    ``checks`` holds the verdict of every check (:class:`CheckResult`), in
    the order sum, crossings, headroom: the text report, the JSON and the
    editor all read it, and ``ok`` is true when none of them is ``fail``.
    """

    project: Project
    designs: list[BandDesign]
    freqs_hz: np.ndarray
    responses: BandResponses
    active: list[bool]
    sum_h: np.ndarray
    max_dev_db: float
    at_hz: float
    ripple_db: float
    flat_ok: bool
    crossings: list[CrossingResult]
    bands: list[BandResult]
    warnings: list[Warning_] = field(default_factory=list)
    checks: tuple[CheckResult, ...] = ()
    #: the project's drivers (:class:`planner.engine.acoustic.Drivers`) when any band has
    #: one: then ``responses`` and ``sum_h`` are the acoustic ones
    drivers: Any = None
    #: the target curve on the grid (dB), or None for flat (0 dB)
    target_db: Any = None
    #: the sum the crossover checks judge: ``sum_h`` with the voicing filters set aside
    #: (``sum_h`` itself when there are none); None means ``sum_h``
    checked_sum_h: Any = None
    #: the bands' responses the crossover checks judge (voicing set aside), one row per
    #: band; None means ``responses.h``
    checked_h: Any = None
    #: the voiced sum (voicing filters included) against the target when any filter is
    #: marked voicing: ``max_dev_db``, ``at_hz``, ``ripple_db``, ``filters`` (labels); or None
    voiced: Any = None

    @property
    def target_name(self) -> str | None:
        """The project's ``analysis.target`` as written, or None (flat)."""
        return self.project.analysis.target

    @property
    def acoustic(self) -> bool:
        """Whether the responses and the sum are acoustic (driver x filters)."""
        return self.drivers is not None

    @cached_property
    def off_axis(self):
        """The sum at vertical angles (:func:`planner.engine.acoustic.off_axis`), or None
        when the report is electrical or no driver has a position."""
        if self.drivers is None:
            return None
        return off_axis(self.project, self.freqs_hz, self.responses.h, self.active,
                        self.checked_crossings)

    def group_delay_audibility(self) -> list[dict]:
        """The sum's excess group delay against audibility thresholds (information only)."""
        return group_delay_audibility(self.freqs_hz, self.sum_group_delay_ms())

    def electrical_h(self) -> np.ndarray:
        """Every band's electrical response on the grid (the acoustic one without its driver)."""
        if self.drivers is None:
            return self.responses.h
        with np.errstate(divide="ignore", invalid="ignore"):
            d = self.drivers.all_bands(self.freqs_hz)
            return np.where(d != 0, self.responses.h / d, 0.0)

    def check(self, name: str) -> CheckResult:
        """The :class:`CheckResult` called ``name`` (KeyError if there is none)."""
        for c in self.checks:
            if c.name == name:
                return c
        raise KeyError(name)

    @property
    def checked_crossings(self) -> list[CrossingResult]:
        return [c for c in self.crossings if c.checked]

    @property
    def worst_crossing(self) -> CrossingResult | None:
        """The checked crossing with the largest phase difference (None without one)."""
        return self.check("crossings").figures["worst"]

    @property
    def phase_ok(self) -> bool:
        """Every crossing above the floor is within the phase limit."""
        return self.check("crossings").ok

    @property
    def headroom_ok(self) -> bool:
        """No active band peaks above :data:`planner.config.HEADROOM_LIMIT_DB`."""
        return self.check("headroom").ok

    @property
    def ok(self) -> bool:
        """True when no check fails (a warning does not fail the result)."""
        return bool(self.checks) and all(c.state != "fail" for c in self.checks)

    @property
    def latency_samples(self) -> float:
        """Latency of the sum: the largest latency of the active bands (samples; 0 if none)."""
        lat = [b.latency_samples for b in self.bands if b.active]
        return max(lat) if lat else 0.0

    @property
    def latency_ms(self) -> float:
        return 1000.0 * self.latency_samples / self.project.sample_rate

    @property
    def latencies_agree(self) -> bool:
        """True when every active band has the same latency (within config.LATENCY_TOL_SAMPLES)."""
        lat = [b.latency_samples for b in self.bands if b.active]
        return not lat or max(lat) - min(lat) <= config.LATENCY_TOL_SAMPLES

    def sum_group_delay_ms(self) -> np.ndarray:
        return self.responses.sum_group_delay_samples(self.active) * 1000.0 / self.project.sample_rate

    def band_group_delay_ms(self) -> np.ndarray:
        return self.responses.group_delay_samples() * 1000.0 / self.project.sample_rate

    def to_dict(self) -> dict:
        a = self.project.analysis
        gd = self.sum_group_delay_ms()
        gd = gd[np.isfinite(gd)]
        return {
            "ok": self.ok,
            "name": self.project.name,
            "sample_rate": self.project.sample_rate,
            "sum": {"max_dev_db": self.max_dev_db, "at_hz": self.at_hz,
                    "ripple_db": self.ripple_db, "limit_db": a.flatness_db, "ok": self.flat_ok,
                    "target": a.target,
                    "voicing_set_aside": self.voiced["filters"] if self.voiced else [],
                    "group_delay_ms": {"min": float(gd.min()) if gd.size else None,
                                       "max": float(gd.max()) if gd.size else None},
                    "latency_samples": self.latency_samples, "latency_ms": self.latency_ms,
                    "latencies_agree": self.latencies_agree},
            "crossovers": [c.to_dict() for c in self.checked_crossings],
            "crossings_below_floor": [c.to_dict() for c in self.crossings if not c.checked],
            "phase_limit_deg": a.phase_deg,
            "crossing_floor_db": a.crossing_floor_db,
            "bands": [b.to_dict() for b in self.bands],
            "warnings": [w.text for w in self.warnings],
            "headroom": self._headroom_dict(),
            "checks": [{"name": c.name, "state": c.state, "enforced": c.enforced}
                       for c in self.checks],
            "acoustics": self._acoustics_dict(),
            "voiced": None if self.voiced is None else {
                "max_dev_db": self.voiced["max_dev_db"], "at_hz": self.voiced["at_hz"],
                "ripple_db": self.voiced["ripple_db"], "target": a.target,
                "filters": list(self.voiced["filters"])},
        }

    def _acoustics_dict(self) -> dict | None:
        """The acoustic sum's frame: its reference level and the information figures."""
        if self.drivers is None:
            return None
        ox = self.off_axis
        return {"reference_db": self.drivers.reference_db,
                "auto_reference": self.drivers.auto_reference,
                "temperature_c": self.drivers.temp_c,
                "group_delay_audibility": self.group_delay_audibility(),
                "off_axis": None if ox is None else ox.to_dict()}

    def _headroom_dict(self) -> dict:
        h = self.check("headroom")
        f = h.figures
        w = None if f["worst"] is None else self.bands[f["worst"]]
        worst = None if w is None else {"band": w.name, "peak_gain_db": w.peak_gain_db,
                                        "peak_at_hz": w.peak_at_hz}
        return {"ok": h.ok, "state": h.state, "enforced": h.enforced, "limit_db": f["limit_db"],
                "worst": worst, "over": [self.bands[i].name for i in f["over"]]}
