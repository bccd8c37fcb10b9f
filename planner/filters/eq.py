"""EQ filter kinds of the Audio EQ Cookbook: peaking, shelves, notch, band-pass and all-pass.

JSON forms::

    {"type": "peaking", "freq": 6000, "gain_db": -2.0, "q": 1.4}
    {"type": "low_shelf", "freq": 120, "gain_db": 3.0, "slope": 1.0}
    {"type": "notch", "freq": 3150, "q": 10}
    {"type": "allpass", "freq": 2200, "order": 2, "q": 0.7}

The designs are :mod:`planner.dsp.biquad` (R. Bristow-Johnson, "Audio EQ
Cookbook", W3C Working Group Note, 2021).
"""

from __future__ import annotations

from planner.dsp import biquad
from planner.errors import ProjectError
from planner.filters.fields import FieldSpec
from planner.filters.iir import BUTTERWORTH_Q, FREQ
from planner.filters.registry import FilterDesign, FilterKind, register
from planner.units import format_hz

__all__ = ["GAIN", "Q"]

#: Gain at the centre or on the shelf.
GAIN = FieldSpec("gain_db", "db", "dB", help="gain at the centre or on the shelf")
#: Quality factor.
Q = FieldSpec("q", "q", "", help="quality factor")


def _shelf_check(p, fs):
    if "q" in p and "slope" in p:
        raise ProjectError("give q or slope, not both", field="slope")


def _shelf(type_: str, make) -> FilterKind:
    words = type_.replace("_", " ")

    def design(p, fs):
        return FilterDesign(make(p["freq"], p["gain_db"], fs,
                                 q=p.get("q", None if "slope" in p else BUTTERWORTH_Q),
                                 slope=p.get("slope")))

    def label(p):
        return f"{words} {p['gain_db']:+.1f} dB {format_hz(p['freq'])}"

    return FilterKind(
        type_, None, words,
        (FREQ, GAIN, FieldSpec("q", "q", "", required=False, help="Q of the shelf; or give slope"),
         FieldSpec("slope", "float", "", required=False, lo=1e-3, hi=10.0,
                   help="shelf slope S (1: steepest monotonic); or give q")),
        design, label, check=_shelf_check)


def _allpass_check(p, fs):
    if p["order"] == 2 and "q" not in p:
        raise ProjectError("missing; a second-order all-pass needs q", field="q")


def _allpass_design(p, fs):
    return FilterDesign(biquad.allpass1(p["freq"], fs) if p["order"] == 1
                        else biquad.allpass(p["freq"], p["q"], fs))


def _allpass_label(p):
    return f"all-pass{p['order']} {format_hz(p['freq'])}" + \
        (f" Q{p['q']:.2g}" if p["order"] == 2 else "")


register(FilterKind(
    "peaking", None, "peaking EQ", (FREQ, GAIN, Q),
    lambda p, fs: FilterDesign(biquad.peaking(p["freq"], p["gain_db"], p["q"], fs)),
    lambda p: f"peak {p['gain_db']:+.1f} dB {format_hz(p['freq'])} Q{p['q']:.2g}"))
register(_shelf("low_shelf", biquad.low_shelf))
register(_shelf("high_shelf", biquad.high_shelf))
register(FilterKind(
    "notch", None, "notch", (FREQ, Q),
    lambda p, fs: FilterDesign(biquad.notch(p["freq"], p["q"], fs)),
    lambda p: f"notch {format_hz(p['freq'])} Q{p['q']:.2g}"))
register(FilterKind(
    "bandpass", None, "band-pass", (FREQ, Q),
    lambda p, fs: FilterDesign(biquad.bandpass(p["freq"], p["q"], fs)),
    lambda p: f"band-pass {format_hz(p['freq'])} Q{p['q']:.2g}"))
register(FilterKind(
    "allpass", None, "all-pass",
    (FREQ, FieldSpec("order", "int", "", required=False, default=2, choices=(1, 2)),
     FieldSpec("q", "q", "", required=False, help="needed for order 2")),
    _allpass_design, _allpass_label, check=_allpass_check))
