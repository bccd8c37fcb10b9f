"""Project files: JSON in, checked model out, and back, atomically.

The file shape (``"format": "crossplan-project", "version": 1``) is a
contract: fields are added, never renamed. Unknown keys at any level are kept
in the model's ``extra`` and written back on save.

Every problem is reported as one :class:`~planner.errors.ProjectError` whose
field is the path of the bad value, e.g.
``bands[1].filters[0].freq: 30000 Hz is above Nyquist (24000 Hz) for sample_rate 48000``.
"""

from __future__ import annotations

import copy
import hashlib
import json
import os
from dataclasses import dataclass, replace
from pathlib import Path
from typing import Any, Callable, Mapping, NamedTuple

from planner import config, defaults, drivers, presets, targets
from planner import filters as fk
from planner.filters.fields import finite_number
from planner.dsp.fixed import parse_arith
from planner.errors import CrossplanError, ProjectChangedError, ProjectError
from planner.jsonio import atomic_write_bytes, atomic_write_text, backup_path
from planner.model import FORMAT, VERSION, Acoustics, Analysis, Band, Filter, Project, Solve

__all__ = ["load_preset", "from_dict", "to_dict", "loads", "dumps", "load", "read", "save",
           "rebased", "check_filter", "check_band", "atomic_write_text", "Fingerprint",
           "fingerprint", "Opened", "MIGRATIONS", "oldest_version", "migrate", "backup_path"]

#: Steps that bring an older file up to date: ``MIGRATIONS[n]`` takes the parsed JSON of a
#: version-``n`` file and returns it as version ``n + 1`` (a new dict, unknown keys kept).
#: Version 1 is the first version of the format, so there is no step yet; the next change
#: of the format adds ``MIGRATIONS[1]`` and raises :data:`planner.model.VERSION` to 2.
MIGRATIONS: dict[int, Callable[[dict], dict]] = {}


_PROJECT_KEYS = {"format", "version", "name", "sample_rate", "analysis", "acoustics", "bands",
                 "crossovers", "solve"}
_SOLVE_KEYS = {"vary", "max_delay_ms", "trim_db", "freq_octaves", "limit_db"}
_ACOUSTICS_KEYS = {"temperature_c", "reference_db", "distance_m", "angle_min_deg",
                   "angle_max_deg", "angle_step_deg", "axis_mm", "window_db"}
_ANALYSIS_KEYS = {"f_min", "f_max", "points", "flatness_db", "phase_deg", "crossing_floor_db",
                  "arith", "enforce_headroom", "target"}
_BAND_KEYS = {"name", "gain_db", "delay_ms", "invert", "mute", "solo", "filters", "driver",
              "target"}
_FILTER_BASE = {"type", "family", "bypass", "voicing", "crossover"}


def _num(d: Mapping, key: str, default: Any = None, *, lo=None, hi=None, unit="",
         lo_open=False) -> float:
    if key not in d:
        if default is None:
            raise ProjectError("missing", field=key)
        return default
    v = finite_number(d[key], key)
    u = f" {unit}" if unit else ""
    if lo is not None and (v <= lo if lo_open else v < lo):
        raise ProjectError(f"{v:g}{u} must be {'above' if lo_open else 'at least'} {lo:g}{u}",
                           field=key)
    if hi is not None and v > hi:
        raise ProjectError(f"{v:g}{u} must be at most {hi:g}{u}", field=key)
    return v


def _bool(d: Mapping, key: str, default: bool = False) -> bool:
    v = d.get(key, default)
    if not isinstance(v, bool):
        raise ProjectError(f"must be true or false, not {v!r}", field=key)
    return v


def _obj(v: Any, field: str) -> Mapping:
    if not isinstance(v, dict):
        raise ProjectError(f"must be an object {{...}}, not {type(v).__name__}", field=field)
    return v


