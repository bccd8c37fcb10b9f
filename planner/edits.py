"""Edits of a project: each takes a :class:`~planner.model.Project` and returns a NEW one.

Every edit goes through the project file's own checks
(:func:`planner.project.from_dict`, hence :func:`planner.project.check_filter`),
so an edit can never make a project that would not load. A bad value raises
:class:`~planner.errors.ProjectError` whose field is the path of the value
(``bands[0].filters[1].freq: 30000 Hz is above Nyquist ...``); the project
passed in is never changed (it is frozen).

Indices are 0-based: ``band`` is an index into ``project.bands`` and
``flt`` an index into that band's chain.

Changing the sample rate (:func:`set_sample_rate`) redesigns every filter at
the new rate. When a filter frequency would be at or above the new Nyquist
frequency the change is refused, with every such filter named, because a
project with such a filter could not be saved or loaded again; the user
lowers those filters first. ``analysis.f_max`` is lowered to the new
Nyquist frequency when it would be above it (it is a view setting).
"""

from __future__ import annotations

from typing import Any, Callable

from planner import filters as fk
from planner import project as pj
from planner.errors import ProjectError
from planner.model import Project

__all__ = [
    "add_band", "remove_band", "move_band", "duplicate_band", "set_band", "toggle_band",
    "add_filter", "remove_filter", "move_filter", "duplicate_filter", "set_filter_params",
    "set_filter_type", "toggle_bypass", "set_analysis", "set_solve", "set_name", "set_driver",
    "set_driver_source", "set_sample_rate", "nyquist_problems", "DEFAULT_FILTER", "BAND_FLAGS",
    "add_crossover", "set_crossover", "remove_crossover", "link_filter", "toggle_voicing",
]

#: A new filter: a peaking EQ of 0 dB changes nothing until it is edited.
DEFAULT_FILTER = {"type": "peaking", "freq": 1000.0, "gain_db": 0.0, "q": 1.0}
#: The band settings :func:`toggle_band` flips.
BAND_FLAGS = ("invert", "mute", "solo")
_BAND_SETTINGS = {"name", "gain_db", "delay_ms", "invert", "mute", "solo"}
_ANALYSIS_SETTINGS = {"f_min", "f_max", "points", "flatness_db", "phase_deg", "crossing_floor_db",
                      "arith", "enforce_headroom", "target"}
_Q_DEFAULT = 0.7071067811865476


def _rebuild(p: Project, change: Callable[[dict], None]) -> Project:
    """Apply ``change`` to the JSON form of ``p`` and check the result as a file would be.

    Every field is checked; the designs themselves are left to the analysis
    (``design=False``), so that an edit never waits for a long FIR search:
    the editor designs in a worker, with progress and cancel, and undoes an
    edit whose design cannot be made.
    """
    d = pj.to_dict(p)
    change(d)
    return pj.from_dict(d, p.source_dir)


def _band(d: dict, i: int) -> dict:
    n = len(d["bands"])
    if not isinstance(i, int) or not 0 <= i < n:
        raise ProjectError(f"no band {i!r}: the project has bands 0..{n - 1}", field="bands")
    return d["bands"][i]


def _chain(d: dict, i: int, j: int | None = None) -> list:
    chain = _band(d, i)["filters"]
    if j is not None and (not isinstance(j, int) or not 0 <= j < len(chain)):
        raise ProjectError(f"no filter {j!r}: band {d['bands'][i]['name']!r} has "
                           + (f"filters 0..{len(chain) - 1}" if chain else "no filters"),
                           field=f"bands[{i}].filters")
    return chain


def _unique(names: set[str], base: str) -> str:
    if base not in names:
        return base
    k = 2
    while f"{base} {k}" in names:
        k += 1
    return f"{base} {k}"


def _move(seq: list, i: int, delta: int, what: str, field: str) -> None:
    k = i + delta
    if not 0 <= k < len(seq):
        raise ProjectError(f"cannot move {what} {i} by {delta:+d}: it would leave 0..{len(seq) - 1}",
                           field=field)
    seq.insert(k, seq.pop(i))


# -- bands --------------------------------------------------------------------------------

def add_band(p: Project, name: str | None = None, index: int | None = None) -> Project:
    """Insert an empty band (no filters) at ``index`` (default: at the end).

    Its name is ``name`` or ``"band N"``, made unique.
    """
    def change(d):
        names = {b["name"] for b in d["bands"]}
        new = {"name": name if name is not None else _unique(names, f"band {len(names) + 1}"),
               "gain_db": 0.0, "delay_ms": 0.0, "invert": False, "filters": []}
        d["bands"].insert(len(d["bands"]) if index is None else index, new)
    return _rebuild(p, change)


