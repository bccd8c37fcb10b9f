"""The project model: frozen dataclasses holding parameters only.

A :class:`Project` holds :class:`Analysis` settings and :class:`Band` s; a band
holds a chain of :class:`Filter` s. Coefficients are never stored: they are
designed on demand (and cached) from the parameters at a sample rate. An edit
makes a new object (``dataclasses.replace``) that shares the unchanged parts.

Every object keeps the keys of its JSON form that this version does not know
in ``extra``, so that saving a file written by a newer or extended tool keeps
them. ``extra`` takes no part in comparisons.
"""

from __future__ import annotations

import json
from dataclasses import dataclass, field, replace
from functools import cached_property
from types import MappingProxyType
from typing import Any, Mapping

from planner import config

__all__ = ["Filter", "Band", "Analysis", "Project", "FORMAT", "VERSION"]

FORMAT = "crossplan-project"
VERSION = 1

_EMPTY: Mapping[str, Any] = MappingProxyType({})


def _frozen(d: Mapping[str, Any] | None) -> Mapping[str, Any]:
    return MappingProxyType(dict(d or {}))


@dataclass(frozen=True, eq=False)
class Filter:
    """One filter of a band's chain.

    Attributes
    ----------
    type : str
        ``lowpass``, ``highpass``, ``peaking``, ``low_shelf``, ... (the kinds
        are in :mod:`planner.filters`, which reads these parameters; this
        module knows none of them).
    family : str or None
        For ``lowpass``/``highpass``: ``butterworth``, ``linkwitz-riley``,
        ``bessel``, ``cookbook``, ...; None for the other types.
    params : Mapping
        Checked parameters in their units (``freq`` in Hz, ``gain_db`` in dB,
        ``q``, ``order``, ...).
    bypass : bool
        When true the filter is kept in the chain but not applied.
    extra : Mapping
        Unknown keys of the JSON form, kept for saving.
    """

    type: str
    family: str | None
    params: Mapping[str, Any]
    bypass: bool = False
    extra: Mapping[str, Any] = field(default_factory=dict)

    def __post_init__(self):
        object.__setattr__(self, "params", _frozen(self.params))
        object.__setattr__(self, "extra", _frozen(self.extra))

    @cached_property
    def key(self) -> str:
        """A canonical text of the design-relevant parameters (cache key, equality)."""
        return json.dumps([self.type, self.family, dict(self.params)], sort_keys=True,
                          default=list)

    def __eq__(self, other):
        if not isinstance(other, Filter):
            return NotImplemented
        return self.key == other.key and self.bypass == other.bypass

    def __hash__(self):
        return hash((self.key, self.bypass))

    def with_params(self, **changes: Any) -> "Filter":
        """A copy with some parameters changed (not checked: see :mod:`planner.project`)."""
        p = dict(self.params)
        p.update(changes)
        return replace(self, params=p)


@dataclass(frozen=True)
class Band:
    """One output way (woofer, tweeter, sub, ...) and its chain of filters.

    Attributes
    ----------
    name : str
        Unique within the project.
    gain_db : float
        Band gain in dB.
    delay_ms : float
        Band delay in ms (fractional sample delays are exact in the analysis).
    invert : bool
        Polarity inverted.
    mute, solo : bool
        A muted band is left out of the sum; when any band is soloed, only
        soloed bands are summed.
    filters : tuple of Filter
        The chain, applied in order.
    driver : Mapping or None
        The transducer behind the band (kept for later use; not yet analysed).
    extra : Mapping
        Unknown keys of the JSON form.
    """

    name: str
    gain_db: float = 0.0
    delay_ms: float = 0.0
    invert: bool = False
    mute: bool = False
    solo: bool = False
    filters: tuple[Filter, ...] = ()
    driver: Mapping[str, Any] | None = None
    extra: Mapping[str, Any] = field(default_factory=dict, compare=False)

    def __post_init__(self):
        object.__setattr__(self, "filters", tuple(self.filters))
        object.__setattr__(self, "extra", _frozen(self.extra))
        if self.driver is not None:
            object.__setattr__(self, "driver", _frozen(self.driver))

    def with_filter(self, index: int, flt: Filter) -> "Band":
        """A copy with filter ``index`` replaced."""
        fl = list(self.filters)
        fl[index] = flt
        return replace(self, filters=tuple(fl))


@dataclass(frozen=True)
class Analysis:
    """Analysis settings: range and resolution of the grid, and the pass limits.

    Attributes
    ----------
    f_min, f_max : float
        Range in Hz (f_max at most Nyquist).
    points : int
        Log-spaced grid points (filter frequencies are added to them).
    flatness_db : float
        The sum passes when it stays within +/- this many dB of the target.
    phase_deg : float
        A crossing passes when the bands are at most this many degrees apart.
    crossing_floor_db : float
        Crossings below this level are information only.
    arith : str or None
        The number format the target DSP computes in (``float64``,
        ``float32`` or ``qM.N``). When set, the check and the editor also
        report each band rounded to it; ``None`` means not chosen.
    enforce_headroom : bool
        When true, a band peaking above
        :data:`planner.config.HEADROOM_LIMIT_DB` fails the check; when false
        (the default) it is a warning only.

    The defaults are those of :mod:`planner.config`.
    """

    f_min: float = config.DEFAULT_F_MIN_HZ
    f_max: float = config.DEFAULT_F_MAX_HZ
    points: int = config.DEFAULT_POINTS
    flatness_db: float = config.DEFAULT_FLATNESS_DB
    phase_deg: float = config.DEFAULT_PHASE_DEG
    crossing_floor_db: float = config.DEFAULT_CROSSING_FLOOR_DB
    arith: str | None = None
    enforce_headroom: bool = config.DEFAULT_ENFORCE_HEADROOM
    extra: Mapping[str, Any] = field(default_factory=dict, compare=False)

    def __post_init__(self):
        object.__setattr__(self, "extra", _frozen(self.extra))


@dataclass(frozen=True)
class Project:
    """A whole project: name, sample rate, analysis settings and bands."""

    name: str
    sample_rate: float
    bands: tuple[Band, ...]
    analysis: Analysis = field(default_factory=Analysis)
    extra: Mapping[str, Any] = field(default_factory=dict, compare=False)

    def __post_init__(self):
        object.__setattr__(self, "bands", tuple(self.bands))
        object.__setattr__(self, "extra", _frozen(self.extra))

    @property
    def nyquist_hz(self) -> float:
        return self.sample_rate / 2

    def band_index(self, name: str) -> int:
        """Index of the band called ``name`` (KeyError if there is none)."""
        for i, b in enumerate(self.bands):
            if b.name == name:
                return i
        raise KeyError(name)

    def active(self) -> list[bool]:
        """Which bands take part in the sum (mute and solo applied)."""
        solo = any(b.solo for b in self.bands)
        return [(b.solo if solo else True) and not b.mute for b in self.bands]

    def with_band(self, index: int, band: Band) -> "Project":
        """A copy with band ``index`` replaced."""
        bl = list(self.bands)
        bl[index] = band
        return replace(self, bands=tuple(bl))
