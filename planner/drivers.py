"""A band's driver in the project file: an analytic model or a measured response file.

JSON forms (in a band)::

    "driver": {"model": "closed-box", "fc": 55, "qtc": 0.71, "sensitivity_db": 87,
               "offset_mm": 0, "position_mm": -60, "role": "woofer"}
    "driver": {"model": "tweeter", "fc": 900, "q": 0.8, "role": "tweeter",
               "offset_mm": -15, "position_mm": 90}
    "driver": {"file": "drivers/woofer.txt", "role": "woofer", "offset_mm": 12}

A measurement file is plain text, one line per frequency: frequency in Hz,
magnitude in dB and, optionally, phase in degrees, separated by spaces,
tabs, commas or semicolons; comment lines (``#``, ``*``, ``;``, ``//``) and
one title line are skipped; decimal points only. ``crossplan measure``
writes this layout, so a driver measured on the box loads as it is. Files
are named relative to the project file's folder and read once (cached by
path, size and modification time).

A file is refused, naming it and the line, for non-numbers, frequencies not
strictly increasing (unsorted or duplicated), decimal commas, fewer than
:data:`MIN_POINTS` points, or a range that does not cover the analysis range
(unless the driver says ``"extrapolate": true``, which the check then warns
of).
"""

from __future__ import annotations

import hashlib
import os
import re
from pathlib import Path
from typing import Any, Mapping

from planner.dsp.acoustic import B4_Q
from planner.dsp.response_text import parse_response_text
from planner.errors import CrossplanError, ProjectError
from planner.filters.fields import FieldSpec, check_field
from planner.model import Analysis, Driver, Measured

__all__ = ["MODELS", "ROLES", "MIN_POINTS", "COMMON_FIELDS", "check_driver", "read_measurement",
           "driver_fields"]

#: Fewest points a measurement file must have.
MIN_POINTS = 5
#: What a driver may be (the safety checks treat tweeters and compression drivers apart).
ROLES = ("woofer", "sub", "midrange", "tweeter", "compression")

_FC = FieldSpec("fc", "freq", "Hz", help="resonance of the system (Hz)")
#: The analytic models and their own fields.
MODELS: dict[str, tuple[FieldSpec, ...]] = {
    "closed-box": (_FC, FieldSpec("qtc", "q", "", required=False, default=0.707,
                                  help="total Q of the closed box (0.707: maximally flat)")),
    "vented-box": (_FC, FieldSpec("q1", "q", "", required=False, default=B4_Q[0],
                                  help="Q of the first section (B4 alignment: 0.541)"),
                   FieldSpec("q2", "q", "", required=False, default=B4_Q[1],
                             help="Q of the second section (B4 alignment: 1.307)")),
    "tweeter": (_FC, FieldSpec("q", "q", "", required=False, default=0.8,
                               help="total Q at resonance")),
    "flat": (),
}
#: Fields every driver may have (model or file).
COMMON_FIELDS: tuple[FieldSpec, ...] = (
    FieldSpec("sensitivity_db", "float", "dB", required=False, lo=0.0, hi=160.0,
              help="level of the model's pass band (dB); a file's levels are its own"),
    FieldSpec("offset_mm", "float", "mm", required=False, default=0.0, lo=-5000.0, hi=5000.0,
              help="acoustic centre behind the reference plane (mm; positive: later)"),
    FieldSpec("position_mm", "float", "mm", required=False, lo=-5000.0, hi=5000.0,
              help="height of the acoustic centre on the baffle (mm), for the off-axis view"),
    FieldSpec("role", "choice", "", required=False, choices=ROLES,
              help="woofer, sub, midrange, tweeter or compression"),
    FieldSpec("resonance_hz", "freq", "Hz", required=False,
              help="the driver's resonance (Hz), for the tweeter checks"),
    FieldSpec("rolloff_hz", "freq", "Hz", required=False, help="high-frequency roll-off (Hz)"),
    FieldSpec("rolloff_order", "int", "", required=False, default=2, choices=(1, 2)),
    FieldSpec("breakup_hz", "freq", "Hz", required=False, help="cone break-up peak (Hz)"),
    FieldSpec("breakup_db", "float", "dB", required=False, lo=-30.0, hi=30.0,
              help="height of the break-up peak (dB)"),
    FieldSpec("breakup_q", "q", "", required=False, default=4.0),
)
_BOOLS = ("min_phase", "extrapolate")
_MODEL_ONLY = ("sensitivity_db", "rolloff_hz", "rolloff_order", "breakup_hz", "breakup_db",
               "breakup_q")


def driver_fields(model: str | None) -> tuple[FieldSpec, ...]:
    """The fields a driver of ``model`` takes (None: a measured driver, from a file)."""
    common = COMMON_FIELDS if model is not None else tuple(
        f for f in COMMON_FIELDS if f.name not in _MODEL_ONLY)
    return (MODELS[model] if model is not None else ()) + common


_DECIMAL_COMMA = re.compile(r"^\s*[+-]?\d+,\d+([ \t]+[+-]?\d+,\d+)+\s*$")
#: What every line _DECIMAL_COMMA matches contains (the end of its first number and the
#: start of its second).
_DECIMAL_COMMA_HINT = re.compile(r",\d+[ \t]+[+-]?\d+,")
_CACHE: dict[tuple, Measured] = {}


def _refuse(path: str, message: str) -> ProjectError:
    return ProjectError(f"{path}: {message}", field="file")