def remove_band(p: Project, band: int) -> Project:
    """Remove band ``band``; the last band cannot be removed (a project needs one)."""
    def change(d):
        _band(d, band)
        if len(d["bands"]) == 1:
            raise ProjectError("cannot remove the only band: a project needs at least one",
                               field="bands")
        del d["bands"][band]
    return _rebuild(p, change)


def move_band(p: Project, band: int, delta: int) -> Project:
    """Move band ``band`` by ``delta`` places (-1: up, +1: down)."""
    return _rebuild(p, lambda d: (_band(d, band), _move(d["bands"], band, delta, "band",
                                                        "bands")))


def duplicate_band(p: Project, band: int) -> Project:
    """Insert a copy of band ``band`` just after it, named ``"<name> copy"`` (made unique)."""
    def change(d):
        src = _band(d, band)
        names = {b["name"] for b in d["bands"]}
        copy = dict(src, filters=[dict(f) for f in src["filters"]],
                    name=_unique(names, f"{src['name']} copy"))
        d["bands"].insert(band + 1, copy)
    return _rebuild(p, change)


def set_band(p: Project, band: int, /, **settings: Any) -> Project:
    """Change band settings: ``name``, ``gain_db`` (dB), ``delay_ms`` (ms), ``invert``, ``mute``, ``solo``."""
    def change(d):
        b = _band(d, band)
        for key, value in settings.items():
            if key not in _BAND_SETTINGS:
                raise ProjectError(f"is not a band setting; settings: {', '.join(sorted(_BAND_SETTINGS))}",
                                   field=f"bands[{band}].{key}")
            b[key] = value
    return _rebuild(p, change)


def toggle_band(p: Project, band: int, flag: str) -> Project:
    """Flip ``invert`` (polarity), ``mute`` or ``solo`` of band ``band``."""
    if flag not in BAND_FLAGS:
        raise ProjectError(f"must be one of {', '.join(BAND_FLAGS)}, not {flag!r}", field="flag")
    current = getattr(p.bands[band], flag) if 0 <= band < len(p.bands) else False
    return set_band(p, band, **{flag: not current})


# -- filters ------------------------------------------------------------------------------

def add_filter(p: Project, band: int, raw: dict | None = None, index: int | None = None) -> Project:
    """Insert a filter (JSON form; default :data:`DEFAULT_FILTER`) into a band's chain.

    ``index`` is its place in the chain (default: at the end).
    """
    def change(d):
        chain = _chain(d, band)
        chain.insert(len(chain) if index is None else index, dict(raw or DEFAULT_FILTER))
    return _rebuild(p, change)


def remove_filter(p: Project, band: int, flt: int) -> Project:
    """Remove filter ``flt`` from band ``band``'s chain."""
    return _rebuild(p, lambda d: _chain(d, band, flt).pop(flt))


def move_filter(p: Project, band: int, flt: int, delta: int) -> Project:
    """Move filter ``flt`` by ``delta`` places in its chain (-1: earlier, +1: later)."""
    return _rebuild(p, lambda d: _move(_chain(d, band, flt), flt, delta, "filter",
                                       f"bands[{band}].filters"))


def duplicate_filter(p: Project, band: int, flt: int) -> Project:
    """Insert a copy of filter ``flt`` just after it."""
    def change(d):
        chain = _chain(d, band, flt)
        chain.insert(flt + 1, dict(chain[flt]))
    return _rebuild(p, change)


def _toggle_filter_flag(p: Project, band: int, flt: int, key: str) -> Project:
    """Set a filter's true/false flag ``key``, or drop it when it is set (false is the default)."""
    def change(d):
        f = _chain(d, band, flt)[flt]
        if f.get(key):
            f.pop(key)
        else:
            f[key] = True
    return _rebuild(p, change)


def toggle_bypass(p: Project, band: int, flt: int) -> Project:
    """Bypass a filter (kept in the chain, not applied), or bring it back."""
    return _toggle_filter_flag(p, band, flt, "bypass")


