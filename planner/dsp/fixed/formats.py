"""Number formats of a DSP's coefficients: IEEE double and single, and ``qM.N`` fixed point.

A DSP holds each section's coefficients in one number format: IEEE double
(``float64``), IEEE single (``float32``), or a two's-complement fixed-point
format written ``qM.N``: ``M`` integer bits *including* the sign bit and
``N`` fractional bits, a word of ``M + N`` bits whose values are the
multiples of ``2**-N`` in ``[-2**(M-1), 2**(M-1) - 2**-N]``. So ``q1.31``
holds ``[-1, 1 - 2**-31]`` and ``q2.30`` holds ``[-2, 2 - 2**-30]``.

Rounding to a fixed-point format is to the nearest multiple of ``2**-N``
(ties to even, as :func:`numpy.round`), and values outside the range
saturate to the nearest end; every saturation is reported.

References
----------
.. [1] A. V. Oppenheim and R. W. Schafer, "Discrete-Time Signal Processing",
   3rd ed., Prentice Hall, 2010, sec. 6.7.1 (fixed-point numbers, the
   ``Qm.n`` notation).
.. [4] IEEE Std 754-2008, "IEEE Standard for Floating-Point Arithmetic"
   (binary32 round-to-nearest-even).
"""

from __future__ import annotations

import re
from dataclasses import dataclass

import numpy as np

from planner.errors import ExportError

__all__ = ["Arith", "parse_arith"]

_ACCEPTED = "'float64', 'float32' or 'qM.N' (M integer bits including sign, N fractional bits, " \
            "1 <= M, 0 <= N, M + N <= 64, e.g. 'q1.31', 'q2.30', 'q1.23', 'q1.15')"
_Q_RE = re.compile(r"^q(\d+)\.(\d+)$")


@dataclass(frozen=True)
class Arith:
    """A number format for coefficients.

    Attributes
    ----------
    kind : {'float64', 'float32', 'fixed'}
    int_bits : int
        ``M`` of ``qM.N``, sign bit included (0 for floating point).
    frac_bits : int
        ``N`` of ``qM.N`` (0 for floating point).
    """

    kind: str
    int_bits: int = 0
    frac_bits: int = 0

    @property
    def name(self) -> str:
        """Canonical text, e.g. ``'q1.31'`` or ``'float32'``."""
        return f"q{self.int_bits}.{self.frac_bits}" if self.kind == "fixed" else self.kind

    @property
    def word_bits(self) -> int:
        """Bits per coefficient: ``M + N``, 32 or 64."""
        return {"float64": 64, "float32": 32}.get(self.kind, self.int_bits + self.frac_bits)

    @property
    def lsb(self) -> float:
        """Step between fixed-point values, ``2**-N`` (0.0 for floating point)."""
        return 2.0 ** -self.frac_bits if self.kind == "fixed" else 0.0

    @property
    def min_value(self) -> float:
        """Most negative value: ``-2**(M-1)``; ``-max`` finite float for floats."""
        if self.kind == "fixed":
            return -(2.0 ** (self.int_bits - 1))
        return -float(np.finfo(np.float32 if self.kind == "float32" else np.float64).max)

    @property
    def max_value(self) -> float:
        """Most positive value: ``2**(M-1) - 2**-N``; largest finite float for floats."""
        if self.kind == "fixed":
            return 2.0 ** (self.int_bits - 1) - 2.0 ** -self.frac_bits
        return float(np.finfo(np.float32 if self.kind == "float32" else np.float64).max)

    def holds(self, x) -> np.ndarray:
        """Whether each value lies within ``[min_value, max_value]`` (before rounding)."""
        x = np.asarray(x, dtype=float)
        return (x >= self.min_value) & (x <= self.max_value)

    def quantize(self, x):
        """Round to this format.

        Parameters
        ----------
        x : array_like of float

        Returns
        -------
        q : ndarray of float64
            The representable values (float64 holds every ``qM.N`` value with
            ``M + N <= 53`` exactly; wider words are rounded to float64).
        saturated : ndarray of bool
            Where the rounded value fell outside the range and was clipped.
        """
        x = np.asarray(x, dtype=float)
        if self.kind == "float64":
            return x.copy(), np.zeros(x.shape, dtype=bool)
        if self.kind == "float32":
            with np.errstate(over="ignore"):
                q = x.astype(np.float32)  # IEEE 754 round to nearest even [4]_
            sat = np.isinf(q) & np.isfinite(x)
            q = np.where(sat, np.sign(x) * np.finfo(np.float32).max, q)
            return q.astype(np.float64), sat
        scale = 2.0 ** self.frac_bits
        r = np.round(x * scale) / scale  # nearest, ties to even; exact power-of-two scaling
        sat = (r < self.min_value) | (r > self.max_value)
        return np.clip(r, self.min_value, self.max_value), sat

    def int_bits_needed(self, x) -> int:
        """Fewest integer bits (sign included) that hold every value of ``x`` with ``N`` fractional bits."""
        x = np.asarray(x, dtype=float)
        m = 1
        while np.any(x < -(2.0 ** (m - 1))) or np.any(x > 2.0 ** (m - 1) - 2.0 ** -self.frac_bits):
            m += 1
        return m


def parse_arith(text) -> Arith:
    """Parse a number-format name.

    Parameters
    ----------
    text : str
        ``'float64'``, ``'float32'`` or ``'qM.N'`` (case and surrounding
        blanks ignored), with ``M >= 1`` integer bits including the sign,
        ``N >= 0`` fractional bits and ``M + N <= 64``.

    Returns
    -------
    Arith

    Raises
    ------
    ExportError
        ``field='arith'``, naming the value and the accepted forms.

    References
    ----------
    .. [1] IEEE Std 754-2008 (binary64, binary32); the ``Qm.n`` notation as in
       Oppenheim and Schafer, "Discrete-Time Signal Processing", 3rd ed., sec. 6.7.1.

    Examples
    --------
    >>> a = parse_arith("q2.30")
    >>> a.min_value, a.max_value == 2 - 2**-30
    (-2.0, True)
    """
    if not isinstance(text, str):
        raise ExportError(f"{text!r} is not a format name; use {_ACCEPTED}", field="arith")
    t = text.strip().lower()
    if t in ("float64", "float32"):
        return Arith(t)
    m = _Q_RE.match(t)
    if m:
        ib, fb = int(m.group(1)), int(m.group(2))
        if ib >= 1 and ib + fb <= 64:
            return Arith("fixed", ib, fb)
    raise ExportError(f"{text!r} is not a known format; use {_ACCEPTED}", field="arith")
