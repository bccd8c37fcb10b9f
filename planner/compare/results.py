"""The results of a comparison: the spec read from a band, each side's figures, the builds."""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from planner.defaults import COMPARE_ATTEN_DB, COMPARE_RIPPLE_DB
from planner.dsp import fir as dfir
from planner.engine import BandDesign

__all__ = ["DEFAULT_RIPPLE_DB", "DEFAULT_ATTEN_DB", "OK", "NO_CROSSOVER", "NOT_MET",
           "DerivedSpec", "Side", "BandComparison", "Build", "Comparison", "db10"]


#: Default pass-band ripple of the derived spec (dB, peak to peak): the band's
#: pass band ends where its response leaves a 1 dB window.
DEFAULT_RIPPLE_DB = COMPARE_RIPPLE_DB


#: Default stop-band attenuation of the derived spec (dB below the nominal
#: pass gain): the stop band starts where the response stays 60 dB down.
DEFAULT_ATTEN_DB = COMPARE_ATTEN_DB


def db10(x: float) -> float:
    return 10.0 * math.log10(x) if x > 0 else -math.inf


@dataclass(frozen=True)
class DerivedSpec:
    """The magnitude spec read from a band's crossover chain.

    Attributes
    ----------
    kind : {"lowpass", "highpass", "bandpass"}
    pass_hz, stop_hz : float or (float, float)
        Pass-band and stop-band edges in Hz (pairs for a bandpass).
    ripple_db, atten_db : float
        As asked (see the module notes for the conventions).
    pass_gain_db : float
        Nominal pass gain of the band's chain (middle of its ripple band).
    """

    kind: str
    pass_hz: float | tuple[float, float]
    stop_hz: float | tuple[float, float]
    ripple_db: float
    atten_db: float
    pass_gain_db: float

    def fir_spec(self) -> dfir.FirSpec:
        """The same spec as a :class:`planner.dsp.fir.FirSpec` (nominal gain 1)."""
        return dfir.FirSpec(self.kind, self.pass_hz, self.stop_hz, self.ripple_db, self.atten_db)

    @property
    def pass_range_hz(self) -> tuple[float, float]:
        """The pass band as (low, high) Hz; 0 or infinity at an open end."""
        if self.kind == "bandpass":
            return tuple(self.pass_hz)
        return (0.0, self.pass_hz) if self.kind == "lowpass" else (self.pass_hz, math.inf)

    def to_dict(self) -> dict:
        def v(x):
            return list(x) if isinstance(x, tuple) else x
        return {"kind": self.kind, "pass_hz": v(self.pass_hz), "stop_hz": v(self.stop_hz),
                "ripple_db": self.ripple_db, "atten_db": self.atten_db,
                "pass_gain_db": self.pass_gain_db}


@dataclass(frozen=True)
class Side:
    """One way of meeting a band's spec (the IIR or the FIR side).

    Attributes
    ----------
    source : {"project", "equivalent"}
        The band's own design, or the one found to meet its spec.
    design : str
        What it is, e.g. ``"LR4 lowpass 2.2 kHz"`` or ``"elliptic order 12"``.
    order : int
        IIR order (poles) of the sections; 0 for an FIR.
    taps : int
        FIR length; 0 for sections only.
    sections : int
    multiplies_per_sample : int
        5 per biquad section plus the folded count of a linear-phase FIR
        (``ceil(N/2)``), :func:`planner.dsp.fir.iir_multiplies_per_sample`
        and :func:`~planner.dsp.fir.fir_multiplies_per_sample`.
    multiplies_per_sample_direct : int
        The same with the FIR in direct form (``N``, one per tap).
    latency_samples, latency_ms : float
        Pure delay: ``(N-1)/2`` for a linear-phase FIR, 0 for causal
        sections (their output starts at once; their group delay is in
        ``group_delay_variation_ms``).
    group_delay_variation_ms : float
        Largest minus smallest group delay over the pass band (within the
        project's analysis range).
    pre_ringing : float
        Fraction of the impulse response's energy before its largest sample
        (:func:`planner.dsp.fir.pre_ringing_energy`).
    pre_ringing_db : float
        The same in dB (``10 log10``; -inf for none).
    ripple_db, atten_db : float
        Measured against the spec (:func:`planner.dsp.fir.measure_spec`).
    """

    source: str
    design: str
    order: int
    taps: int
    sections: int
    multiplies_per_sample: int
    multiplies_per_sample_direct: int
    latency_samples: float
    latency_ms: float
    group_delay_variation_ms: float
    pre_ringing: float
    pre_ringing_db: float
    ripple_db: float
    atten_db: float
    sos: np.ndarray = field(repr=False, compare=False, default=None)
    fir: np.ndarray | None = field(repr=False, compare=False, default=None)

    def to_dict(self) -> dict:
        return {"source": self.source, "design": self.design, "order": self.order,
                "taps": self.taps, "sections": self.sections,
                "multiplies_per_sample": self.multiplies_per_sample,
                "multiplies_per_sample_direct": self.multiplies_per_sample_direct,
                "latency_samples": self.latency_samples, "latency_ms": self.latency_ms,
                "group_delay_variation_ms": self.group_delay_variation_ms,
                "pre_ringing": self.pre_ringing, "pre_ringing_db": self.pre_ringing_db,
                "ripple_db": self.ripple_db, "atten_db": self.atten_db}