def set_filter_params(p: Project, band: int, flt: int, /, **params: Any) -> Project:
    """Change parameters of one filter (``freq`` in Hz, ``gain_db`` in dB, ``q``, ``order``, ...).

    A value of None removes the parameter (e.g. ``q=None`` to give a shelf a ``slope``).
    On a band of a complementary FIR split, every parameter but ``band`` changes in all the
    split's bands at once (see :func:`_sharing`). Giving a filter tied to a named crossover
    a ``freq`` of its own unties it (the other filters of the crossover stay where they
    are); to move them all, use :func:`set_crossover`.
    """
    def change(d):
        f = _chain(d, band, flt)[flt]
        kind = fk.lookup(f["type"], f.get("family"))
        siblings = _sharing(d, f, kind)
        for key, value in params.items():
            if key in ("type", "family"):
                raise ProjectError("use set_filter_type to change the type or family",
                                   field=f"bands[{band}].filters[{flt}].{key}")
            for g in [f] + ([] if key == "band" else siblings):
                if key == "freq":
                    g.pop("crossover", None)
                if value is None:
                    g.pop(key, None)
                else:
                    if kind.prepare_edit is not None:
                        kind.prepare_edit(g, key, value, set(params))
                    g[key] = value
    return _rebuild(p, change)


def _sharing(d: dict, f: dict, kind: fk.FilterKind) -> list[dict]:
    """The other filters (JSON forms) that are parts of one design with ``f`` (none for most).

    A complementary split is one design shared by its bands: changing its
    crossovers, taps or method in one band changes it in all of them, so they
    keep summing to a delay (the kind's ``shares_design``).
    """
    if kind.shares_design is None:
        return []
    return [g for b in d["bands"] for g in b["filters"] if g is not f
            and (g.get("type"), g.get("family")) == kind.key and kind.shares_design(f, g)]


def _fallback(spec: fk.FieldSpec, old: dict, family: str | None) -> Any:
    """A value for a required field the old filter did not have."""
    if spec.rule == "freq":
        return old.get("freq", 1000.0)
    if spec.rule == "db":
        return 0.0
    if spec.rule == "q":
        return _Q_DEFAULT
    if spec.rule == "int" and spec.choices:
        for want in (4 if family == "linkwitz-riley" else 2, spec.choices[0]):
            if want in spec.choices:
                return want
    if spec.rule == "choice" and spec.choices:
        return spec.choices[0]
    return None


def set_filter_type(p: Project, band: int, flt: int, type_: str,
                    family: str | None = None) -> Project:
    """Change a filter's type (and family), keeping the parameters that still apply.

    With ``family=None`` for a type that has families, the current family is
    kept when the new type has it, else the type's first family is used.
    Parameters the new kind does not have are dropped; required ones it
    lacks get plain values (1 kHz, 0 dB, Q 0.707, order 2 or LR order 4; an
    FIR gets a Kaiser window sized for 60 dB, see :func:`_seed_fir`).
    """
    fams = fk.families_of(type_)
    if family is None and fams and fams != [None]:
        cur = p.bands[band].filters[flt].family if 0 <= band < len(p.bands) and \
            0 <= flt < len(p.bands[band].filters) else None
        family = cur if cur in fams else fams[0]
    try:
        kind = fk.lookup(type_, family)
    except ProjectError as e:
        raise e.at(f"bands[{band}].filters[{flt}]") from None

    def change(d):
        old = _chain(d, band, flt)[flt]
        new: dict[str, Any] = {"type": kind.type}
        if kind.family is not None:
            new["family"] = kind.family
        for spec in kind.fields:
            if spec.name in old and not (spec.rule == "int" and spec.choices
                                         and old[spec.name] not in spec.choices):
                new[spec.name] = old[spec.name]
            elif spec.required and spec.default is None or (kind.type == "allpass"
                                                              and spec.rule == "q"):
                value = _fallback(spec, old, kind.family)
                if value is not None:
                    new[spec.name] = value
        if kind.family == "fir":
            _seed_fir(kind.type, new, old, float(d["sample_rate"]))
        if old.get("bypass"):
            new["bypass"] = True
        _chain(d, band)[flt] = new
    return _rebuild(p, change)


def _seed_fir(type_: str, new: dict, old: dict, fs_hz: float) -> None:
    """Starting values for a filter just made an FIR, so that it designs at once.

    A lowpass, highpass or bandpass gets a Kaiser window sized by Kaiser's
    formula for 60 dB over a transition half as wide as its frequency (a
    gentle, short start; tighten it in the form). A split band gets the old
    frequency as its one crossover, band 0 and 1023 taps.
    """
    nyq = fs_hz / 2
    f = float(old.get("freq", 1000.0))
    if type_ == "split":
        new.setdefault("crossovers", [f])
        new.setdefault("band", 0)
        new.setdefault("taps", 1023)
        return
    if type_ == "bandpass" and not new.get("freq2", 0) > f:
        new["freq2"] = min(4 * f, 0.45 * fs_hz)
    if any(k in new for k in ("taps", "transition_hz", "pass_hz", "stop_hz")):
        return
    top = new.get("freq2", f)
    tw = min(0.5 * f, 0.9 * 2 * (nyq - top))
    if type_ == "bandpass":
        tw = min(tw, 0.5 * (new["freq2"] - f))
    new.update(window="kaiser", transition_hz=float(f"{tw:.3g}"), atten_db=60.0)