def check_filter(raw: Mapping[str, Any], fs_hz: float,
                 crossovers: Mapping[str, Mapping] | None = None) -> Filter:
    """Check one filter's JSON form at ``fs_hz`` and return the :class:`Filter`.

    Every field is checked; nothing is designed (a filter that cannot be
    made, such as an FIR spec that cannot be met, is refused when it is
    designed: :func:`planner.engine.design_project`). A filter whose
    ``crossover`` names one of ``crossovers`` (the project's, already
    checked) takes that crossover's ``freq``, over any ``freq`` of its own.
    """
    raw = _obj(raw, "")
    link = raw.get("crossover")
    if link is not None:
        if not isinstance(link, str):
            raise ProjectError(f"must be the name of one of the project's crossovers, not "
                               f"{link!r}", field="crossover")
        xo = dict(crossovers or {})
        if link not in xo:
            have = ", ".join(repr(k) for k in xo) or "none"
            raise ProjectError(f"no crossover named {link!r} in the project's crossovers "
                               f"({have})", field="crossover")
        raw = {**raw, "freq": xo[link]["freq"]}
    if "type" not in raw:
        raise ProjectError("missing; every filter needs a type", field="type")
    if not isinstance(raw["type"], str):
        raise ProjectError(f"must be a string, not {raw['type']!r}", field="type")
    family = raw.get("family")
    if family is not None and not isinstance(family, str):
        raise ProjectError(f"must be a string, not {family!r}", field="family")
    kind = fk.lookup(raw["type"], family)
    if link is not None and "freq" not in {f.name for f in kind.fields}:
        raise ProjectError(f"a {raw['type']} filter has no freq to take from crossover "
                           f"{link!r}", field="crossover")
    params = fk.check_params(kind, raw, fs_hz)
    known = _FILTER_BASE | {f.name for f in kind.fields}
    extra = {k: v for k, v in raw.items() if k not in known}
    return Filter(kind.type, kind.family, params, bypass=_bool(raw, "bypass"), extra=extra,
                  voicing=_bool(raw, "voicing"), crossover=link)


def _chain(raw: Mapping, key: str, fs_hz: float,
           crossovers: Mapping[str, Mapping] | None = None) -> tuple[Filter, ...]:
    flist = raw.get(key, [])
    if not isinstance(flist, list):
        raise ProjectError(f"must be a list, not {type(flist).__name__}", field=key)
    chain = []
    for j, f in enumerate(flist):
        try:
            chain.append(check_filter(f, fs_hz, crossovers))
        except CrossplanError as e:
            raise e.at(f"{key}[{j}]") from None
    return tuple(chain)


def check_band(raw: Mapping[str, Any], fs_hz: float, analysis: Analysis | None = None,
               base_dir: str | os.PathLike | None = None,
               crossovers: Mapping[str, Mapping] | None = None) -> Band:
    """Check one band's JSON form and return the :class:`Band`.

    A ``driver`` (:mod:`planner.drivers`) names its measurement file relative
    to ``base_dir`` (the project file's folder); ``target`` is a chain of
    filters, the acoustic response the band should reach.
    """
    raw = _obj(raw, "")
    name = raw.get("name")
    if not isinstance(name, str) or not name.strip():
        raise ProjectError(f"must be a non-empty string, not {name!r}", field="name")
    driver = None
    if raw.get("driver") is not None:
        try:
            driver = drivers.check_driver(raw["driver"], fs_hz, analysis or Analysis(), base_dir)
        except CrossplanError as e:
            raise e.at("driver") from None
    return Band(
        name=name.strip(),
        gain_db=float(_num(raw, "gain_db", 0.0, lo=-100, hi=40, unit="dB")),
        delay_ms=float(_num(raw, "delay_ms", 0.0, lo=0, hi=1000, unit="ms")),
        invert=_bool(raw, "invert"),
        mute=_bool(raw, "mute"),
        solo=_bool(raw, "solo"),
        filters=_chain(raw, "filters", fs_hz, crossovers),
        driver=driver,
        target=_chain(raw, "target", fs_hz, crossovers),
        extra={k: v for k, v in raw.items() if k not in _BAND_KEYS},
    )


def _arith(value: Any) -> str | None:
    """``analysis.arith``: absent/null, or a number-format name (returned in its canonical form)."""
    if value is None:
        return None
    try:
        return parse_arith(value).name
    except CrossplanError as e:
        raise ProjectError(str(e).split(": ", 1)[-1], field="arith") from None


