"""The registry of filter kinds: what a project's filters may be, and how each becomes sections.

Each kind of filter is a :class:`FilterKind` keyed by ``(type, family)``. A
kind lists its fields (:class:`~planner.filters.fields.FieldSpec`) and knows
how to turn checked parameters into second-order sections (and FIR taps) at
a sample rate by calling :mod:`planner.dsp`. The project loader, the edits,
the command line and the editor's forms all read this one registry; a kind
whose filters belong together across bands (the bands of a complementary
FIR split) says so through its hooks, so that no other module repeats its
rules.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any, Callable, Mapping

import numpy as np

from planner.errors import DesignError, ProjectError
from planner.filters.fields import FieldSpec, check_field
from planner.model import Filter

__all__ = ["FilterDesign", "FilterKind", "KindWarning", "register", "kinds", "families_of",
           "lookup", "kind_of", "label", "check_params", "design"]


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
class KindWarning:
    """A warning a kind raises about its filters across the project (band, filter: indices)."""

    text: str
    band: int | None = None
    filter: int | None = None
    code: str = ""


#: One filter of a kind where the project has it: (band index, band name, filter index, params).
Found = tuple[int, str, int, Mapping[str, Any]]


@dataclass(frozen=True)
class FilterKind:
    """A kind of filter: its name, fields, design and the rules it brings along.

    Attributes
    ----------
    type, family : str, str or None
        The key of the JSON form (``"type"``, ``"family"``).
    title : str
        Plain words for messages, e.g. ``"linkwitz-riley lowpass"``.
    fields : tuple of FieldSpec
    design : callable ``(params, fs_hz) -> FilterDesign``
    label : callable ``(params) -> str``
        A short text such as ``"LR4 lowpass 2.2 kHz"``.
    check : callable ``(params, fs_hz) -> None``, optional
        Rules across fields (raising :class:`~planner.errors.ProjectError`).
    shares_design : callable ``(params_a, params_b) -> bool``, optional
        Whether two filters of this kind are parts of one design that must
        change together (the bands of one FIR split): an edit of one is made
        to all.
    prepare_edit : callable ``(raw, key, value, given) -> None``, optional
        Called before an edit sets ``raw[key] = value`` on a filter's JSON
        form (``given``: every key the edit sets), to drop fields the new
        value makes invalid.
    project_warnings : callable ``(found) -> list of KindWarning``, optional
        Warnings about this kind's filters across the active bands (``found``:
        a list of :data:`Found`).
    """

    type: str
    family: str | None
    title: str
    fields: tuple[FieldSpec, ...]
    design: Callable[[Mapping[str, Any], float], FilterDesign]
    label: Callable[[Mapping[str, Any]], str]
    check: Callable[[Mapping[str, Any], float], None] | None = None
    shares_design: Callable[[Mapping[str, Any], Mapping[str, Any]], bool] | None = None
    prepare_edit: Callable[[dict, str, Any, set], None] | None = None
    project_warnings: Callable[[list], list] | None = None

    @property
    def key(self) -> tuple[str, str | None]:
        return (self.type, self.family)


_REGISTRY: dict[tuple[str, str | None], FilterKind] = {}


def register(kind: FilterKind) -> FilterKind:
    """Add a filter kind to the registry (a later registration replaces an earlier one)."""
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


def kind_of(flt: Filter) -> FilterKind:
    """The :class:`FilterKind` of a filter of the model."""
    return lookup(flt.type, flt.family)


def label(flt: Filter) -> str:
    """Short text of a filter, e.g. ``"LR4 lowpass 2.2 kHz"`` (``"(...) bypassed"`` when it is)."""
    text = kind_of(flt).label(flt.params)
    return f"({text}) bypassed" if flt.bypass else text


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