def toggle_voicing(p: Project, band: int, flt: int) -> Project:
    """Mark a filter as voicing (deliberate EQ, set aside by the crossover checks), or unmark it."""
    return _toggle_filter_flag(p, band, flt, "voicing")


# -- named crossovers ---------------------------------------------------------------------

def _crossover_entry(d: dict, name: str) -> dict:
    xo = d.get("crossovers") or {}
    if name not in xo:
        have = ", ".join(repr(k) for k in xo) or "none"
        raise ProjectError(f"no crossover named {name!r} ({have})", field=f"crossovers.{name}")
    return xo[name]


def add_crossover(p: Project, name: str, freq_hz: float) -> Project:
    """Name a new crossover at ``freq_hz`` (filters are tied to it with :func:`link_filter`)."""
    def change(d):
        xo = d.setdefault("crossovers", {})
        if name in xo:
            raise ProjectError("is the name of a crossover already", field=f"crossovers.{name}")
        xo[name] = {"freq": freq_hz}
    return _rebuild(p, change)


def set_crossover(p: Project, name: str, freq_hz: float) -> Project:
    """Move the named crossover to ``freq_hz``: every filter tied to it follows (one edit)."""
    def change(d):
        _crossover_entry(d, name)["freq"] = freq_hz
    return _rebuild(p, change)


def remove_crossover(p: Project, name: str) -> Project:
    """Drop the named crossover; its filters keep their frequency as their own."""
    def change(d):
        _crossover_entry(d, name)
        del d["crossovers"][name]
        if not d["crossovers"]:
            del d["crossovers"]
        for b in d["bands"]:
            for f in b.get("filters", []) + b.get("target", []):
                if f.get("crossover") == name:
                    del f["crossover"]
    return _rebuild(p, change)


def link_filter(p: Project, band: int, flt: int, name: str | None) -> Project:
    """Tie a filter to the named crossover (it takes that ``freq``), or untie it (None)."""
    def change(d):
        f = _chain(d, band, flt)[flt]
        if name is None:
            f.pop("crossover", None)
        else:
            _crossover_entry(d, name)
            f["crossover"] = name
    return _rebuild(p, change)


# -- drivers --------------------------------------------------------------------------------

#: A plain starting resonance for a band just given a driver model (Hz): a woofer-like
#: value, a tweeter-like one. Not data about any driver: the user types the real one.
_START_FC_HZ = {"tweeter": 1000.0}
_DRIVER_KEEP = ("offset_mm", "position_mm", "role")


def set_driver(p: Project, band: int, /, **fields: Any) -> Project:
    """Change fields of band ``band``'s driver (``fc`` in Hz, ``offset_mm`` in mm, ...).

    A value of None removes the field. Checked as the project file's
    ``driver`` is (:func:`planner.drivers.check_driver`), so a field the
    driver does not take, or a missing measurement file, is refused naming
    ``bands[i].driver.<field>``. The band must have a driver (see
    :func:`set_driver_source`).
    """
    def change(d):
        b = _band(d, band)
        if b.get("driver") is None:
            raise ProjectError("the band has no driver; give it a model or a file first",
                               field=f"bands[{band}].driver")
        drv = dict(b["driver"])
        for key, value in fields.items():
            if key in ("model", "file"):
                raise ProjectError("use set_driver_source to change the model or file",
                                   field=f"bands[{band}].driver.{key}")
            if value is None:
                drv.pop(key, None)
            else:
                drv[key] = value
        b["driver"] = drv
    return _rebuild(p, change)


def set_driver_source(p: Project, band: int, model: str | None = None,
                      file: str | None = None) -> Project:
    """Give band ``band`` a driver model or a measurement file, or (both None) no driver.

    The offset, position and role are kept; a model's own fields are kept
    when the model stays, else it starts from its defaults with a plain
    resonance (:data:`_START_FC_HZ`, 50 Hz otherwise) to be typed over.
    """
    if model is not None and file is not None:
        raise ProjectError("give a model or a file, not both", field=f"bands[{band}].driver")

    def change(d):
        b = _band(d, band)
        old = dict(b.get("driver") or {})
        if model is None and file is None:
            b.pop("driver", None)
            return
        new = {k: old[k] for k in _DRIVER_KEEP if k in old}
        if model is not None:
            if old.get("model") == model:
                new = {k: v for k, v in old.items()}
            else:
                new["model"] = model
                new["fc"] = _START_FC_HZ.get(model, 50.0)
        else:
            new["file"] = file
        b["driver"] = new
    return _rebuild(p, change)