def _target(value: Any, base_dir) -> str | None:
    """``analysis.target``: absent/null, or a target curve :func:`planner.targets.parse_target`
    reads (a file is read now, relative to ``base_dir``, so a bad one is refused on loading)."""
    if value is None:
        return None
    if not isinstance(value, str) or not value.strip():
        raise ProjectError(f"must be a target curve such as 'flat', 'tilt:-0.5' or "
                           f"'shelf:3@120', or a file name, not {value!r}", field="target")
    try:
        targets.parse_target(value, base_dir)
    except CrossplanError as e:
        raise ProjectError(str(e).split(": ", 1)[-1], field="target") from None
    return value.strip()


def _analysis(raw: Mapping, fs_hz: float, base_dir=None) -> Analysis:
    d = Analysis()
    f_min = _num(raw, "f_min", d.f_min, lo=0, lo_open=True, unit="Hz")
    f_max = _num(raw, "f_max", min(d.f_max, fs_hz / 2), unit="Hz")
    if f_max > fs_hz / 2:
        raise ProjectError(f"{f_max:g} Hz is above Nyquist ({fs_hz / 2:g} Hz) for sample_rate "
                           f"{fs_hz:g}", field="f_max")
    if f_max <= f_min:
        raise ProjectError(f"{f_max:g} Hz must be above f_min ({f_min:g} Hz)", field="f_max")
    points = _num(raw, "points", d.points, lo=config.MIN_POINTS, hi=config.MAX_POINTS)
    if int(points) != points:
        raise ProjectError(f"must be a whole number, not {points!r}", field="points")
    return Analysis(
        f_min=float(f_min), f_max=float(f_max), points=int(points),
        flatness_db=float(_num(raw, "flatness_db", d.flatness_db, lo=0, lo_open=True, hi=40,
                               unit="dB")),
        phase_deg=float(_num(raw, "phase_deg", d.phase_deg, lo=0, lo_open=True, hi=180,
                             unit="deg")),
        crossing_floor_db=float(_num(raw, "crossing_floor_db", d.crossing_floor_db, lo=-200,
                                     hi=0, unit="dB")),
        arith=_arith(raw.get("arith")),
        enforce_headroom=_bool(raw, "enforce_headroom", d.enforce_headroom),
        extra={k: v for k, v in raw.items() if k not in _ANALYSIS_KEYS},
        target=_target(raw.get("target"), base_dir),
    )


def _solve(raw: Mapping) -> Solve:
    d = Solve()
    vary = raw.get("vary", list(d.vary))
    known = defaults.ALIGN_VARIABLES
    if (not isinstance(vary, list) or not vary
            or not all(isinstance(v, str) and v in known for v in vary)):
        raise ProjectError(f"must be a list of some of {', '.join(map(repr, known))}, not "
                           f"{repr(vary)[:60]}", field="vary")
    if len(set(vary)) != len(vary):
        raise ProjectError(f"names one twice: {vary}", field="vary")
    return Solve(
        vary=tuple(vary),
        max_delay_ms=float(_num(raw, "max_delay_ms", d.max_delay_ms, lo=0, hi=1000, unit="ms")),
        trim_db=float(_num(raw, "trim_db", d.trim_db, lo=0, hi=40, unit="dB")),
        freq_octaves=float(_num(raw, "freq_octaves", d.freq_octaves, lo=0, hi=2,
                                unit="octaves")),
        limit_db=float(_num(raw, "limit_db", d.limit_db, lo=0.1, hi=30, unit="dB")),
        extra={k: v for k, v in raw.items() if k not in _SOLVE_KEYS},
    )


