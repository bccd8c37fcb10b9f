"""IIR versus FIR: for each band, the two designs that meet the same magnitude spec.

For every band of a project the crossover filters (lowpass, highpass and the
``fir`` family; EQ filters and end-of-range filters, see :func:`end_of_range`,
are left out and kept as they are in both builds) are read as one chain, and
a magnitude spec is derived from that chain's own response (see
:func:`derive_spec`). Then both ways of meeting that spec are put side by
side:

* an IIR band (its crossover is sections only) keeps its own design on the
  IIR side; the FIR side is the shortest equiripple (Parks-McClellan) FIR
  that meets the spec (:func:`planner.dsp.fir.min_taps_equiripple`);
* an FIR band keeps its own taps on the FIR side; the IIR side is the
  lowest-order IIR that meets the spec (:func:`iir_equivalent`:
  Butterworth by :mod:`planner.dsp.iir` while an order of at most 8 does,
  else elliptic, or the family asked for).

Per side: order or taps, multiplies per sample, latency, group-delay
variation over the pass band, pre-ringing, and the measured ripple and
attenuation. The whole project is then built both ways (every band's
crossover IIR, every band's crossover FIR, EQ kept) and the flatness of
each sum is given.

Pure of I/O and UI: every result is a dataclass with ``to_dict()``.

Spec conventions are those of :class:`planner.dsp.fir.FirSpec`: ripple is
peak-to-peak over the pass band; attenuation is below the *nominal* pass
gain, the middle of the ripple band (``(max + min) / 2``, linear). scipy's
IIR order functions count the stop band below the pass-band *maximum*
instead; the two differ by ``20 log10(1 + delta_p)`` (about 0.5 dB for a
1 dB ripple), which :func:`iir_equivalent` adds.

References
----------
.. [1] A. V. Oppenheim and R. W. Schafer, "Discrete-Time Signal Processing",
   3rd ed., Pearson, 2010, sec. 7.2-7.3 (Butterworth and elliptic design by
   the bilinear transform, order formulas), 5.7 (linear phase), 6.3 and
   6.5 (cascade and folded FIR structures).
.. [2] T. W. Parks and J. H. McClellan, IEEE Trans. Circuit Theory CT-19(2),
   1972 (equiripple FIR).
.. [3] A. Antoniou, "Digital Signal Processing: Signals, Systems, and
   Filters", McGraw-Hill, 2006, sec. 10.5-10.6 (elliptic order
   ``n >= K(k) K'(k1) / (K'(k) K(k1))``).
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Callable, Sequence

import numpy as np

from planner import engine, filters as fk
from planner import progress as pg
from planner.compare.equivalents import fir_equivalent, iir_equivalent, side_metrics
from planner.compare.results import (DEFAULT_ATTEN_DB, DEFAULT_RIPPLE_DB, NO_CROSSOVER, NOT_MET,
                                     OK, BandComparison, Build, Comparison, DerivedSpec, Side)
from planner.compare.spec import (check_family, check_spec_numbers, derive_spec, end_of_range,
                                  is_crossover)
from planner.dsp import analysis as an
from planner.dsp import fir as dfir
from planner.engine import BandDesign
from planner.errors import SpecNotMetError
from planner.model import Project

__all__ = ["compare_chain", "compare_project"]


@dataclass(frozen=True)
class _ChainResult:
    own: str
    spec: DerivedSpec
    iir: Side
    fir: Side


def compare_chain(sos: np.ndarray, fir: np.ndarray | None, fs_hz: float, design: str = "",
                  ripple_db: float = DEFAULT_RIPPLE_DB, atten_db: float = DEFAULT_ATTEN_DB,
                  iir_family: str = "auto", max_taps: int = dfir.DEFAULT_MAX_TAPS,
                  f_min_hz: float = 20.0, f_max_hz: float = 20000.0,
                  progress: Callable[[float], None] | None = None,
                  cancel: Callable[[], bool] | None = None) -> _ChainResult:
    """Compare one crossover chain with its equivalent of the other family.

    A chain with FIR taps is the FIR side and gets an IIR equivalent
    (:func:`iir_equivalent`); a chain of sections only is the IIR side and
    gets an FIR equivalent (:func:`fir_equivalent`).

    Returns an object with ``own`` (``"iir"`` or ``"fir"``), ``spec``,
    ``iir`` and ``fir`` (:class:`Side`). Raises :class:`SpecNotMetError`
    as :func:`derive_spec` and the equivalents do.
    """
    check_family(iir_family)
    fs = float(fs_hz)
    sos = np.asarray(sos, float).reshape(-1, 6)
    spec = derive_spec(sos, fir, fs, ripple_db, atten_db)
    rng = dict(f_min_hz=f_min_hz, f_max_hz=f_max_hz)
    own = side_metrics(sos, fir, spec, fs, "project", design or "project design", **rng)
    if fir is None:
        taps, label = fir_equivalent(spec, fs, max_taps, progress, cancel)
        other = side_metrics(np.zeros((0, 6)), taps, spec, fs, "equivalent", label, **rng)
        return _ChainResult("iir", spec, own, other)
    eq_sos, label = iir_equivalent(spec, fs, iir_family)
    other = side_metrics(eq_sos, None, spec, fs, "equivalent", label, **rng)
    return _ChainResult("fir", spec, other, own)


def _parts(band, fs: float, kept: set[int] = frozenset(), voicing: bool = True):
    """(crossover sos, crossover fir, EQ sos, EQ fir, label, kept labels) of a band's live filters.

    The filters at the positions ``kept`` (end-of-range ones) go with the EQ. With
    ``voicing=False`` the filters marked voicing are left out (as the check judges).
    """
    xs, xf, es, ef, labels, kept_labels = [], None, [], None, [], []
    for k, f in enumerate(band.filters):
        if f.bypass or (f.voicing and not voicing):
            continue
        d = engine.design_filter(f, fs)
        if k in kept:
            kept_labels.append(fk.label(f))
        if is_crossover(f) and k not in kept:
            labels.append(fk.label(f))
            if len(d.sos):
                xs.append(d.sos)
            if d.fir is not None:
                xf = d.fir if xf is None else np.convolve(xf, d.fir)
        else:
            if len(d.sos):
                es.append(d.sos)
            if d.fir is not None:
                ef = d.fir if ef is None else np.convolve(ef, d.fir)

    def stack(lst):
        return np.vstack(lst) if lst else np.zeros((0, 6))

    return stack(xs), xf, stack(es), ef, " + ".join(labels), tuple(kept_labels)


def _scope_callbacks(progress, cancel, text: str):
    """Explicit callbacks, else those of the current :mod:`planner.progress` scope."""
    if progress is None and pg.active():
        progress = pg.reporter(text)
    if cancel is None and pg.active():
        cancel = pg.cancelled
    return progress, cancel


def compare_project(project: Project, ripple_db: float = DEFAULT_RIPPLE_DB,
                    atten_db: float = DEFAULT_ATTEN_DB, iir_family: str = "auto",
                    max_taps: int = dfir.DEFAULT_MAX_TAPS,
                    progress: Callable[[float], None] | None = None,
                    cancel: Callable[[], bool] | None = None) -> Comparison:
    """Compare every band of ``project`` with its equivalent of the other family.

    Parameters
    ----------
    project : Project
    ripple_db, atten_db : float
        Spec read from each band (see :func:`derive_spec`).
    iir_family : {"auto", "butterworth", "elliptic"}
        IIR equivalents of FIR bands (see :func:`iir_equivalent`).
    max_taps : int
        Longest FIR equivalent tried (default
        :data:`planner.dsp.fir.DEFAULT_MAX_TAPS`; ``crossplan compare`` passes
        :data:`planner.defaults.COMPARE_MAX_TAPS`); a band whose equivalent
        needs more by Kaiser's estimate is reported :data:`NOT_MET` at once,
        with the estimate and the latency it means.
    progress : callable ``(fraction) -> None``, optional
        Overall progress of the FIR searches, in [0, 1]. Without it (and
        without ``cancel``) the current :mod:`planner.progress` scope, if
        any, is used.
    cancel : callable ``() -> bool``, optional
        Asked before each trial FIR; True stops with
        :class:`planner.errors.DesignCancelled`.

    Returns
    -------
    Comparison
        A band whose spec cannot be met has status :data:`NOT_MET` and the
        reason; the other bands are still compared.
    """
    r, a = check_spec_numbers(ripple_db, atten_db)
    check_family(iir_family)
    fs = float(project.sample_rate)
    rep = engine.analyse(project)
    nb = len(project.bands)
    ends = end_of_range(project)
    parts = [_parts(b, fs, e) for b, e in zip(project.bands, ends)]
    bands: list[BandComparison] = []
    for i, (band, (xs, xf, _, _, label, kept)) in enumerate(zip(project.bands, parts)):
        if not len(xs) and xf is None:
            msg = (f"only end-of-range filters ({', '.join(kept)}), kept as they are in both "
                   "builds" if kept else "")
            bands.append(BandComparison(i, band.name, NO_CROSSOVER, message=msg,
                                        end_of_range=kept))
            continue
        if kept:
            label += f"; {', '.join(kept)} kept on both sides (end of range)"
        prog, canc = _scope_callbacks(progress, cancel,
                                      f"compare: band {band.name}, FIR equivalent")
        sub = None
        if prog is not None:
            def sub(f, i=i, prog=prog):
                prog((i + f) / nb)
        try:
            c = compare_chain(xs, xf, fs, label, r, a, iir_family, max_taps,
                              project.analysis.f_min, project.analysis.f_max, sub, canc)
        except SpecNotMetError as e:
            bands.append(BandComparison(i, band.name, NOT_MET,
                                        own="fir" if xf is not None else "iir",
                                        message=f"band {band.name}: {e}", end_of_range=kept))
            continue
        bands.append(BandComparison(i, band.name, OK, c.own, c.spec, c.iir, c.fir,
                                    end_of_range=kept))
    if progress is not None:
        progress(1.0)
    judged = parts
    if project.without_voicing() is not project:     # judged with the voicing set aside
        judged = [_parts(b, fs, e, voicing=False) for b, e in zip(project.bands, ends)]
    return Comparison(project.name, fs, r, a, iir_family, bands,
                      _build(project, rep, parts, bands, "iir", judged),
                      _build(project, rep, parts, bands, "fir", judged))


def _build(project: Project, rep: engine.Report, parts, bands: Sequence[BandComparison],
           family: str, judged=None) -> Build:
    """Every band's crossover replaced by its ``family`` side; EQ, gain, delay, polarity kept.

    With drivers the build's sum is acoustic (each band times its driver), as
    the check's. Its flatness is judged as the check's: from the project's
    target, on the bands built from ``judged`` (the parts without the voicing
    filters; default ``parts``).
    """
    judged = parts if judged is None else judged
    fs = float(project.sample_rate)
    missing = [b.name for b in bands if b.status == NOT_MET]
    if missing:
        return Build(family, False, missing)
    chains, delta = [], []
    for b, (xs, xf, es, ef, _, _), own in zip(bands, parts, rep.designs):
        if b.status != OK:
            chains.append(None)
            delta.append(0.0)
            continue
        side = b.iir if family == "iir" else b.fir
        own_side = b.iir if b.own == "iir" else b.fir
        chains.append(side)
        delta.append(side.latency_samples - own_side.latency_samples)
    top = max(delta) if delta else 0.0
    align = [top - d for d in delta]
    def built(which, owns):
        out = []
        for (b, (xs, xf, es, ef, _, _), own, side, al) in zip(bands, which, owns, chains,
                                                              align):
            if side is None:
                out.append(own)
                continue
            sos = np.vstack([es, side.sos]) if len(es) else side.sos
            f = side.fir
            if ef is not None:
                f = ef if f is None else np.convolve(ef, f)
            out.append(BandDesign(sos, f, own.gain_db, own.delay_samples + al, own.invert))
        return out

    designs = built(parts, rep.designs)
    voiced = judged is not parts
    checked = designs
    if voiced:
        checked = built(judged, [engine.design_band(b, fs)
                                 for b in project.without_voicing().bands])
    target = project.analysis.target
    active = project.active()
    lat = max((s.latency_samples + al for s, al in zip(chains, align) if s is not None),
              default=0.0)
    inverted = [b.name for b in project.bands if b.invert]
    if not any(active):
        return Build(family, True, [], None, None, None, lat, 1000.0 * lat / fs, align,
                     inverted, designs, target, voiced)
    bands_h = engine.evaluate(checked, rep.freqs_hz, fs).h
    if rep.drivers is not None:          # the acoustic sum, as the check's
        bands_h = bands_h * rep.drivers.all_bands(rep.freqs_hz)
    h = bands_h[np.asarray(active, dtype=bool)].sum(axis=0)
    t_db = 0.0 if rep.target_db is None else rep.target_db
    dev, at, ripple = an.flatness(rep.freqs_hz, h, t_db)
    return Build(family, True, [], dev, at, ripple, lat, 1000.0 * lat / fs, align, inverted,
                 designs, target, voiced)
