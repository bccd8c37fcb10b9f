"""The filter types a project may hold: their fields, checks and designs.

Each kind of filter is a :class:`FilterKind` in a registry keyed by
``(type, family)``. A kind lists its fields (:class:`FieldSpec`, with unit,
default and range) and knows how to turn checked parameters into second-order
sections (and FIR taps) at a sample rate by calling :mod:`planner.dsp`.
The project loader, the command line and the terminal UI all read this one
registry: a new filter type is one new entry here.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Any, Callable, Mapping

import numpy as np

from planner.dsp import biquad, iir
from planner.errors import DesignError, ProjectError
from planner.units import format_hz

__all__ = [
    "FieldSpec",
    "FilterKind",
    "FilterDesign",
    "register",
    "lookup",
    "kinds",
    "check_params",
]


@dataclass(frozen=True)
class FilterDesign:
    """What a filter becomes at one sample rate.

    Attributes
    ----------
    sos : ndarray, shape (n, 6)
        Second-order sections ``[b0, b1, b2, 1, a1, a2]`` (n may be 0).
    fir : ndarray or None
        FIR taps, where the filter is an FIR.
    """

    sos: np.ndarray
    fir: np.ndarray | None = None


@dataclass(frozen=True)
class FieldSpec:
    """One parameter of a filter kind.

    ``kind`` is one of ``freq`` (Hz, 0 < f < Nyquist), ``q`` (> 0), ``db``
    (finite dB), ``int`` (from ``choices``), ``choice`` (a string from
    ``choices``), ``float`` (within ``lo``/``hi``) or ``floats`` (a list of
    finite numbers). ``default=None`` with ``required=True`` means the field
    must be given.
    """

    name: str
    kind: str
    unit: str = ""
    required: bool = True
    default: Any = None
    choices: tuple = ()
    lo: float | None = None
    hi: float | None = None
    help: str = ""


@dataclass(frozen=True)
class FilterKind:
    """A kind of filter: its name, fields and design function.

    ``design(params, fs_hz)`` returns a :class:`FilterDesign`; ``label(params)``
    a short text such as ``"LR4 lowpass 2.2 kHz"``. ``check(params, fs_hz)``
    may add cross-field rules (raising :class:`ProjectError`).
    """

    type: str
    family: str | None
    title: str
    fields: tuple[FieldSpec, ...]
    design: Callable[[Mapping[str, Any], float], FilterDesign]
    label: Callable[[Mapping[str, Any]], str]
    check: Callable[[Mapping[str, Any], float], None] | None = None
    #: the filter's parameters may change the band's latency (FIR)
    heavy: bool = False

    @property
    def key(self) -> tuple[str, str | None]:
        return (self.type, self.family)


_REGISTRY: dict[tuple[str, str | None], FilterKind] = {}


def register(kind: FilterKind) -> FilterKind:
    """Add a filter kind to the registry (later registrations replace earlier ones)."""
    _REGISTRY[kind.key] = kind
    return kind


def kinds() -> list[FilterKind]:
    """All registered kinds, in registration order."""
    return list(_REGISTRY.values())


def families_of(type_: str) -> list[str | None]:
    """The families registered for a filter type (``[None]`` for a type without families)."""
    return [k.family for k in kinds() if k.type == type_]


def lookup(type_: str, family: str | None) -> FilterKind:
    """Find the kind for ``type`` and ``family``; a :class:`ProjectError` names what exists."""
    types = sorted({k.type for k in _REGISTRY.values()})
    if type_ not in types:
        raise ProjectError(f"unknown filter type {type_!r}; known types: {', '.join(types)}",
                           field="type")
    fams = [k.family for k in _REGISTRY.values() if k.type == type_]
    if fams == [None]:
        if family is not None:
            raise ProjectError(f"a {type_} filter has no family (got {family!r})", field="family")
        return _REGISTRY[(type_, None)]
    if family is None:
        if (type_, None) in _REGISTRY:   # a plain kind beside families (the biquad bandpass)
            return _REGISTRY[(type_, None)]
        raise ProjectError(f"missing; a {type_} needs one of {', '.join(f for f in fams if f)}",
                           field="family")
    if (type_, family) not in _REGISTRY:
        raise ProjectError(
            f"unknown {type_} family {family!r}; known: {', '.join(f for f in fams if f)}",
            field="family")
    return _REGISTRY[(type_, family)]


def _number(value: Any, name: str) -> float:
    if isinstance(value, bool) or not isinstance(value, (int, float)):
        raise ProjectError(f"must be a number, not {value!r}", field=name)
    if not math.isfinite(value):
        raise ProjectError(f"must be a finite number, not {value!r}", field=name)
    return value


def check_field(spec: FieldSpec, value: Any, fs_hz: float) -> Any:
    """Check one value against its :class:`FieldSpec`; return it in canonical form."""
    name = spec.name
    if spec.kind == "choice":
        if value not in spec.choices:
            raise ProjectError(f"must be one of {', '.join(map(str, spec.choices))}, not {value!r}",
                               field=name)
        return value
    if spec.kind == "floats":
        if not isinstance(value, (list, tuple)) or not value:
            raise ProjectError(f"must be a non-empty list of numbers, not {value!r}", field=name)
        out = []
        for i, v in enumerate(value):
            out.append(float(_number(v, f"{name}[{i}]")))
        if spec.lo is not None and len(out) < spec.lo:
            raise ProjectError(f"needs at least {spec.lo:g} numbers, has {len(out)}", field=name)
        if spec.hi is not None and len(out) > spec.hi:
            raise ProjectError(f"takes at most {spec.hi:g} numbers, has {len(out)}", field=name)
        return tuple(out)
    v = _number(value, name)
    if spec.kind == "int":
        if int(v) != v:
            raise ProjectError(f"must be a whole number, not {value!r}", field=name)
        v = int(v)
        if spec.choices and v not in spec.choices:
            allowed = ", ".join(map(str, spec.choices))
            raise ProjectError(f"{v} is out of range (allowed: {allowed})", field=name)
        if spec.lo is not None and v < spec.lo:
            raise ProjectError(f"{v} is below the minimum {spec.lo:g}", field=name)
        if spec.hi is not None and v > spec.hi:
            raise ProjectError(f"{v} is above the maximum {spec.hi:g}", field=name)
        return v
    v = float(v)
    if spec.kind == "freq":
        nyq = fs_hz / 2
        if v <= 0:
            raise ProjectError(f"{v:g} Hz must be above 0 Hz", field=name)
        if v > nyq:
            raise ProjectError(
                f"{v:g} Hz is above Nyquist ({nyq:g} Hz) for sample_rate {fs_hz:g}", field=name)
        if v == nyq:
            raise ProjectError(
                f"{v:g} Hz is at Nyquist ({nyq:g} Hz) for sample_rate {fs_hz:g}; "
                "it must be below", field=name)
        return v
    if spec.kind == "q":
        if v <= 0:
            raise ProjectError(f"Q must be above 0, not {v:g}", field=name)
        if v > 100:
            raise ProjectError(f"Q {v:g} is above the maximum 100", field=name)
        return v
    if spec.kind == "db":
        lo, hi = spec.lo if spec.lo is not None else -60.0, spec.hi if spec.hi is not None else 30.0
        if not lo <= v <= hi:
            raise ProjectError(f"{v:g} dB is outside {lo:g}..{hi:g} dB", field=name)
        return v
    if spec.lo is not None and v < spec.lo:
        raise ProjectError(f"{v:g} is below the minimum {spec.lo:g}", field=name)
    if spec.hi is not None and v > spec.hi:
        raise ProjectError(f"{v:g} is above the maximum {spec.hi:g}", field=name)
    return v


def check_params(kind: FilterKind, raw: Mapping[str, Any], fs_hz: float) -> dict[str, Any]:
    """Check the known fields of ``raw`` and fill in defaults.

    Returns the canonical parameters (type and family excluded). Keys that
    are not fields of the kind are left to the caller (kept, not checked).
    """
    out: dict[str, Any] = {}
    for spec in kind.fields:
        if spec.name in raw and raw[spec.name] is not None:
            out[spec.name] = check_field(spec, raw[spec.name], fs_hz)
        elif spec.required and spec.default is None:
            raise ProjectError(f"missing; a {kind.title} needs {spec.name}"
                               + (f" ({spec.unit})" if spec.unit else ""), field=spec.name)
        elif spec.default is not None:
            out[spec.name] = spec.default
    if kind.check is not None:
        kind.check(out, fs_hz)
    return out


def design(kind: FilterKind, params: Mapping[str, Any], fs_hz: float) -> FilterDesign:
    """Design a checked filter at ``fs_hz``; a :class:`DesignError` becomes a :class:`ProjectError`."""
    try:
        return kind.design(params, fs_hz)
    except ProjectError:
        raise
    except DesignError as e:
        raise ProjectError(e.message, field=e.field) from e


# ---------------------------------------------------------------------------
# The built-in kinds
# ---------------------------------------------------------------------------

_FREQ = FieldSpec("freq", "freq", "Hz", help="cut-off or centre frequency")
_Q = FieldSpec("q", "q", "", help="quality factor")
_GAIN = FieldSpec("gain_db", "db", "dB", help="gain at the centre or on the shelf")

_SHORT = {"butterworth": "BW", "linkwitz-riley": "LR", "bessel": "BE"}


def _crossover_kind(type_: str, family: str) -> FilterKind:
    fields = [FieldSpec("order", "int", "", choices=iir.FAMILIES[family],
                        help="6 dB/octave per order"), _FREQ]
    if family == "bessel":
        fields.append(FieldSpec("norm", "choice", required=False, default="phase",
                                choices=iir.BESSEL_NORMS,
                                help="phase: Butterworth-like phase at freq; delay: lowpass DC "
                                     "group delay 1/(2 pi freq); mag: -3 dB"))

    def _design(p, fs):
        return FilterDesign(iir.crossover_sos(family, type_, p["order"], p["freq"], fs,
                                              norm=p.get("norm", "phase")))

    def _label(p):
        return f"{_SHORT[family]}{p['order']} {type_} {format_hz(p['freq'])}"

    return FilterKind(type_, family, f"{family} {type_}", tuple(fields), _design, _label)


for _t in ("lowpass", "highpass"):
    for _f in iir.FAMILIES:
        register(_crossover_kind(_t, _f))
    register(FilterKind(
        _t, "cookbook", f"second-order {_t} with Q",
        (_FREQ, FieldSpec("q", "q", "", required=False, default=0.7071067811865476,
                          help="0.707: Butterworth; 0.5: LR2")),
        (lambda t: lambda p, fs: FilterDesign(
            (biquad.lowpass2 if t == "lowpass" else biquad.highpass2)(p["freq"], p["q"], fs)))(_t),
        (lambda t: lambda p: f"{t} Q{p['q']:.2g} {format_hz(p['freq'])}")(_t),
    ))


def _shelf_check(p, fs):
    if "q" in p and "slope" in p:
        raise ProjectError("give q or slope, not both", field="slope")


def _shelf(type_: str, fn) -> FilterKind:
    return FilterKind(
        type_, None, type_.replace("_", " "),
        (_FREQ, _GAIN,
         FieldSpec("q", "q", "", required=False, help="Q of the shelf; or give slope"),
         FieldSpec("slope", "float", "", required=False, lo=1e-3, hi=10.0,
                   help="shelf slope S (1: steepest monotonic); or give q")),
        lambda p, fs: FilterDesign(fn(p["freq"], p["gain_db"], fs,
                                      q=p.get("q", None if "slope" in p else 0.7071067811865476),
                                      slope=p.get("slope"))),
        lambda p: f"{type_.replace('_', ' ')} {p['gain_db']:+.1f} dB {format_hz(p['freq'])}",
        check=_shelf_check,
    )


register(FilterKind(
    "peaking", None, "peaking EQ", (_FREQ, _GAIN, _Q),
    lambda p, fs: FilterDesign(biquad.peaking(p["freq"], p["gain_db"], p["q"], fs)),
    lambda p: f"peak {p['gain_db']:+.1f} dB {format_hz(p['freq'])} Q{p['q']:.2g}",
))
register(_shelf("low_shelf", biquad.low_shelf))
register(_shelf("high_shelf", biquad.high_shelf))
register(FilterKind(
    "notch", None, "notch", (_FREQ, _Q),
    lambda p, fs: FilterDesign(biquad.notch(p["freq"], p["q"], fs)),
    lambda p: f"notch {format_hz(p['freq'])} Q{p['q']:.2g}",
))
register(FilterKind(
    "bandpass", None, "band-pass", (_FREQ, _Q),
    lambda p, fs: FilterDesign(biquad.bandpass(p["freq"], p["q"], fs)),
    lambda p: f"band-pass {format_hz(p['freq'])} Q{p['q']:.2g}",
))


def _allpass_check(p, fs):
    if p["order"] == 2 and "q" not in p:
        raise ProjectError("missing; a second-order all-pass needs q", field="q")


register(FilterKind(
    "allpass", None, "all-pass",
    (_FREQ, FieldSpec("order", "int", "", required=False, default=2, choices=(1, 2)),
     FieldSpec("q", "q", "", required=False, help="needed for order 2")),
    lambda p, fs: FilterDesign(biquad.allpass1(p["freq"], fs) if p["order"] == 1
                               else biquad.allpass(p["freq"], p["q"], fs)),
    lambda p: f"all-pass{p['order']} {format_hz(p['freq'])}"
              + (f" Q{p['q']:.2g}" if p["order"] == 2 else ""),
    check=_allpass_check,
))
from planner import filters_raw  # noqa: E402,F401
from planner import filters_fir  # noqa: E402,F401