def _parse(shown: str, text: str) -> Measured:
    # A line of decimal commas holds ",digits, blank, digits," (_DECIMAL_COMMA_HINT): only a
    # text with one is read line by line for them (most files are not).
    lines = text.splitlines() if _DECIMAL_COMMA_HINT.search(text) else ()
    for no, line in enumerate(lines, start=1):
        if _DECIMAL_COMMA.match(line):
            raise _refuse(shown, f"line {no}: decimal commas are not read ({line.strip()!r}): "
                                 "write decimal points, e.g. 20.5 87.25")
    try:
        r = parse_response_text(text)
    except CrossplanError as e:
        raise _refuse(shown, f"{e.field}: {e.message}" if e.field else e.message) from None
    if len(r.freqs_hz) < MIN_POINTS:
        raise _refuse(shown, f"has {len(r.freqs_hz)} data lines; a response needs at least "
                             f"{MIN_POINTS}")
    digest = "sha256:" + hashlib.sha256(text.encode("utf-8")).hexdigest()
    for a in (r.freqs_hz, r.mag_db) + (() if r.phase_deg is None else (r.phase_deg,)):
        a.setflags(write=False)
    return Measured(shown, r.freqs_hz, r.mag_db, r.phase_deg, digest)


def read_measurement(name: str, base_dir: str | os.PathLike | None = None) -> Measured:
    """Read a driver's measurement file (relative to ``base_dir``); cached by path, size and time.

    Raises
    ------
    ProjectError
        ``field='file'``, the message naming the file (and the line): a
        missing or unreadable file, or data refused (see the module notes).
    """
    p = Path(name)
    full = p if p.is_absolute() or base_dir is None else Path(base_dir) / p
    try:
        st = full.stat()
    except OSError:
        raise _refuse(name, f"no such file (looked for {str(full)!r})") from None
    key = (str(full.resolve()), st.st_size, st.st_mtime_ns)
    if key not in _CACHE:
        try:
            text = full.read_text(encoding="utf-8")
        except (OSError, UnicodeDecodeError) as e:
            raise _refuse(name, f"cannot be read: {e}") from None
        if len(_CACHE) > 64:
            _CACHE.clear()
        _CACHE[key] = _parse(name, text)
    return _CACHE[key]


def _covers(data: Measured, analysis: Analysis, name: str) -> None:
    lo, hi = float(data.freqs_hz[0]), float(data.freqs_hz[-1])
    if lo > analysis.f_min * (1 + 1e-9) or hi < analysis.f_max * (1 - 1e-9):
        raise _refuse(name, f"covers {lo:g} .. {hi:g} Hz but the analysis range is "
                            f"{analysis.f_min:g} .. {analysis.f_max:g} Hz: measure a wider range, "
                            "narrow analysis.f_min/f_max, or give the driver "
                            '"extrapolate": true (the check then warns)')


def _bool(raw: Mapping, key: str) -> bool:
    v = raw.get(key, False)
    if not isinstance(v, bool):
        raise ProjectError(f"must be true or false, not {v!r}", field=key)
    return v


def check_driver(raw: Any, fs_hz: float, analysis: Analysis,
                 base_dir: str | os.PathLike | None = None) -> Driver:
    """Check a band's ``driver`` object and read its file; return the :class:`Driver`.

    Exactly one of ``model`` (see :data:`MODELS`) and ``file`` is given.
    Unknown keys are kept (in ``raw``) and saved back.
    """
    if not isinstance(raw, dict):
        raise ProjectError(f"must be an object {{...}}, not {type(raw).__name__}", field="")
    model, name = raw.get("model"), raw.get("file")
    if (model is None) == (name is None):
        raise ProjectError("give either model (" + ", ".join(MODELS) + ") or file (a "
                           "measurement, relative to the project file)", field="model")
    if model is not None and (not isinstance(model, str) or model not in MODELS):
        raise ProjectError(f"must be one of {', '.join(MODELS)}, not {model!r}", field="model")
    if name is not None and (not isinstance(name, str) or not name.strip()):
        raise ProjectError(f"must be a file name, not {name!r}", field="file")
    params: dict[str, Any] = {}
    for spec in driver_fields(model):
        if raw.get(spec.name) is not None:
            params[spec.name] = check_field(spec, raw[spec.name], fs_hz)
        elif spec.default is not None:
            params[spec.name] = spec.default
        elif spec.required:
            raise ProjectError(f"missing; a {model} driver needs {spec.name} ({spec.unit})",
                               field=spec.name)
    model_only = sorted(set(_MODEL_ONLY) & set(raw)) if model is None else []
    if model_only:
        raise ProjectError("a measured driver's levels and shape are its file's; this field "
                           "belongs to a model driver", field=model_only[0])
    if ("breakup_hz" in params) != ("breakup_db" in params):
        missing = "breakup_db" if "breakup_hz" in params else "breakup_hz"
        raise ProjectError("missing; a break-up peak needs breakup_hz and breakup_db",
                           field=missing)
    for sub, key in (("rolloff_order", "rolloff_hz"), ("breakup_q", "breakup_hz")):
        if key not in params:
            params.pop(sub, None)           # a default only where its feature is used
    bools = {k: _bool(raw, k) for k in _BOOLS}
    data = None
    if name is not None:
        data = read_measurement(name, base_dir)
        if not bools["extrapolate"]:
            _covers(data, analysis, name)
    role = params.pop("role", None)
    resonance = params.pop("resonance_hz", None)
    if resonance is None and model in ("closed-box", "vented-box", "tweeter"):
        resonance = params["fc"]
    return Driver(model=model, params={k: v for k, v in params.items()
                                       if k not in ("offset_mm", "position_mm")},
                  data=data, offset_mm=float(params.get("offset_mm", 0.0)),
                  position_mm=params.get("position_mm"), role=role, resonance_hz=resonance,
                  min_phase=bools["min_phase"], extrapolate=bools["extrapolate"], raw=dict(raw))
