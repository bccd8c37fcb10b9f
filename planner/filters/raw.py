"""The ``biquad`` filter type: raw second-order sections brought in from elsewhere.

A user who already runs a DSP configuration can check it beside new designs
by entering its coefficients as they are: ``[b0, b1, b2, a1, a2]`` per
section (normalised so that ``a0 = 1``, denominator
``1 + a1 z^-1 + a2 z^-2``), all sections in turn in one flat list, and the
sample rate they were made for. Raw coefficients cannot be redesigned at
another rate, so the filter is analysed at its own rate only and refused,
with a :class:`~planner.errors.ProjectError` naming both rates, anywhere
else (a project at another rate, an export at another rate).

JSON form::

    {"type": "biquad", "rate": 48000,
     "coeffs": [b0, b1, b2, a1, a2,  b0, b1, b2, a1, a2, ...]}

References
----------
.. [1] A. V. Oppenheim and R. W. Schafer, "Discrete-Time Signal Processing",
   3rd ed., Prentice Hall, 2010, sec. 6.3 (cascade form of second-order
   sections) and sec. 5.2 (stability: poles inside the unit circle).
"""

from __future__ import annotations

from typing import Any, Mapping

import numpy as np

from planner.dsp.fixed import pole_radius
from planner.errors import ProjectError
from planner.filters.fields import FieldSpec
from planner.filters.registry import FilterDesign, FilterKind, register
from planner.units import format_hz

__all__ = ["KIND", "sections_from_coeffs"]

#: Rates accepted for ``rate`` (Hz), the same range as a project's sample_rate.
_RATE_LO, _RATE_HI = 1000.0, 1_536_000.0


def sections_from_coeffs(coeffs) -> np.ndarray:
    """Turn a flat ``[b0, b1, b2, a1, a2, ...]`` list into sections of shape (n, 6).

    Parameters
    ----------
    coeffs : sequence of float
        Five numbers per section, ``a0 = 1`` implied.

    Returns
    -------
    sos : ndarray, shape (n, 6)
        Rows ``[b0, b1, b2, 1, a1, a2]`` (scipy's layout).

    Raises
    ------
    ProjectError
        ``field='coeffs'`` when the count is not a multiple of 5.
    """
    c = np.asarray(coeffs, dtype=float).ravel()
    if len(c) == 0 or len(c) % 5:
        raise ProjectError(f"needs 5 numbers per section (b0, b1, b2, a1, a2); got {len(c)}",
                           field="coeffs")
    five = c.reshape(-1, 5)
    return np.column_stack([five[:, :3], np.ones(len(five)), five[:, 3:]])


def _at_own_rate(p: Mapping[str, Any], fs_hz: float) -> None:
    if float(fs_hz) != float(p["rate"]):
        raise ProjectError(
            f"raw biquad coefficients were made for {p['rate']:g} Hz and cannot be used or "
            f"redesigned at {float(fs_hz):g} Hz; run this band at {p['rate']:g} Hz or enter "
            f"coefficients made for {float(fs_hz):g} Hz", field="rate")


def _check(p: Mapping[str, Any], fs_hz: float) -> None:
    sos = sections_from_coeffs(p["coeffs"])
    r = pole_radius(sos)
    if np.any(r >= 1.0):
        i = int(np.argmax(r))
        raise ProjectError(
            f"section {i + 1} has a pole at radius {r[i]:.9g}, on or outside the unit circle: "
            "the filter is unstable (check the sign of a1 and a2: the denominator is "
            "1 + a1 z^-1 + a2 z^-2)", field="coeffs")
    _at_own_rate(p, fs_hz)


def _design(p: Mapping[str, Any], fs_hz: float) -> FilterDesign:
    _at_own_rate(p, fs_hz)
    return FilterDesign(sections_from_coeffs(p["coeffs"]))


def _label(p: Mapping[str, Any]) -> str:
    n = len(p["coeffs"]) // 5
    return f"biquad x{n} at {format_hz(p['rate'])}"


KIND = register(FilterKind(
    "biquad", None, "raw biquad sections",
    (FieldSpec("coeffs", "floats", "", lo=5,
               help="b0, b1, b2, a1, a2 of each section in turn (a0 = 1; "
                    "denominator 1 + a1 z^-1 + a2 z^-2)"),
     FieldSpec("rate", "float", "Hz", lo=_RATE_LO, hi=_RATE_HI,
               help="sample rate the coefficients were made for")),
    _design, _label, check=_check,
))