def _acoustics(raw: Mapping) -> Acoustics:
    d = Acoustics()
    ref = raw.get("reference_db")
    amin = float(_num(raw, "angle_min_deg", d.angle_min_deg, lo=-90, hi=90, unit="deg"))
    amax = float(_num(raw, "angle_max_deg", d.angle_max_deg, lo=-90, hi=90, unit="deg"))
    if amax < amin:
        raise ProjectError(f"{amax:g} deg must be at least angle_min_deg ({amin:g} deg)",
                           field="angle_max_deg")
    return Acoustics(
        temperature_c=float(_num(raw, "temperature_c", d.temperature_c, lo=-50, hi=60,
                                 unit="deg C")),
        reference_db=None if ref is None else float(_num(raw, "reference_db", lo=-200, hi=200,
                                                         unit="dB")),
        distance_m=float(_num(raw, "distance_m", d.distance_m, lo=0.05, hi=1000, unit="m")),
        angle_min_deg=amin, angle_max_deg=amax,
        angle_step_deg=float(_num(raw, "angle_step_deg", d.angle_step_deg, lo=0.1, hi=90,
                                  unit="deg")),
        axis_mm=float(_num(raw, "axis_mm", d.axis_mm, lo=-5000, hi=5000, unit="mm")),
        window_db=float(_num(raw, "window_db", d.window_db, lo=0, lo_open=True, hi=40,
                             unit="dB")),
        extra={k: v for k, v in raw.items() if k not in _ACOUSTICS_KEYS},
    )


def oldest_version() -> int:
    """The oldest format version this crossplan reads (and migrates, :data:`MIGRATIONS`)."""
    v = VERSION
    while v - 1 in MIGRATIONS:
        v -= 1
    return v


def migrate(raw: Mapping[str, Any], notices: list[str] | None = None) -> dict:
    """The parsed JSON of a project file brought to the current format :data:`VERSION`.

    A file of an older version goes through the :data:`MIGRATIONS` steps in
    memory (the file itself is not touched; saving writes the current
    version) and one line saying so is appended to ``notices``. A newer
    version, or one that is not a whole number, is refused naming the field
    ``version``, the value and the versions this crossplan reads.

    Raises
    ------
    ProjectError
        ``version: 3 is newer than this crossplan reads (1); ...``.
    """
    version = raw.get("version")
    if isinstance(version, bool) or not isinstance(version, int):
        raise ProjectError(f"must be a whole number, not {version!r}", field="version")
    if version > VERSION:
        raise ProjectError(f"{version} is newer than this crossplan reads ({VERSION}); "
                           "update crossplan to open it", field="version")
    oldest = oldest_version()
    if version < oldest:
        if version < 1:
            raise ProjectError(f"{version} is not a valid version (1 or later)",
                               field="version")
        raise ProjectError(f"{version} is older than this crossplan reads ({oldest} to "
                           f"{VERSION})", field="version")
    out = dict(raw)
    if version == VERSION:
        return out
    out = copy.deepcopy(out)
    for v in range(version, VERSION):
        out = MIGRATIONS[v](out)
        out["version"] = v + 1
    if notices is not None:
        notices.append(f"version: the file is format version {version}; read as version "
                       f"{VERSION} in memory (the file is unchanged until it is saved, "
                       f"which writes version {VERSION})")
    return out


def _crossovers(raw: Any, fs_hz: float) -> dict[str, dict]:
    """The project's named crossovers: ``{"upper": {"freq": 3000}, ...}``, each checked."""
    if raw is None:
        return {}
    if not isinstance(raw, dict):
        raise ProjectError(f"must be an object of named crossovers, e.g. "
                           f"{{\"upper\": {{\"freq\": 3000}}}}, not {type(raw).__name__}",
                           field="crossovers")
    out = {}
    for name, v in raw.items():
        if not name.strip():
            raise ProjectError("a crossover needs a non-empty name", field="crossovers")
        at = f"crossovers.{name}"
        try:
            v = _obj(v, "")
            f = float(_num(v, "freq", lo=0, lo_open=True, unit="Hz"))
            if f >= fs_hz / 2:
                raise ProjectError(f"{f:g} Hz is at or above Nyquist ({fs_hz / 2:g} Hz) for "
                                   f"sample_rate {fs_hz:g}", field="freq")
        except CrossplanError as e:
            raise e.at(at) from None
        out[name] = {**v, "freq": f if f != int(f) else int(f)}
    return out


