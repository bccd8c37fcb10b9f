"""Filter kinds that correct a driver: the Linkwitz transform, baffle step, break-up notch.

JSON forms::

    {"type": "linkwitz_transform", "f0": 55, "q0": 0.9, "fp": 35, "qp": 0.6}
    {"type": "baffle_step", "width_mm": 220, "gain_db": 4}
    {"type": "breakup_notch", "freq": 6500, "height_db": 8, "q": 5}

* The Linkwitz transform moves a closed box's resonance ``f0`` and total Q
  ``q0`` (as measured or modelled) to ``fp`` and ``qp``: the analog section
  ``(s^2 + s w0/q0 + w0^2) / (s^2 + s wp/qp + wp^2)`` made digital by the
  prewarped bilinear transform (at the geometric mean of the two
  frequencies). Below both it boosts by ``(f0/fp)^2``, 40 log10(f0/fp) dB:
  more excursion and amplifier power, which the check warns of.
* The baffle step: a baffle ``width_mm`` wide radiates into half space above
  about ``115 / width_m`` Hz (rule of thumb, common practice, no published
  source) and into full space below, 6 dB less at most. The filter lowers the
  highs by ``gain_db`` with a first-order shelf centred there, so the lows
  stand ``gain_db`` higher without a boost (no headroom spent).
* The break-up notch: the inverse of a cone break-up peak of ``height_db`` at
  ``freq`` with ``q`` (the driver model's ``breakup_*`` values): the Audio EQ
  Cookbook peaking filter with gain ``-height_db``, which is exactly the
  analog peak's inverse, bilinear-transformed at ``freq``.

References
----------
.. [1] S. H. Linkwitz, "Loudspeaker System Design", Wireless World, 1978
   (the transform of a closed box's f0 and Q; reference from memory).
.. [2] R. Bristow-Johnson, "Audio EQ Cookbook", W3C Working Group Note, 2021.
"""

from __future__ import annotations

import math

from planner.dsp import biquad
from planner.errors import ProjectError
from planner.filters.fields import FieldSpec
from planner.filters.registry import FilterDesign, FilterKind, register
from planner.units import format_hz

__all__ = ["BAFFLE_STEP_HZ_M", "baffle_step_hz", "linkwitz_boost_db"]

#: The baffle-step frequency times the baffle width (Hz m): common practice, no published
#: source.
BAFFLE_STEP_HZ_M = 115.0


def baffle_step_hz(width_mm: float) -> float:
    """Centre of the baffle step of a baffle ``width_mm`` wide: ``115 / width_m`` Hz."""
    return BAFFLE_STEP_HZ_M / (width_mm / 1000.0)


def linkwitz_boost_db(p) -> float:
    """Low-frequency boost of a Linkwitz transform: ``40 log10(f0 / fp)`` dB (its DC gain)."""
    return 40.0 * math.log10(p["f0"] / p["fp"])


def _lt_design(p, fs):
    w0, wp = 2 * math.pi * p["f0"], 2 * math.pi * p["fp"]
    b = [1.0, w0 / p["q0"], w0 * w0]
    a = [1.0, wp / p["qp"], wp * wp]
    return FilterDesign(biquad.analog_section(b, a, fs, math.sqrt(p["f0"] * p["fp"])))


def _bs_check(p, fs):
    f = baffle_step_hz(p["width_mm"])
    if not f < fs / 2:
        raise ProjectError(f"{p['width_mm']:g} mm puts the step at {f:g} Hz, above Nyquist "
                           f"({fs / 2:g} Hz)", field="width_mm")


def _bs_design(p, fs):
    # First-order shelf: (s / wz + 1) / (s / wp + 1), 0 dB at DC and -gain above, its
    # corners spread evenly (in log frequency) about the step.
    fc, g = baffle_step_hz(p["width_mm"]), 10.0 ** (-p["gain_db"] / 20.0)
    wz, wp = 2 * math.pi * fc / math.sqrt(g), 2 * math.pi * fc * math.sqrt(g)
    return FilterDesign(biquad.analog_section([1.0 / wz, 1.0], [1.0 / wp, 1.0], fs, fc))


register(FilterKind(
    "linkwitz_transform", None, "Linkwitz transform",
    (FieldSpec("f0", "freq", "Hz", help="the closed box's resonance now"),
     FieldSpec("q0", "q", "", help="its total Q now"),
     FieldSpec("fp", "freq", "Hz", help="the resonance wanted"),
     FieldSpec("qp", "q", "", default=0.707, required=False, help="the Q wanted")),
    _lt_design,
    lambda p: f"Linkwitz {format_hz(p['f0'])} Q{p['q0']:.2g} -> {format_hz(p['fp'])} "
              f"Q{p['qp']:.2g}"))
register(FilterKind(
    "baffle_step", None, "baffle-step compensation",
    (FieldSpec("width_mm", "float", "mm", lo=20.0, hi=5000.0, help="baffle width (mm)"),
     FieldSpec("gain_db", "db", "dB", lo=0.0, hi=6.0, default=6.0, required=False,
               help="how much lower the highs go (dB; 6 for a box far from walls)")),
    _bs_design,
    lambda p: f"baffle step {p['gain_db']:.1f} dB at {format_hz(baffle_step_hz(p['width_mm']))}",
    check=_bs_check))
register(FilterKind(
    "breakup_notch", None, "break-up notch",
    (FieldSpec("freq", "freq", "Hz", help="the break-up peak's frequency"),
     FieldSpec("height_db", "db", "dB", lo=0.0, hi=30.0, help="the peak's height (dB)"),
     FieldSpec("q", "q", "", default=4.0, required=False, help="the peak's Q")),
    lambda p, fs: FilterDesign(biquad.peaking(p["freq"], -p["height_db"], p["q"], fs)),
    lambda p: f"break-up notch -{p['height_db']:.1f} dB {format_hz(p['freq'])} Q{p['q']:.2g}"))