# -- project --------------------------------------------------------------------------------

def set_name(p: Project, name: str) -> Project:
    """Rename the project (the title, and the stem of every exported file).

    Leading and trailing spaces are dropped; an empty name is refused (the
    exports would fall back to a stand-in stem).
    """
    if not isinstance(name, str):
        raise ProjectError(f"must be a string, not {name!r}", field="name")
    if not name.strip():
        raise ProjectError("must not be empty: the exports are named after it", field="name")

    def change(d):
        d["name"] = name.strip()
    return _rebuild(p, change)


# -- analysis and rate --------------------------------------------------------------------

def set_analysis(p: Project, /, **settings: Any) -> Project:
    """Change analysis settings: ``f_min``, ``f_max`` (Hz), ``points``, ``flatness_db`` (dB),
    ``phase_deg`` (deg), ``crossing_floor_db`` (dB), ``arith`` (a number-format name, or
    None for none), ``enforce_headroom`` (true: a band peaking above
    :data:`planner.config.HEADROOM_LIMIT_DB` fails the check; false: it warns)."""
    def change(d):
        for key, value in settings.items():
            if key not in _ANALYSIS_SETTINGS:
                raise ProjectError(f"is not an analysis setting; settings: "
                                   f"{', '.join(sorted(_ANALYSIS_SETTINGS))}",
                                   field=f"analysis.{key}")
            d["analysis"][key] = value
    return _rebuild(p, change)


_SOLVE_SETTINGS = {"vary", "max_delay_ms", "trim_db", "freq_octaves", "limit_db"}


def set_solve(p: Project, /, **settings: Any) -> Project:
    """Change the solvers' defaults (the file's ``solve`` section): ``vary`` (what align
    may change, a sequence of names), ``max_delay_ms`` (ms), ``trim_db`` (dB),
    ``freq_octaves`` (octaves), ``limit_db`` (fit's gain limit, dB)."""
    def change(d):
        sv = d.setdefault("solve", {})
        for key, value in settings.items():
            if key not in _SOLVE_SETTINGS:
                raise ProjectError(f"is not a solver setting; settings: "
                                   f"{', '.join(sorted(_SOLVE_SETTINGS))}", field=f"solve.{key}")
            sv[key] = list(value) if key == "vary" and isinstance(value, tuple) else value
    return _rebuild(p, change)


def nyquist_problems(p: Project, sample_rate_hz: float) -> list[str]:
    """The filters whose frequencies would be at or above Nyquist at ``sample_rate_hz``.

    Each is one text naming the path, the band and the filter, e.g.
    ``"bands[1].filters[0].freq (tweeter, LR4 highpass 30 kHz): 30000 Hz"``.
    """
    nyq = sample_rate_hz / 2
    out = []
    for i, b in enumerate(p.bands):
        for j, f in enumerate(b.filters):
            for spec in fk.kind_of(f).fields:
                v = f.params.get(spec.name)
                if spec.rule == "freq" and v is not None and v >= nyq:
                    out.append(f"bands[{i}].filters[{j}].{spec.name} ({b.name}, {fk.label(f)}): "
                               f"{v:g} Hz")
    return out


def set_sample_rate(p: Project, sample_rate_hz: float) -> Project:
    """Change the sample rate and redesign every filter at it.

    Refused (:class:`ProjectError` on ``sample_rate``, listing them) when any
    filter frequency would be at or above the new Nyquist frequency.
    ``analysis.f_max`` is lowered to the new Nyquist frequency if needed.
    """
    def change(d):
        d["sample_rate"] = sample_rate_hz
        if isinstance(sample_rate_hz, (int, float)) and sample_rate_hz > 0:
            d["analysis"]["f_max"] = min(d["analysis"]["f_max"], sample_rate_hz / 2)

    try:
        return _rebuild(p, change)   # the rate itself is checked first, then every filter
    except ProjectError as e:
        bad = nyquist_problems(p, sample_rate_hz) if (e.field or "").startswith("bands") else []
        if not bad:
            raise
        raise ProjectError(
            f"{sample_rate_hz:g} Hz puts {len(bad)} filter(s) at or above its Nyquist "
            f"frequency ({sample_rate_hz / 2:g} Hz): {'; '.join(bad)}; lower them first",
            field="sample_rate") from None