def from_dict(raw: Any, base_dir: str | os.PathLike | None = None,
              notices: list[str] | None = None) -> Project:
    """Check a project's JSON form (already parsed) and return the :class:`Project`.

    Every field is checked, nothing is designed (see :func:`check_filter`).
    Driver files are read relative to ``base_dir`` (the project file's
    folder; default: the current folder). A file of an older format version
    is migrated first (:func:`migrate`), with a line appended to ``notices``.

    Raises
    ------
    ProjectError
        With the path of the first bad field.
    """
    raw = _obj(raw, "project")
    fmt = raw.get("format")
    if fmt != FORMAT:
        raise ProjectError(f"must be {FORMAT!r}, not {fmt!r} (is this a crossplan project?)",
                           field="format")
    raw = migrate(raw, notices)
    name = raw.get("name", "untitled")
    if not isinstance(name, str):
        raise ProjectError(f"must be a string, not {name!r}", field="name")
    fs = _num(raw, "sample_rate", lo=1000, hi=1_536_000, unit="Hz")
    try:
        analysis = _analysis(_obj(raw.get("analysis", {}), ""), fs, base_dir)
    except CrossplanError as e:
        raise e.at("analysis") from None
    try:
        acoustics = _acoustics(_obj(raw.get("acoustics", {}), ""))
    except CrossplanError as e:
        raise e.at("acoustics") from None
    try:
        solve = _solve(_obj(raw.get("solve", {}), ""))
    except CrossplanError as e:
        raise e.at("solve") from None
    xo = _crossovers(raw.get("crossovers"), fs)
    blist = raw.get("bands")
    if not isinstance(blist, list) or not blist:
        raise ProjectError(f"must be a non-empty list of bands, not {str(blist)[:60]}",
                           field="bands")
    if len(blist) > config.MAX_BANDS:
        raise ProjectError(f"{len(blist)} bands is more than the {config.MAX_BANDS} a project "
                           "may have (the check compares every pair of bands, so its time and "
                           "memory grow with the square of the count)", field="bands")
    bands, seen = [], {}
    for i, b in enumerate(blist):
        try:
            band = check_band(b, fs, analysis, base_dir, xo)
        except CrossplanError as e:
            raise e.at(f"bands[{i}]") from None
        if band.name in seen:
            raise ProjectError(f"{band.name!r} is the name of bands[{seen[band.name]}] already; "
                               "band names must be unique", field=f"bands[{i}].name")
        seen[band.name] = i
        bands.append(band)
    limit = config.max_points(len(bands))
    if analysis.points > limit:
        raise ProjectError(f"{analysis.points} points is more than the {limit} a project of "
                           f"{len(bands)} bands may have (the crossing search looks at every "
                           "pair of bands at every point)", field="analysis.points")
    return Project(name=name, sample_rate=float(fs) if fs != int(fs) else int(fs),
                   bands=tuple(bands), analysis=analysis,
                   extra={k: v for k, v in raw.items() if k not in _PROJECT_KEYS},
                   acoustics=acoustics, solve=solve,
                   source_dir=None if base_dir is None else str(base_dir), crossovers=xo)


def _filter_dict(f: Filter) -> dict:
    d: dict[str, Any] = {"type": f.type}
    if f.family is not None:
        d["family"] = f.family
    for k, v in f.params.items():
        d[k] = list(v) if isinstance(v, tuple) else v
    if f.bypass:
        d["bypass"] = True
    if f.voicing:
        d["voicing"] = True
    if f.crossover is not None:
        d["crossover"] = f.crossover
    d.update(f.extra)
    return d


