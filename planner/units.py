"""Values as people type them, and back: ``"2k"``, ``"2.2 kHz"``, ``"-3 dB"``, ``"1.5ms"``.

:func:`parse` reads one number with an optional SI prefix and unit and
returns it in the field's own unit (Hz, dB, ms or none); :func:`format`
writes a value so that :func:`parse` reads it back (to 10 significant
digits). Both are presentation helpers for the terminal UI; the range rules
(Nyquist, Q > 0, ...) stay in :mod:`planner.filters` and
:mod:`planner.project`.

A bad text raises :class:`~planner.errors.ProjectError` naming the field
and the text, e.g. ``freq: cannot read 'abc' as a frequency (e.g. 2k, 2.2 kHz, 350)``.
"""

from __future__ import annotations

import math
import re

from planner.errors import ProjectError

__all__ = ["ms_to_samples", "parse", "format", "parse_freq_hz", "parse_db", "parse_ms",
           "parse_number", "format_hz", "outside_range_note", "UNITS", "FAR_OUTSIDE_OCT"]

#: Units a field may have, and the unit words accepted for each (lower case).
UNITS = {
    "Hz": {"hz": 1.0, "khz": 1e3, "mhz": 1e6},
    "dB": {"db": 1.0},
    "ms": {"ms": 1.0, "s": 1e3, "us": 1e-3, "µs": 1e-3, "sec": 1e3},
    "": {},
}

_EXAMPLES = {"Hz": "2k, 2.2 kHz, 350", "dB": "-3, -3 dB, +1.5", "ms": "1.5, 1.5ms, 250us",
             "": "0.7, 4"}
_WHAT = {"Hz": "a frequency", "dB": "a level in dB", "ms": "a time", "": "a number"}

#: How far (octaves) outside the analysis range a typed frequency must be for a note.
FAR_OUTSIDE_OCT = 2.0

# A comma with exactly three digits after it ("1,000", "3,500 Hz") reads as a thousands
# separator in English and as a decimal comma elsewhere; two separators ("1,000.5",
# "1.000,5", "1,000,000") are a thousands separator. Both are refused rather than guessed.
_AMBIGUOUS = re.compile(r"^\s*[+-]?(?:\d+,\d{3}(?!\d)|\d*[.,]\d*[.,])")

# number, optional SI prefix, optional unit word; spaces allowed between.
_RE = re.compile(r"""^\s*(?P<num>[+-]?(?:\d+(?:[.,]\d*)?|[.,]\d+)(?:e[+-]?\d+)?)
                     \s*(?P<rest>[a-zµ]*)\s*$""", re.X | re.I)


def ms_to_samples(ms: float, fs_hz: float) -> float:
    """``ms * fs_hz / 1000`` samples, as the exact product of the two numbers as they are
    written (their shortest decimal forms), rounded once to the nearest float.

    Plain float arithmetic rounds twice and can land one unit in the last place away,
    which a text export then prints as ``2.3217600000000003`` for 0.04837 ms at 48 kHz;
    this gives ``2.32176``. The two differ by at most one unit in the last place.
    """
    from decimal import Decimal, localcontext

    ms, fs_hz = float(ms), float(fs_hz)
    if not (math.isfinite(ms) and math.isfinite(fs_hz)):
        return ms * fs_hz / 1000.0
    with localcontext() as ctx:
        ctx.prec = 80           # exact: two 17-digit numbers and a division by 1000
        return float(Decimal(repr(ms)) * Decimal(repr(fs_hz)) / 1000)


def parse(text: str, unit: str = "", field: str = "value") -> float:
    """Read ``text`` as a number in ``unit`` (``"Hz"``, ``"dB"``, ``"ms"`` or ``""``).

    Parameters
    ----------
    text : str
        What was typed: ``"2k"``, ``"2.2 kHz"``, ``"2,2k"``, ``"350"``, ``"-3 dB"``,
        ``"0.7"``, ``"1.5ms"``, ``"250us"``, ``"0.002 s"``. A decimal comma is read
        as a point.
    unit : str
        The field's unit; the value is returned in it.
    field : str
        Field name for the error.

    Returns
    -------
    float

    Raises
    ------
    ProjectError
        When the text is empty, not a number, has a unit of another kind
        (``"3 dB"`` for a frequency) or is not finite.
    """
    if unit not in UNITS:
        raise ValueError(f"unit must be one of {', '.join(repr(u) for u in UNITS)}, not {unit!r}")
    s = str(text).strip()
    if not s:
        raise ProjectError(f"empty; type {_WHAT[unit]} (e.g. {_EXAMPLES[unit]})", field=field)
    if _AMBIGUOUS.match(s):
        raise ProjectError(_ambiguous(s), field=field)
    m = _RE.match(s)
    if not m:
        raise ProjectError(f"cannot read {s!r} as {_WHAT[unit]} (e.g. {_EXAMPLES[unit]})",
                           field=field)
    value = float(m.group("num").replace(",", "."))
    rest = m.group("rest")
    scale = _scale(rest, unit)
    if scale is None:
        raise ProjectError(f"cannot read {s!r} as {_WHAT[unit]}: unknown unit {rest!r} "
                           f"(e.g. {_EXAMPLES[unit]})", field=field)
    value *= scale
    if not math.isfinite(value):
        raise ProjectError(f"{s!r} is not a finite number", field=field)
    return value