#: Band statuses.
OK, NO_CROSSOVER, NOT_MET = "ok", "no crossover to compare", "spec not met"


@dataclass(frozen=True)
class BandComparison:
    """One band: its spec and both sides, or why there are none.

    ``status`` is :data:`OK`, :data:`NO_CROSSOVER` (full-range EQ only, or
    only end-of-range filters) or :data:`NOT_MET` (``message`` says which
    spec and what was reached). ``own`` is ``"iir"`` or ``"fir"``: which side
    is the band's own design. ``end_of_range`` lists the labels of the
    band's end-of-range filters (see :func:`end_of_range`), left out of the
    spec and kept as they are in both builds.
    """

    index: int
    name: str
    status: str
    own: str | None = None
    spec: DerivedSpec | None = None
    iir: Side | None = None
    fir: Side | None = None
    message: str = ""
    end_of_range: tuple[str, ...] = ()

    @property
    def multiplies_ratio(self) -> float | None:
        """FIR over IIR multiplies per sample (folded FIR), None without both sides."""
        return self._ratio("multiplies_per_sample")

    @property
    def multiplies_ratio_direct(self) -> float | None:
        """FIR over IIR multiplies per sample with the FIR in direct form."""
        return self._ratio("multiplies_per_sample_direct")

    def _ratio(self, key: str) -> float | None:
        if self.iir is None or self.fir is None:
            return None
        den = getattr(self.iir, key)
        return getattr(self.fir, key) / den if den else math.inf

    def to_dict(self) -> dict:
        return {"index": self.index, "name": self.name, "status": self.status,
                "message": self.message, "own": self.own,
                "spec": None if self.spec is None else self.spec.to_dict(),
                "iir": None if self.iir is None else self.iir.to_dict(),
                "fir": None if self.fir is None else self.fir.to_dict(),
                "multiplies_ratio": self.multiplies_ratio,
                "multiplies_ratio_direct": self.multiplies_ratio_direct,
                "end_of_range": list(self.end_of_range)}


@dataclass(frozen=True)
class Build:
    """The whole project built one way (every crossover IIR, or every one FIR).

    Attributes
    ----------
    family : {"iir", "fir"}
    complete : bool
        False when some band has no design of this family (``missing``);
        then the figures are None.
    max_dev_db, at_hz, ripple_db : float or None
        Flatness of the sum of the active bands on the analysis grid
        (:func:`planner.dsp.analysis.flatness`), judged as the check judges the
        project's sum: from ``target`` (the project's ``analysis.target``; None:
        0 dB) and with the filters marked voicing set aside.
    target : str or None
    voicing_set_aside : bool
        Whether the project has voicing filters, set aside for the figures
        (``designs`` keeps them: the bands as they would run).
    latency_samples, latency_ms : float or None
        Common latency of the crossovers after alignment.
    inverted : list of str
        Bands inverted in the project; they stay inverted in both builds
        (an inversion an IIR crossover needs, as with LR2, may cancel in
        the FIR build).
    align_samples : list of float
        Delay added to each band so that every band keeps the alignment it
        has in the project: a band whose crossover gains ``d`` samples of
        latency over its own design is matched by delaying the others.
    designs : list of BandDesign or None
        The bands as built (for responses and plots; not in ``to_dict``).
    """

    family: str
    complete: bool
    missing: list[str]
    max_dev_db: float | None = None
    at_hz: float | None = None
    ripple_db: float | None = None
    latency_samples: float | None = None
    latency_ms: float | None = None
    align_samples: list[float] = field(default_factory=list)
    inverted: list[str] = field(default_factory=list)
    designs: list[BandDesign] | None = field(default=None, repr=False, compare=False)
    target: str | None = None
    voicing_set_aside: bool = False

    def to_dict(self) -> dict:
        return {"family": self.family, "complete": self.complete, "missing": self.missing,
                "max_dev_db": self.max_dev_db, "at_hz": self.at_hz, "ripple_db": self.ripple_db,
                "target": self.target, "voicing_set_aside": self.voicing_set_aside,
                "latency_samples": self.latency_samples, "latency_ms": self.latency_ms,
                "align_samples": self.align_samples, "inverted": self.inverted}


@dataclass(frozen=True)
class Comparison:
    """The result of :func:`compare_project`."""

    name: str
    sample_rate: float
    ripple_db: float
    atten_db: float
    iir_family: str
    bands: list[BandComparison]
    iir_sum: Build
    fir_sum: Build

    @property
    def ok(self) -> bool:
        """True when no band's spec was left unmet."""
        return all(b.status != NOT_MET for b in self.bands)

    def to_dict(self) -> dict:
        return {"ok": self.ok, "name": self.name, "sample_rate": self.sample_rate,
                "ripple_db": self.ripple_db, "atten_db": self.atten_db,
                "iir_family": self.iir_family,
                "bands": [b.to_dict() for b in self.bands],
                "sum": {"iir": self.iir_sum.to_dict(), "fir": self.fir_sum.to_dict()}}
