"""Designs: each filter once per sample rate (cached), each band's chain, and its responses.

References
----------
.. [1] A. V. Oppenheim and R. W. Schafer, "Discrete-Time Signal Processing",
   3rd ed., 2010, sec. 6.3 (cascade form), 5.7 (linear phase: an FIR of N
   taps, symmetric, delays by (N - 1) / 2 samples).
"""

from __future__ import annotations

from dataclasses import dataclass
from functools import lru_cache

import numpy as np

from planner import filters as fk
from planner import units
from planner.dsp import fir as dfir
from planner.dsp.response import BandResponses, PointEvaluator, band_responses
from planner.errors import CrossplanError
from planner.model import Band, Filter, Project

__all__ = ["design_filter", "design_band", "design_project", "BandDesign", "evaluate",
           "point_evaluator"]


@lru_cache(maxsize=4096)
def _design_cached(flt: Filter, fs_hz: float) -> fk.FilterDesign:
    d = fk.design(fk.kind_of(flt), flt.params, fs_hz)
    sos = np.array(d.sos, dtype=float).reshape(-1, 6)
    sos.setflags(write=False)
    fir = None
    if d.fir is not None:
        fir = np.array(d.fir, dtype=float)
        fir.setflags(write=False)
    return fk.FilterDesign(sos, fir)


def design_filter(flt: Filter, fs_hz: float) -> fk.FilterDesign:
    """Design one filter at ``fs_hz`` (cached by parameters and rate; arrays are read-only)."""
    return _design_cached(flt, float(fs_hz))


@dataclass(frozen=True)
class BandDesign:
    """A band's chain at one rate: all sections in order, and the FIR taps (convolved) if any.

    ``fir_latency_samples`` is the sum of the latencies of the band's FIR
    filters (:func:`planner.dsp.fir.latency_samples`: ``(N-1)/2`` for a
    linear-phase filter of ``N`` taps, else the index of its largest tap);
    ``fir_linear_phase`` is False when any of them is not linear phase.
    """

    sos: np.ndarray
    fir: np.ndarray | None
    gain_db: float
    delay_samples: float
    invert: bool
    fir_latency_samples: float = 0.0
    fir_linear_phase: bool = True
    #: for each section, the index of the filter of the band's chain it comes from
    section_filters: tuple[int, ...] = ()

    @property
    def n_sections(self) -> int:
        return len(self.sos)

    @property
    def latency_samples(self) -> float:
        """FIR latency plus the band's delay, in samples (0 for an undelayed IIR-only band)."""
        return self.fir_latency_samples + self.delay_samples


def design_band(band: Band, fs_hz: float) -> BandDesign:
    """Design every (not bypassed) filter of a band at ``fs_hz``.

    A design error names its filter (``filters[j].taps: ...``).
    """
    sos, fir, latency, linear, owners = [], None, 0.0, True, []
    for j, f in enumerate(band.filters):
        if f.bypass:
            continue
        try:
            d = design_filter(f, fs_hz)
        except CrossplanError as e:
            raise e.at(f"filters[{j}]") from None
        if len(d.sos):
            sos.append(d.sos)
            owners.extend([j] * len(d.sos))
        if d.fir is not None:
            fir = d.fir if fir is None else np.convolve(fir, d.fir)
            # Delays of cascaded linear-phase filters add (their phases add).
            latency += dfir.latency_samples(d.fir)
            linear = linear and dfir.is_linear_phase(d.fir)
    return BandDesign(np.vstack(sos) if sos else np.zeros((0, 6)), fir, band.gain_db,
                      units.ms_to_samples(band.delay_ms, fs_hz), band.invert, latency, linear,
                      tuple(owners))


def design_project(project: Project) -> None:
    """Design every live filter of ``project`` at its rate (into the design cache).

    Loading a file checks its fields only; this makes the designs, so that a
    filter that cannot be made (an FIR spec that cannot be met, refused as a
    :class:`~planner.errors.SpecNotMetError`) is refused with its path,
    ``bands[i].filters[j].taps: ...``. The commands call it right after
    loading, inside their progress scope.
    """
    for i, b in enumerate(project.bands):
        try:
            design_band(b, project.sample_rate)
        except CrossplanError as e:
            raise e.at(f"bands[{i}]") from None


def evaluate(designs: list[BandDesign], freqs_hz: np.ndarray, fs_hz: float,
             derivative: bool = False) -> BandResponses:
    """Responses of designed bands on a grid (see :func:`planner.dsp.response.band_responses`;
    ``derivative``: the logarithmic derivative in the same pass)."""
    return band_responses([d.sos for d in designs], freqs_hz, fs_hz,
                          gains_db=[d.gain_db for d in designs],
                          delays_samples=[d.delay_samples for d in designs],
                          invert=[d.invert for d in designs],
                          firs=[d.fir for d in designs], derivative=derivative)


def point_evaluator(designs: list[BandDesign], fs_hz: float) -> PointEvaluator:
    """Band ``bands[k]`` of ``designs`` at ``freqs_hz[k]``, for every k at once
    (see :class:`planner.dsp.response.PointEvaluator`)."""
    return PointEvaluator([d.sos for d in designs], fs_hz,
                          gains_db=[d.gain_db for d in designs],
                          delays_samples=[d.delay_samples for d in designs],
                          invert=[d.invert for d in designs],
                          firs=[d.fir for d in designs])