def _ambiguous(s: str) -> str:
    """Why a number with a thousands-like separator is refused, and what to type instead."""
    num = re.match(r"\s*[+-]?[\d.,]*", s).group(0).strip()
    if num.count(",") + num.count(".") > 1:
        # Guess nothing: the last mark may be the decimal one in either convention.
        return (f"cannot read {s!r}: it has more than one separator; type the number without "
                f"a thousands separator, with a point for decimals (e.g. 1000 or 1000.5)")
    whole = num.replace(",", "")
    return (f"{s!r} is ambiguous: a comma before three digits may be a thousands separator "
            f"or a decimal comma; type {whole} (or {num.replace(',', '.')} if you meant that)")


def outside_range_note(freq_hz: float, f_min_hz: float, f_max_hz: float,
                       octaves: float = FAR_OUTSIDE_OCT) -> str | None:
    """A note when a typed frequency lies far outside the analysis range, else None.

    A value more than ``octaves`` below ``f_min_hz`` or above ``f_max_hz``
    (``"2 Hz is 3.3 octaves below the analysed range (20 Hz .. 20 kHz)"``)
    is valid but most likely a slip (``2`` for ``2k``); the caller keeps it
    and shows the note.
    """
    if not (freq_hz > 0 and f_min_hz > 0 and f_max_hz > 0):
        return None
    rng = f"{format_hz(f_min_hz)} .. {format_hz(f_max_hz)}"
    below = math.log2(f_min_hz / freq_hz)
    above = math.log2(freq_hz / f_max_hz)
    if below > octaves:
        guess = (f"; did you mean {format_hz(freq_hz * 1000)}?"
                 if f_min_hz <= freq_hz * 1000 <= f_max_hz else "")
        return f"{format_hz(freq_hz)} is {below:.1f} octaves below the analysed range ({rng}){guess}"
    if above > octaves:
        return f"{format_hz(freq_hz)} is {above:.1f} octaves above the analysed range ({rng})"
    return None


def _scale(rest: str, unit: str) -> float | None:
    words = UNITS[unit]
    low = rest.lower()
    if not low:
        return 1.0
    if low in words:
        return words[low]
    if unit == "Hz" and low == "k":  # "2k" is the usual way to write 2 kHz
        return 1e3
    return None


def parse_freq_hz(text: str, field: str = "freq") -> float:
    """``"2k" -> 2000.0``, ``"2.2 kHz" -> 2200.0``, ``"350" -> 350.0`` (Hz)."""
    return parse(text, "Hz", field)


def parse_db(text: str, field: str = "gain_db") -> float:
    """``"-3 dB" -> -3.0``, ``"+1.5" -> 1.5`` (dB)."""
    return parse(text, "dB", field)


def parse_ms(text: str, field: str = "delay_ms") -> float:
    """``"1.5ms" -> 1.5``, ``"250us" -> 0.25``, ``"0.002 s" -> 2.0`` (ms)."""
    return parse(text, "ms", field)


def parse_number(text: str, field: str = "value") -> float:
    """``"0.7" -> 0.7`` (no unit)."""
    return parse(text, "", field)


def _num(v: float, digits: int) -> str:
    return f"{v:.{digits}g}"  # very small or large values use e-notation, which parse reads


def format_hz(freq_hz: float, digits: int = 3) -> str:
    """``2200 -> '2.2 kHz'``, ``35 -> '35 Hz'``, ``12500 -> '12.5 kHz'`` (``digits`` significant).

    The one way crossplan writes a frequency: reports, warnings, labels and
    the editor. With ``digits=10`` it reads back exactly through :func:`parse`.
    """
    if abs(freq_hz) >= 1000:
        return f"{_num(freq_hz / 1000, digits)} kHz"
    return f"{_num(freq_hz, digits)} Hz"


def format(value: float, unit: str = "", digits: int = 10) -> str:  # noqa: A001 - module API
    """Write ``value`` in ``unit`` so that :func:`parse` reads it back.

    ``format(2200, "Hz") -> '2.2 kHz'``, ``format(-3, "dB") -> '-3 dB'``,
    ``format(1.5, "ms") -> '1.5 ms'``, ``format(0.7) -> '0.7'``.
    """
    if unit == "Hz":
        return format_hz(value, digits)
    text = _num(value, digits)
    return f"{text} {unit}" if unit else text
