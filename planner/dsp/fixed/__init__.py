"""A band's second-order sections as a DSP holds them: number formats, rounding, scaling.

One module per job; every public name is here as well:

* :mod:`~planner.dsp.fixed.formats`: number formats (``float64``, ``float32``,
  ``qM.N``) and their rounding (:class:`Arith`, :func:`parse_arith`);
* :mod:`~planner.dsp.fixed.quantize`: sections rounded to a format with a
  post-shift per section (:func:`quantize_sos`, :func:`post_shifts`,
  :func:`unshift`, :func:`pole_radius`);
* :mod:`~planner.dsp.fixed.sections`: pairing, ordering and scaling of the
  sections without losing exact zeros;
* :mod:`~planner.dsp.fixed.deviation`: how far the rounded chain is from its
  design, its internal gain, and what would fix a format that cannot hold it.

Sections are rows ``[b0, b1, b2, 1, a1, a2]``; ``a0 = 1`` is implicit and never stored.

References
----------
.. [1] A. V. Oppenheim and R. W. Schafer, "Discrete-Time Signal Processing",
   3rd ed., Prentice Hall, 2010, sec. 6.7-6.9.
.. [2] L. B. Jackson, "Digital Filters and Signal Processing", 3rd ed.,
   Kluwer, 1996, sec. 11.3-11.4.
"""

from __future__ import annotations

from planner.dsp.fixed.deviation import (Deviation, PeakGains, judge_deviation,
                                         peak_internal_gain_db, response_deviation_db,
                                         suggest_fixes)
from planner.dsp.fixed.formats import Arith, parse_arith
from planner.dsp.fixed.quantize import QuantizedSos, pole_radius, post_shifts, quantize_sos, unshift
from planner.dsp.fixed.sections import (ScaledSections, integer_shape, pair_sections, peak_grid,
                                        quadratic_roots, scale_sections)

__all__ = [
    "Arith",
    "QuantizedSos",
    "PeakGains",
    "parse_arith",
    "quantize_sos",
    "pole_radius",
    "response_deviation_db",
    "post_shifts",
    "unshift",
    "Deviation",
    "judge_deviation",
    "peak_internal_gain_db",
    "suggest_fixes",
    "quadratic_roots",
    "integer_shape",
    "pair_sections",
    "ScaledSections",
    "scale_sections",
    "peak_grid",
]