def to_dict(project: Project) -> dict:
    """The JSON form of a project, with the unknown keys it was loaded with."""
    a = project.analysis
    out: dict[str, Any] = {
        "format": FORMAT, "version": VERSION, "name": project.name,
        "sample_rate": project.sample_rate,
        "analysis": {"f_min": a.f_min, "f_max": a.f_max, "points": a.points,
                     "flatness_db": a.flatness_db, "phase_deg": a.phase_deg,
                     "crossing_floor_db": a.crossing_floor_db,
                     "enforce_headroom": a.enforce_headroom,
                     **({"arith": a.arith} if a.arith is not None else {}),
                     **({"target": a.target} if a.target is not None else {}), **a.extra},
        "bands": [],
    }
    if project.crossovers:
        out["crossovers"] = {k: dict(v) for k, v in project.crossovers.items()}
    ac = project.acoustics
    if ac != Acoustics() or ac.extra:
        out["acoustics"] = {k: getattr(ac, k) for k in sorted(_ACOUSTICS_KEYS)
                            if getattr(ac, k) is not None} | dict(ac.extra)
    sv = project.solve
    if sv != Solve() or sv.extra:
        out["solve"] = {"vary": list(sv.vary), "max_delay_ms": sv.max_delay_ms,
                        "trim_db": sv.trim_db, "freq_octaves": sv.freq_octaves,
                        "limit_db": sv.limit_db} | dict(sv.extra)
    for b in project.bands:
        bd: dict[str, Any] = {"name": b.name, "gain_db": b.gain_db, "delay_ms": b.delay_ms,
                              "invert": b.invert}
        if b.mute:
            bd["mute"] = True
        if b.solo:
            bd["solo"] = True
        bd["filters"] = [_filter_dict(f) for f in b.filters]
        if b.driver is not None:
            bd["driver"] = dict(b.driver.raw)
        if b.target:
            bd["target"] = [_filter_dict(f) for f in b.target]
        bd.update(b.extra)
        out["bands"].append(bd)
    out.update(project.extra)
    return out


def loads(text: str, base_dir: str | os.PathLike | None = None,
          notices: list[str] | None = None) -> Project:
    """Parse and check a project from JSON text (see :func:`from_dict`)."""
    try:
        raw = json.loads(text)
    except json.JSONDecodeError as e:
        raise ProjectError(f"not valid JSON: {e.msg} at line {e.lineno} column {e.colno}",
                           field="file") from None
    except RecursionError:
        raise ProjectError("not valid JSON: nested too deeply", field="file") from None
    _check_text(raw)
    return from_dict(raw, base_dir, notices)


def _check_text(raw: Any) -> None:
    """Refuse text that cannot be written back as UTF-8 (a lone surrogate such as ``\\ud800``).

    JSON's ``\\uXXXX`` escapes can spell half of a surrogate pair, which is no
    character: it could be neither printed nor saved. The error names the
    first field holding one.
    """
    try:
        json.dumps(raw, ensure_ascii=False).encode("utf-8")
        return
    except UnicodeEncodeError:
        pass

    def bad(s: str) -> bool:
        try:
            s.encode("utf-8")
            return False
        except UnicodeEncodeError:
            return True

    def walk(v: Any, path: str) -> None:
        if isinstance(v, str) and bad(v):
            shown = v.encode("utf-8", "backslashreplace").decode("utf-8")
            raise ProjectError(f"'{shown[:60]}' holds a lone surrogate (half of a UTF-16 pair), which is no "
                               "character; write the character itself", field=path or "file")
        if isinstance(v, dict):
            for k, x in v.items():
                here = f"{path}.{k}" if path else str(k)
                if bad(k):
                    walk(k, path or "file")
                walk(x, here)
        elif isinstance(v, list):
            for i, x in enumerate(v):
                walk(x, f"{path}[{i}]")

    walk(raw, "")


def load_preset(name: str) -> Project:
    """A built-in preset (:mod:`planner.presets`) as a checked project."""
    return loads(presets.text(name))


def dumps(project: Project) -> str:
    """The project as JSON text (2-space indent, trailing newline)."""
    return json.dumps(to_dict(project), indent=2, ensure_ascii=False) + "\n"


@dataclass(frozen=True)
class Fingerprint:
    """What a file was when it was read: its size in bytes, its mtime (ns) and its SHA-256.

    Two fingerprints name the same content when size and hash agree; the
    mtime is kept for messages (a file saved again with the same bytes is
    not a change that a save would lose).
    """

    size: int
    mtime_ns: int
    sha256: str

    @classmethod
    def of(cls, data: bytes, mtime_ns: int) -> "Fingerprint":
        return cls(len(data), mtime_ns, hashlib.sha256(data).hexdigest())

    def same_content(self, other: "Fingerprint | None") -> bool:
        return other is not None and (self.size, self.sha256) == (other.size, other.sha256)


def fingerprint(path: str | os.PathLike) -> Fingerprint | None:
    """The :class:`Fingerprint` of the file at ``path`` now, or None when there is none."""
    try:
        with open(path, "rb") as fh:
            st = os.fstat(fh.fileno())
            data = fh.read()
    except (FileNotFoundError, IsADirectoryError, NotADirectoryError):
        return None
    return Fingerprint.of(data, st.st_mtime_ns)


