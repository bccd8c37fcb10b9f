"""Write the JSON Schema of crossplan project files (docs/project.schema.json).

The schema is made from the loader's own tables (the filter kinds of
:mod:`planner.filters`, the driver fields of :mod:`planner.drivers`, the
ranges of :mod:`planner.project`), so that it says what the loader checks;
``tests/test_schema.py`` fails when the committed file and this script
disagree. Unknown keys are allowed at every level (crossplan keeps them);
known keys are type-checked. What JSON Schema cannot say (a frequency below
the Nyquist frequency of the file's own ``sample_rate``, unique band names,
``f_max`` above ``f_min``) is left to the loader and named in
docs/file-format.md.

Usage: ``python tools/project_schema.py [OUT]`` (default: print to stdout).
"""

from __future__ import annotations

import json
import sys
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

from planner import drivers, filters as fk  # noqa: E402
from planner.filters.fields import DB_RANGE, Q_MAX  # noqa: E402
from planner.model import FORMAT  # noqa: E402
from planner.defaults import ALIGN_VARIABLES  # noqa: E402

DRAFT = "https://json-schema.org/draft/2020-12/schema"
ID = "https://crossplan.invalid/project.schema.json"   # no public address; a local name


def _num(lo=None, hi=None, lo_open=False, unit="", desc=""):
    s = {"type": "number"}
    if lo is not None:
        s["exclusiveMinimum" if lo_open else "minimum"] = lo
    if hi is not None:
        s["maximum"] = hi
    d = desc or (f"({unit})" if unit else "")
    if d:
        s["description"] = d
    return s


def field_schema(spec) -> dict:
    """The schema of one filter or driver field (its rule, range and unit)."""
    desc = spec.help or (f"({spec.unit})" if spec.unit else "")
    if spec.rule == "freq":
        s = _num(0, lo_open=True)
        s["description"] = (desc + " " if desc else "") + \
            "in Hz, above 0 and below the Nyquist frequency (sample_rate / 2)"
    elif spec.rule == "q":
        s = _num(0, Q_MAX, lo_open=True)
    elif spec.rule == "db":
        lo = spec.lo if spec.lo is not None else DB_RANGE[0]
        hi = spec.hi if spec.hi is not None else DB_RANGE[1]
        s = _num(lo, hi)
    elif spec.rule == "int":
        s = {"type": "integer"}
        if spec.choices:
            s["enum"] = list(spec.choices)
        if spec.lo is not None:
            s["minimum"] = spec.lo
        if spec.hi is not None:
            s["maximum"] = spec.hi
    elif spec.rule == "choice":
        s = {"enum": list(spec.choices)}
    elif spec.rule == "float":
        s = _num(spec.lo, spec.hi)
    elif spec.rule == "floats":
        s = {"type": "array", "items": {"type": "number"}}
        if spec.lo is not None:
            s["minItems"] = int(spec.lo)
        if spec.hi is not None:
            s["maxItems"] = int(spec.hi)
    else:
        raise ValueError(f"no schema for the rule {spec.rule!r}")
    if desc and "description" not in s:
        s["description"] = desc
    if spec.default is not None:
        s["default"] = list(spec.default) if isinstance(spec.default, tuple) else spec.default
    return s


def filter_schema() -> dict:
    kinds = fk.kinds()
    types = sorted({k.type for k in kinds})
    families = sorted({k.family for k in kinds if k.family})
    # Only the keys of every filter are checked here; a kind's own fields are checked in its
    # rule below (on another kind the same name is an unknown key, kept as it is).
    props = {"type": {"enum": types, "description": "the filter kind"},
             "family": {"enum": families + [None],
                        "description": "for lowpass/highpass/bandpass: the design family"},
             "bypass": {"type": "boolean", "default": False,
                        "description": "kept in the chain but not applied"}}
    rules = []
    for k in kinds:
        if k.family is None:
            # absent family and null family both mean "no family"
            cond = {"allOf": [{"properties": {"type": {"const": k.type}}, "required": ["type"]},
                              {"anyOf": [{"not": {"required": ["family"]}},
                                         {"properties": {"family": {"const": None}}}]}]}
        else:
            cond = {"properties": {"type": {"const": k.type}, "family": {"const": k.family}},
                    "required": ["type", "family"]}
        then = {"properties": {f.name: {"anyOf": [field_schema(f), {"type": "null"}]}
                               if not f.required or f.default is not None else field_schema(f)
                               for f in k.fields},
                "required": [f.name for f in k.fields if f.required and f.default is None]}
        rules.append({"if": cond, "then": then,
                      "description": f"{k.type}" + (f" ({k.family})" if k.family else "")})
    # A type with families and no plain kind needs its family.
    needs_family = sorted({k.type for k in kinds if k.family} -
                          {k.type for k in kinds if k.family is None})
    rules.append({"if": {"properties": {"type": {"enum": needs_family}}, "required": ["type"]},
                  "then": {"required": ["family"],
                           "properties": {"family": {"type": "string"}}},
                  "description": "these types take a family"})
    return {"type": "object", "required": ["type"], "properties": props, "allOf": rules,
            "description": "one filter of a chain; unknown keys are kept"}


