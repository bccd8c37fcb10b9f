"""Crossover filter kinds: Butterworth, Linkwitz-Riley, Bessel and the cookbook second order.

JSON forms::

    {"type": "lowpass", "family": "linkwitz-riley", "order": 4, "freq": 2200}
    {"type": "highpass", "family": "bessel", "order": 3, "freq": 80, "norm": "phase"}
    {"type": "lowpass", "family": "cookbook", "freq": 2200, "q": 0.5}

The designs are :func:`planner.dsp.iir.crossover_sos` and the Audio EQ
Cookbook's LPF/HPF (:mod:`planner.dsp.biquad`).
"""

from __future__ import annotations

from planner.dsp import biquad, iir
from planner.filters.fields import FieldSpec
from planner.filters.registry import FilterDesign, FilterKind, register
from planner.units import format_hz

__all__ = ["FREQ", "BUTTERWORTH_Q", "SHORT_NAMES"]

#: A cut-off or centre frequency field (shared by every kind with one).
FREQ = FieldSpec("freq", "freq", "Hz", help="cut-off or centre frequency")
#: Q of a second-order Butterworth section, 1/sqrt(2).
BUTTERWORTH_Q = 0.7071067811865476
#: Short family names of the labels (``LR4 lowpass 2.2 kHz``).
SHORT_NAMES = {"butterworth": "BW", "linkwitz-riley": "LR", "bessel": "BE"}


def _crossover_kind(type_: str, family: str) -> FilterKind:
    fields = [FieldSpec("order", "int", "", choices=iir.FAMILIES[family],
                        help="6 dB/octave per order"), FREQ]
    if family == "bessel":
        fields.append(FieldSpec("norm", "choice", required=False, default="phase",
                                choices=iir.BESSEL_NORMS,
                                help="phase: Butterworth-like phase at freq; delay: lowpass DC "
                                     "group delay 1/(2 pi freq); mag: -3 dB"))

    def design(p, fs):
        return FilterDesign(iir.crossover_sos(family, type_, p["order"], p["freq"], fs,
                                              norm=p.get("norm", "phase")))

    def label(p):
        return f"{SHORT_NAMES[family]}{p['order']} {type_} {format_hz(p['freq'])}"

    return FilterKind(type_, family, f"{family} {type_}", tuple(fields), design, label)


def _cookbook_kind(type_: str) -> FilterKind:
    make = biquad.lowpass2 if type_ == "lowpass" else biquad.highpass2

    def design(p, fs):
        return FilterDesign(make(p["freq"], p["q"], fs))

    def label(p):
        return f"{type_} Q{p['q']:.2g} {format_hz(p['freq'])}"

    return FilterKind(type_, "cookbook", f"second-order {type_} with Q",
                      (FREQ, FieldSpec("q", "q", "", required=False, default=BUTTERWORTH_Q,
                                       help="0.707: Butterworth; 0.5: LR2")), design, label)


for _type in ("lowpass", "highpass"):
    for _family in iir.FAMILIES:
        register(_crossover_kind(_type, _family))
    register(_cookbook_kind(_type))
