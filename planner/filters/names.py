"""Filter types and families as people write them, and the pick lists of the editor.

The project file holds exact names (``high_shelf``, ``linkwitz-riley``); the
chain shows short labels (``high shelf``, ``LR4 lowpass 2.2 kHz``). These
functions read either back: :func:`read_type` (``"high shelf"``,
``"High-Shelf"``, ``"peak"``, ``"all-pass"``) and :func:`read_family`
(``"LR4"`` is Linkwitz-Riley of order 4, ``"BW2"``, ``"Bessel"``, ``"LR"``),
and :func:`type_choices` / :func:`family_choices` list what a pick list offers.
"""

from __future__ import annotations

import re

from planner.errors import ProjectError
from planner.filters.iir import SHORT_NAMES
from planner.filters.registry import families_of, kinds, lookup

__all__ = ["read_type", "read_family", "type_choices", "family_choices"]

#: Words the chain's labels and common usage give types (normalised: lower case, no
#: spaces, hyphens or underscores).
_TYPE_WORDS = {"peak": "peaking", "peq": "peaking", "bell": "peaking",
               "lp": "lowpass", "lpf": "lowpass", "hp": "highpass", "hpf": "highpass",
               "bp": "bandpass", "bpf": "bandpass", "ap": "allpass", "allpass1": "allpass",
               "allpass2": "allpass", "lowshelf": "low_shelf", "ls": "low_shelf",
               "highshelf": "high_shelf", "hs": "high_shelf", "lt": "linkwitz_transform",
               "rawbiquad": "biquad"}

#: Family words (normalised) beside the exact names and the chain's short names.
_FAMILY_WORDS = {"lr": "linkwitz-riley", "linkwitzriley": "linkwitz-riley", "linkwitz": "linkwitz-riley",
                 "bw": "butterworth", "butter": "butterworth", "be": "bessel", "bes": "bessel",
                 "q": "cookbook", "cookbookq": "cookbook", "secondorderwithq": "cookbook"}


def _norm(text: str) -> str:
    return re.sub(r"[\s_\-]+", "", str(text).strip().lower())


def _types() -> list[str]:
    return list(dict.fromkeys(k.type for k in kinds()))


def read_type(text: str) -> str:
    """The exact type name of ``text`` (``"high shelf" -> "high_shelf"``, ``"peak" -> "peaking"``).

    Raises
    ------
    ProjectError
        On ``type``, naming the known types, when ``text`` is none of them.
    """
    key = _norm(text)
    for k in kinds():
        # "high_shelf", "high shelf", and a family-less kind's own title ("band-pass").
        if key == _norm(k.type) or (k.family is None and key == _norm(k.title)):
            return k.type
    if key in _TYPE_WORDS:
        return _TYPE_WORDS[key]
    shown = ", ".join(t.replace("_", " ") for t in _types())
    raise ProjectError(f"unknown filter type {str(text).strip()!r}; known types: {shown}",
                       field="type")


def read_family(type_: str, text: str) -> tuple[str, int | None]:
    """The family (and order, when given) of ``text`` for a filter of type ``type_``.

    ``"LR4" -> ("linkwitz-riley", 4)``, ``"BW2" -> ("butterworth", 2)``,
    ``"Bessel" -> ("bessel", None)``, ``"linkwitz-riley" -> ("linkwitz-riley", None)``.
    The order is checked against the family's orders.

    Raises
    ------
    ProjectError
        On ``family``: not a family of ``type_`` (naming them), or an order the
        family does not have (naming its orders).
    """
    fams = [f for f in families_of(type_) if f]
    if not fams:
        raise ProjectError(f"a {type_.replace('_', ' ')} filter has no family",
                           field="family")
    m = re.fullmatch(r"(.*?)(\d+)?", _norm(text))
    word, digits = m.group(1), m.group(2)
    shorts = {_norm(v): k for k, v in SHORT_NAMES.items()}
    family = next((f for f in fams if _norm(f) == word), None) or shorts.get(word) \
        or _FAMILY_WORDS.get(word)
    if family is None and len(word) >= 3:
        starts = [f for f in fams if _norm(f).startswith(word)]
        family = starts[0] if len(starts) == 1 else None
    if family not in fams:
        known = ", ".join(f"{f} ({SHORT_NAMES[f]})" if f in SHORT_NAMES else f for f in fams)
        raise ProjectError(f"unknown {type_} family {str(text).strip()!r}; known: {known}",
                           field="family")
    if digits is None:
        return family, None
    order = int(digits)
    spec = next((s for s in lookup(type_, family).fields if s.name == "order"), None)
    if spec is None:
        raise ProjectError(f"a {family} {type_} has no order (got {str(text).strip()!r})",
                           field="family")
    if spec.choices and order not in spec.choices:
        raise ProjectError(f"{SHORT_NAMES.get(family, family)}{order}: a {family} {type_} "
                           f"has orders {', '.join(str(c) for c in spec.choices)}",
                           field="family")
    return family, order


def type_choices() -> list[tuple[str, str]]:
    """``(shown, type)`` for a pick list of types, in registration order
    (``("high shelf", "high_shelf")``)."""
    return [(t.replace("_", " "), t) for t in _types()]


def family_choices(type_: str) -> list[tuple[str, str, int | None]]:
    """``(shown, family, order)`` for a pick list of the families of ``type_``.

    A crossover family with orders is listed once per order, as the chain
    shows it (``("LR4  linkwitz-riley", "linkwitz-riley", 4)``); other
    families once, with order None.
    """
    out = []
    for fam in families_of(type_):
        if not fam:
            continue
        spec = next((s for s in lookup(type_, fam).fields if s.name == "order"), None)
        if fam in SHORT_NAMES and spec is not None and spec.choices:
            out += [(f"{SHORT_NAMES[fam]}{o:<2} {fam}", fam, int(o)) for o in spec.choices]
        else:
            out.append((fam, fam, None))
    return out
