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

from planner import config, defaults

__all__ = ["Filter", "Driver", "Measured", "Band", "Analysis", "Acoustics", "Solve", "Project",
           "FORMAT", "VERSION"]

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
    crossover : str or None
        The name of the project's crossover (:attr:`Project.crossovers`) this
        filter is tied to: its ``freq`` is that crossover's, and moving the
        crossover moves it. None for a filter with a frequency of its own.
    voicing : bool
        Deliberate EQ (voicing): the filter is applied, but the crossover
        checks (sum against the target, phase at the crossings) are judged
        with it set aside, and the voiced sum is reported beside them.
    extra : Mapping
        Unknown keys of the JSON form, kept for saving.
    """

    type: str
    family: str | None
    params: Mapping[str, Any]
    bypass: bool = False
    extra: Mapping[str, Any] = field(default_factory=dict)
    voicing: bool = False
    crossover: str | None = None

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
        return (self.key == other.key and self.bypass == other.bypass
                and self.voicing == other.voicing and self.crossover == other.crossover)

    def __hash__(self):
        return hash((self.key, self.bypass, self.voicing, self.crossover))

    def with_params(self, **changes: Any) -> "Filter":
        """A copy with some parameters changed (not checked: see :mod:`planner.project`)."""
        p = dict(self.params)
        p.update(changes)
        return replace(self, params=p)


@dataclass(frozen=True, eq=False)
class Measured:
    """A driver's measured response as read from its file.

    Attributes
    ----------
    path : str
        The file as named in the project (relative to the project's folder).
    freqs_hz, mag_db : array_like
        The data, increasing frequencies.
    phase_deg : array_like or None
        None when the file has no phase column.
    sha256 : str
        Content hash of the file (``"sha256:<hex>"``), for export manifests.
    """

    path: str
    freqs_hz: Any
    mag_db: Any
    phase_deg: Any
    sha256: str

    def __eq__(self, other):
        return isinstance(other, Measured) and (self.path, self.sha256) == (other.path,
                                                                           other.sha256)

    def __hash__(self):
        return hash((self.path, self.sha256))


@dataclass(frozen=True)
class Driver:
    """The transducer behind a band: a measured response or an analytic model, and where it sits.

    Attributes
    ----------
    model : str or None
        ``closed-box``, ``vented-box``, ``tweeter`` or ``flat`` (see
        :mod:`planner.drivers`); None for a measured driver.
    params : Mapping
        The model's parameters in their units (``fc`` in Hz, ``qtc``, ...), the
        optional roll-off and break-up, ``sensitivity_db``.
    data : Measured or None
        The measured response of a driver given by ``file``.
    offset_mm : float
        Acoustic centre behind the reference plane (mm; positive: recessed,
        arrives later).
    position_mm : float or None
        Height of the acoustic centre on the baffle (mm), for the off-axis view.
    role : str or None
        ``woofer``, ``midrange``, ``tweeter``, ``compression`` or ``sub``
        (what the safety checks look at).
    resonance_hz : float or None
        The driver's declared resonance (Hz), for the tweeter checks.
    min_phase : bool
        Derive the phase from the magnitude even where the file has phase.
    extrapolate : bool
        Let the analysis range go beyond the file's (with a warning).
    raw : Mapping
        The JSON form as written (what saving writes back, unknown keys
        included).
    """

    model: str | None = None
    params: Mapping[str, Any] = field(default_factory=dict)
    data: Measured | None = None
    offset_mm: float = 0.0
    position_mm: float | None = None
    role: str | None = None
    resonance_hz: float | None = None
    min_phase: bool = False
    extrapolate: bool = False
    raw: Mapping[str, Any] = field(default_factory=dict, compare=False)

    def __post_init__(self):
        object.__setattr__(self, "params", _frozen(self.params))
        object.__setattr__(self, "raw", _frozen(self.raw))


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
    driver : Driver or None
        The transducer behind the band (its response multiplies the band's
        in the acoustic sum); None for a band counted as a flat driver.
    target : tuple of Filter
        The acoustic response the band should reach, driver included (for
        example an LR4 lowpass): the check reports how far it is.
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
    driver: Driver | None = None
    target: tuple[Filter, ...] = ()
    extra: Mapping[str, Any] = field(default_factory=dict, compare=False)

    def __post_init__(self):
        object.__setattr__(self, "filters", tuple(self.filters))
        object.__setattr__(self, "target", tuple(self.target))
        object.__setattr__(self, "extra", _frozen(self.extra))

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
    target : str or None
        The target curve the sum is held to (:mod:`planner.targets`:
        ``flat``, ``tilt:DB``, ``shelf:DB@HZ``, ``tilt:DB+shelf:DB@HZ`` or a
        file named relative to the project's folder); None is flat (0 dB).
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
    target: str | None = None

    def __post_init__(self):
        object.__setattr__(self, "extra", _frozen(self.extra))


@dataclass(frozen=True)
class Acoustics:
    """How the acoustic sum is formed and looked at (used when any band has a driver).

    Attributes
    ----------
    temperature_c : float
        Air temperature (deg C) for the speed of sound of the offsets.
    reference_db : float or None
        The level the acoustic sum is held flat to (dB, the drivers' own
        scale); None: the least sensitive driver's pass-band level.
    distance_m : float
        Listening distance of the off-axis view (m).
    angle_min_deg, angle_max_deg, angle_step_deg : float
        The vertical angles of the off-axis view (deg; positive above the axis).
    axis_mm : float
        Height of the listening axis on the baffle (mm, as ``position_mm``).
    window_db : float
        The off-axis sum stays within this of the on-axis sum inside the
        vertical listening window (dB).
    """

    temperature_c: float = 20.0
    reference_db: float | None = None
    distance_m: float = 2.0
    angle_min_deg: float = -30.0
    angle_max_deg: float = 30.0
    angle_step_deg: float = 5.0
    axis_mm: float = 0.0
    window_db: float = 3.0
    extra: Mapping[str, Any] = field(default_factory=dict, compare=False)

    def __post_init__(self):
        object.__setattr__(self, "extra", _frozen(self.extra))


@dataclass(frozen=True)
class Solve:
    """How the solvers search unless told otherwise (``crossplan align`` and ``fit``, and
    the editor's align and fit); ``crossplan``'s options override them.

    Attributes
    ----------
    vary : tuple of str
        What align may change, some of :data:`planner.defaults.ALIGN_VARIABLES`.
    max_delay_ms : float
        The largest delay align may give a band (ms).
    trim_db : float
        How far align may trim a band's level either way (dB), when it varies ``gain``.
    freq_octaves : float
        How far align may move a crossover or all-pass frequency either way (octaves),
        when it varies ``freq`` or ``allpass``.
    limit_db : float
        How far fit may set a gain either way (dB).
    """

    vary: tuple[str, ...] = defaults.ALIGN_DEFAULT
    max_delay_ms: float = defaults.ALIGN_MAX_DELAY_MS
    trim_db: float = defaults.ALIGN_TRIM_DB
    freq_octaves: float = defaults.ALIGN_FREQ_OCTAVES
    limit_db: float = defaults.FIT_LIMIT_DB
    extra: Mapping[str, Any] = field(default_factory=dict, compare=False)

    def __post_init__(self):
        object.__setattr__(self, "vary", tuple(self.vary))
        object.__setattr__(self, "extra", _frozen(self.extra))


@dataclass(frozen=True)
class Project:
    """A whole project: name, sample rate, analysis settings and bands.

    ``crossovers`` names the project's crossover points (``{"upper": {"freq":
    3000.0}}``): each filter whose ``crossover`` names one takes its ``freq``
    from it, so the filters on either side of a split (and an all-pass tied
    to it) move together by one value. Each entry keeps its unknown keys.
    """

    name: str
    sample_rate: float
    bands: tuple[Band, ...]
    analysis: Analysis = field(default_factory=Analysis)
    extra: Mapping[str, Any] = field(default_factory=dict, compare=False)
    acoustics: Acoustics = field(default_factory=Acoustics)
    solve: Solve = field(default_factory=Solve)
    #: the folder driver files are named relative to (not saved)
    source_dir: str | None = field(default=None, compare=False)
    #: named crossover points: name -> {"freq": Hz, ...} (file order)
    crossovers: Mapping[str, Mapping[str, Any]] = field(default_factory=dict, hash=False)

    def __post_init__(self):
        object.__setattr__(self, "bands", tuple(self.bands))
        object.__setattr__(self, "extra", _frozen(self.extra))
        object.__setattr__(self, "crossovers", MappingProxyType(
            {k: _frozen(v) for k, v in dict(self.crossovers or {}).items()}))

    def linked(self, name: str) -> list[tuple[int, int]]:
        """(band, filter) of every filter tied to the crossover ``name``, project order."""
        return [(i, j) for i, b in enumerate(self.bands) for j, f in enumerate(b.filters)
                if f.crossover == name]

    @property
    def has_drivers(self) -> bool:
        """Whether any band has a driver: then the checks look at the acoustic sum."""
        return any(b.driver is not None for b in self.bands)

    @property
    def nyquist_hz(self) -> float:
        return self.sample_rate / 2

    def band_index(self, name: str) -> int:
        """Index of the band called ``name`` (KeyError if there is none)."""
        for i, b in enumerate(self.bands):
            if b.name == name:
                return i
        raise KeyError(name)

    @property
    def has_voicing(self) -> bool:
        """Whether a filter that is applied (not bypassed) is marked as voicing."""
        return any(f.voicing and not f.bypass for b in self.bands for f in b.filters)

    def without_voicing(self) -> "Project":
        """The project with every voicing filter set aside (bypassed): what the crossover
        checks judge. The project itself when it has none."""
        if not self.has_voicing:
            return self
        bands = tuple(replace(b, filters=tuple(replace(f, bypass=True) if f.voicing else f
                                               for f in b.filters)) for b in self.bands)
        return replace(self, bands=bands)

    def active(self) -> list[bool]:
        """Which bands take part in the sum (mute and solo applied)."""
        solo = any(b.solo for b in self.bands)
        return [(b.solo if solo else True) and not b.mute for b in self.bands]

    def with_band(self, index: int, band: Band) -> "Project":
        """A copy with band ``index`` replaced."""
        bl = list(self.bands)
        bl[index] = band
        return replace(self, bands=tuple(bl))