def driver_schema() -> dict:
    props = {"model": {"enum": list(drivers.MODELS), "description": "an analytic model"},
             "file": {"type": "string", "minLength": 1, "pattern": r"\S",
                      "description": "a measurement text file, relative to the project file"},
             "min_phase": {"type": "boolean", "default": False},
             "extrapolate": {"type": "boolean", "default": False}}
    for f in drivers.COMMON_FIELDS:
        props[f.name] = {"anyOf": [field_schema(f), {"type": "null"}]}
    rules = [{"if": {"properties": {"model": {"const": m}}, "required": ["model"]},
              "then": {"required": [f.name for f in fields if f.required and f.default is None],
                       "properties": {f.name: {"anyOf": [field_schema(f), {"type": "null"}]}
                                      for f in fields}}}
             for m, fields in drivers.MODELS.items()]
    return {"type": "object", "properties": props,
            "oneOf": [{"required": ["model"], "not": {"required": ["file"]}},
                      {"required": ["file"], "not": {"required": ["model"]}}],
            "allOf": rules,
            "description": "the band's driver: a model or a measured file; unknown keys kept"}


def schema() -> dict:
    chain = {"type": "array", "items": {"$ref": "#/$defs/filter"}}
    analysis = {"type": "object", "properties": {
        "f_min": _num(0, lo_open=True, unit="Hz", desc="lowest frequency checked (Hz)"),
        "f_max": _num(0, lo_open=True, unit="Hz",
                      desc="highest frequency checked (Hz), above f_min, at most Nyquist; "
                           "default the lower of 20000 Hz and Nyquist"),
        "points": {"type": "integer", "minimum": 16, "maximum": 65536,
                   "description": "points of the log grid (more are added where needed)"},
        "flatness_db": _num(0, 40, lo_open=True, desc="the sum's limit, +/- dB"),
        "phase_deg": _num(0, 180, lo_open=True, desc="a crossing's phase-difference limit (deg)"),
        "crossing_floor_db": _num(-200, 0, desc="crossings below this level are not judged (dB)"),
        "arith": {"type": ["string", "null"],
                  "description": "target arithmetic: float64, float32 or qM.N"},
        "enforce_headroom": {"type": "boolean", "default": False,
                             "description": "a band peaking above +0.05 dB fails the check"},
    }, "description": "how the project is checked; unknown keys kept"}
    acoustics = {"type": "object", "properties": {
        "temperature_c": _num(-50, 60, desc="air temperature (deg C), for the speed of sound"),
        "reference_db": {"anyOf": [_num(-200, 200), {"type": "null"}],
                         "description": "the level the acoustic sum is held to (dB)"},
        "distance_m": _num(0.05, 1000, desc="listening distance (m)"),
        "angle_min_deg": _num(-90, 90, desc="lowest vertical angle of the window (deg)"),
        "angle_max_deg": _num(-90, 90, desc="highest vertical angle (deg), >= angle_min_deg"),
        "angle_step_deg": _num(0.1, 90, desc="step between angles (deg)"),
        "axis_mm": _num(-5000, 5000, desc="height of the listening axis on the baffle (mm)"),
        "window_db": _num(0, 40, lo_open=True, desc="the window's level limit (dB)"),
    }, "description": "listening geometry of the acoustic sum; unknown keys kept"}
    solve = {"type": "object", "properties": {
        "vary": {"type": "array", "minItems": 1, "uniqueItems": True,
                 "items": {"enum": list(ALIGN_VARIABLES)},
                 "description": "what align may change"},
        "max_delay_ms": _num(0, 1000, desc="the largest delay align may give a band (ms)"),
        "trim_db": _num(0, 40, desc="how far align may trim a band's level, +/- dB"),
        "freq_octaves": _num(0, 2, desc="how far align may move a crossover or all-pass "
                                        "frequency, +/- octaves"),
        "limit_db": _num(0.1, 30, desc="how far fit may set a gain, +/- dB"),
    }, "description": "the solvers' defaults (align, fit; the editor's too); unknown keys kept"}
    band = {"type": "object", "required": ["name"], "properties": {
        "name": {"type": "string", "pattern": r"\S",
                 "description": "unique within the project (leading/trailing spaces dropped)"},
        "gain_db": _num(-100, 40, desc="band gain (dB)"),
        "delay_ms": _num(0, 1000, desc="band delay (ms)"),
        "invert": {"type": "boolean", "default": False},
        "mute": {"type": "boolean", "default": False},
        "solo": {"type": "boolean", "default": False},
        "filters": chain,
        "driver": {"anyOf": [{"$ref": "#/$defs/driver"}, {"type": "null"}]},
        "target": {**chain, "description": "the acoustic response the band should reach"},
    }, "description": "one band (way) of the crossover; unknown keys kept"}
    return {
        "$schema": DRAFT, "$id": ID,
        "title": "crossplan project file",
        "description": "A crossplan project (docs/file-format.md). Unknown keys are allowed at "
                       "every level and kept when crossplan saves the file.",
        "type": "object",
        "required": ["format", "version", "sample_rate", "bands"],
        "properties": {
            "format": {"const": FORMAT},
            "version": {"type": "integer", "minimum": 1,
                        "description": "format version; a newer one than the reader's is "
                                       "refused, an older one migrated"},
            "name": {"type": "string", "default": "untitled"},
            "sample_rate": _num(1000, 1_536_000, desc="sample rate (Hz)"),
            "analysis": {"$ref": "#/$defs/analysis"},
            "acoustics": {"$ref": "#/$defs/acoustics"},
            "solve": {"$ref": "#/$defs/solve"},
            "bands": {"type": "array", "minItems": 1, "items": {"$ref": "#/$defs/band"}},
        },
        "$defs": {"analysis": analysis, "acoustics": acoustics, "solve": solve, "band": band,
                  "filter": filter_schema(), "driver": driver_schema()},
    }


def text() -> str:
    return json.dumps(schema(), indent=2) + "\n"


if __name__ == "__main__":
    if len(sys.argv) > 1:
        Path(sys.argv[1]).write_text(text(), encoding="utf-8")
    else:
        sys.stdout.write(text())