class Opened(NamedTuple):
    """A project file as read: the project, the file's fingerprint and the loader's notices."""

    project: Project
    fingerprint: Fingerprint | None   # None for a project not read from a file
    notices: tuple[str, ...]


def read(path: str | os.PathLike) -> Opened:
    """Read and check a project file, with the fingerprint of the bytes read (for
    :func:`save`'s ``expect``) and the notices of the load (an older format version)."""
    p = Path(path)
    try:
        with open(p, "rb") as fh:
            st = os.fstat(fh.fileno())
            data = fh.read()
        text = data.decode("utf-8")
    except FileNotFoundError:
        raise ProjectError(f"no such file: {str(p)!r}", field="file") from None
    except (OSError, UnicodeDecodeError) as e:
        raise ProjectError(f"cannot read {str(p)!r}: {e}", field="file") from None
    notices: list[str] = []
    proj = loads(text, p.resolve().parent, notices)
    return Opened(proj, Fingerprint.of(data, st.st_mtime_ns), tuple(notices))


def load(path: str | os.PathLike, notices: list[str] | None = None) -> Project:
    """Read and check a project file (see :func:`from_dict`); an older format version's
    notice is appended to ``notices``."""
    opened = read(path)
    if notices is not None:
        notices.extend(opened.notices)
    return opened.project


def save(project: Project, path: str | os.PathLike, expect: Fingerprint | None = None,
         force: bool = False, backup: bool = True) -> Fingerprint:
    """Write a project file atomically and return the fingerprint of what was written.

    The write goes through a temporary file of the same folder, flushed and
    renamed (:func:`planner.jsonio.atomic_write`). With ``backup`` (the
    default) the version the file held before, when there was one and it
    differs, is kept as ``<name>.bak`` beside it (:func:`backup_path`).

    Parameters
    ----------
    project : Project
        What to write.
    path : str or PathLike
        The file.
    expect : Fingerprint, optional
        The fingerprint taken when the file was loaded (:func:`read`). When
        the file's content now differs (another program or session saved
        it), or the file is gone, nothing is written and
        :class:`~planner.errors.ProjectChangedError` is raised, unless
        ``force``.
    force : bool
        Write even when the file changed since ``expect``.
    backup : bool
        Keep the previous version as ``<name>.bak``.

    Raises
    ------
    ProjectChangedError
        ``file: 'p.json' changed on disk since it was loaded ...``.
    """
    p = Path(path)
    if expect is not None and not force:
        now = fingerprint(p)
        if not expect.same_content(now):
            what = ("is gone" if now is None else
                    f"changed on disk since it was loaded ({expect.size} -> {now.size} bytes, "
                    f"sha256 {expect.sha256[:12]} -> {now.sha256[:12]})")
            raise ProjectChangedError(f"{str(p)!r} {what}; not saved (save anyway, or save "
                                      "as another file)", path=str(p), expected=expect,
                                      found=now)
    data = dumps(project).encode("utf-8")
    atomic_write_bytes(p, data, backup=backup)
    try:
        mtime_ns = os.stat(p).st_mtime_ns
    except OSError:
        mtime_ns = 0
    return Fingerprint.of(data, mtime_ns)


def rebased(project: Project, folder: str | os.PathLike) -> Project:
    """The project as it must be written into ``folder``: driver files named relative to
    the project's own folder are renamed relative to ``folder``, so they are still found.

    Absolute names, and projects not read from a file, are left as they are.
    """
    if project.source_dir is None:
        return project
    src, dst = Path(project.source_dir).resolve(), Path(folder).resolve()
    if src == dst:
        return project
    bands = []
    for b in project.bands:
        name = None if b.driver is None else b.driver.raw.get("file")
        if isinstance(name, str) and not Path(name).is_absolute():
            moved = Path(os.path.relpath(src / name, dst)).as_posix()
            b = replace(b, driver=replace(b.driver, raw={**b.driver.raw, "file": moved}))
        bands.append(b)
    return replace(project, bands=tuple(bands), source_dir=str(dst))
