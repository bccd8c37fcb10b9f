"""The parameters of a filter kind and their checks: one small checker per rule.

A :class:`FieldSpec` names a parameter, its unit, default and range, and its
*rule*, the key of :data:`CHECKERS`: ``freq`` (Hz, 0 < f < Nyquist), ``q``
(0 < Q <= 100), ``db`` (dB within a range), ``int`` (a whole number, from
``choices`` or within ``lo``/``hi``), ``choice`` (one of ``choices``),
``float`` (within ``lo``/``hi``) or ``floats`` (a non-empty list of finite
numbers, ``lo``..``hi`` of them). Every refusal is a
:class:`~planner.errors.ProjectError` naming the field, the rule and the value.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any, Callable

from planner.errors import ProjectError

__all__ = ["FieldSpec", "CHECKERS", "check_field", "finite_number", "Q_MAX", "DB_RANGE"]

#: Largest Q a filter takes.
Q_MAX = 100.0
#: Range of a dB field without a range of its own.
DB_RANGE = (-60.0, 30.0)


@dataclass(frozen=True)
class FieldSpec:
    """One parameter of a filter kind (see the module notes for ``rule``).

    ``default=None`` with ``required=True`` means the field must be given.
    """

    name: str
    rule: str
    unit: str = ""
    required: bool = True
    default: Any = None
    choices: tuple = ()
    lo: float | None = None
    hi: float | None = None
    help: str = ""


def finite_number(value: Any, name: str) -> float:
    """``value`` if it is a finite number (not a bool); a ProjectError naming ``name`` else
    (an integer too large for a float is shown cut short)."""
    if isinstance(value, bool) or not isinstance(value, (int, float)):
        raise ProjectError(f"must be a number, not {value!r}", field=name)
    try:
        finite = math.isfinite(value)
    except OverflowError:              # an integer too large for a float
        finite = False
    if not finite:
        text = repr(value) if len(repr(value)) < 40 else f"{repr(value)[:20]}... (too large)"
        raise ProjectError(f"must be a finite number, not {text}", field=name)
    return value


def _range(spec: FieldSpec, v: float, fmt: str = "g") -> None:
    if spec.lo is not None and v < spec.lo:
        raise ProjectError(f"{v:{fmt}} is below the minimum {spec.lo:g}", field=spec.name)
    if spec.hi is not None and v > spec.hi:
        raise ProjectError(f"{v:{fmt}} is above the maximum {spec.hi:g}", field=spec.name)


def _choice(spec: FieldSpec, value: Any, fs_hz: float) -> Any:
    if value not in spec.choices:
        raise ProjectError(f"must be one of {', '.join(map(str, spec.choices))}, not {value!r}",
                           field=spec.name)
    return value


def _floats(spec: FieldSpec, value: Any, fs_hz: float) -> tuple:
    if not isinstance(value, (list, tuple)) or not value:
        raise ProjectError(f"must be a non-empty list of numbers, not {value!r}", field=spec.name)
    out = tuple(float(finite_number(v, f"{spec.name}[{i}]")) for i, v in enumerate(value))
    if spec.lo is not None and len(out) < spec.lo:
        raise ProjectError(f"needs at least {spec.lo:g} numbers, has {len(out)}", field=spec.name)
    if spec.hi is not None and len(out) > spec.hi:
        raise ProjectError(f"takes at most {spec.hi:g} numbers, has {len(out)}", field=spec.name)
    return out


def _int(spec: FieldSpec, value: Any, fs_hz: float) -> int:
    v = finite_number(value, spec.name)
    if int(v) != v:
        raise ProjectError(f"must be a whole number, not {value!r}", field=spec.name)
    v = int(v)
    if spec.choices and v not in spec.choices:
        allowed = ", ".join(map(str, spec.choices))
        raise ProjectError(f"{v} is out of range (allowed: {allowed})", field=spec.name)
    _range(spec, v, "d")
    return v


def _freq(spec: FieldSpec, value: Any, fs_hz: float) -> float:
    v = float(finite_number(value, spec.name))
    nyq = fs_hz / 2
    if v <= 0:
        raise ProjectError(f"{v:g} Hz must be above 0 Hz", field=spec.name)
    if v > nyq:
        raise ProjectError(f"{v:g} Hz is above Nyquist ({nyq:g} Hz) for sample_rate {fs_hz:g}",
                           field=spec.name)
    if v == nyq:
        raise ProjectError(f"{v:g} Hz is at Nyquist ({nyq:g} Hz) for sample_rate {fs_hz:g}; "
                           "it must be below", field=spec.name)
    return v


def _q(spec: FieldSpec, value: Any, fs_hz: float) -> float:
    v = float(finite_number(value, spec.name))
    if v <= 0:
        raise ProjectError(f"Q must be above 0, not {v:g}", field=spec.name)
    if v > Q_MAX:
        raise ProjectError(f"Q {v:g} is above the maximum {Q_MAX:g}", field=spec.name)
    return v


def _db(spec: FieldSpec, value: Any, fs_hz: float) -> float:
    v = float(finite_number(value, spec.name))
    lo = spec.lo if spec.lo is not None else DB_RANGE[0]
    hi = spec.hi if spec.hi is not None else DB_RANGE[1]
    if not lo <= v <= hi:
        raise ProjectError(f"{v:g} dB is outside {lo:g}..{hi:g} dB", field=spec.name)
    return v


def _float(spec: FieldSpec, value: Any, fs_hz: float) -> float:
    v = float(finite_number(value, spec.name))
    _range(spec, v)
    return v


#: The checker of each rule: ``(spec, value, fs_hz) -> canonical value``.
CHECKERS: dict[str, Callable[[FieldSpec, Any, float], Any]] = {
    "choice": _choice, "floats": _floats, "int": _int, "freq": _freq, "q": _q, "db": _db,
    "float": _float,
}


def check_field(spec: FieldSpec, value: Any, fs_hz: float) -> Any:
    """Check one value against its :class:`FieldSpec` at ``fs_hz``; return its canonical form."""
    return CHECKERS[spec.rule](spec, value, fs_hz)
