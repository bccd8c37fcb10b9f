"""Mutated project files and measurement files, end to end: load, check, plot, export.

Every preset is mutated at random (keys dropped or replaced, wrong types, huge numbers,
NaN and infinity, strings, nested junk) and random measurement text files are made (good
rows mixed with broken ones). Each must either go through loading, designing, the check,
the text and JSON reports, the plot series and an export (json, csv, text into a
temporary folder), or be refused with crossplan's own error naming the field. Never
another exception, and never a NaN or infinity in a report.

The number of examples follows the Hypothesis profile: a few dozen by default (the
whole file well under a minute), ``--hypothesis-profile=long`` (tests/conftest.py) runs
at least 10,000 of each kind.
"""

from __future__ import annotations

import copy
import json
import math
import re
import tempfile
from pathlib import Path

from hypothesis import HealthCheck, given, settings, strategies as st

from planner import engine, export, presets, project
from planner.errors import CrossplanError
from planner.jsonio import dumps
from planner.present.text import text_report
from planner.present.views import plot_report, view_series

LONG = settings.default.max_examples >= 10_000
FUZZ = dict(max_examples=settings.default.max_examples if LONG else 25, deadline=None,
            suppress_health_check=[HealthCheck.too_slow, HealthCheck.data_too_large,
                                   HealthCheck.filter_too_much])

PRESETS = {name: json.loads(presets.text(name)) for name in presets.names()}

junk_leaf = (st.none() | st.booleans() | st.integers(-10**12, 10**12)
             | st.sampled_from([0, -1, 1e308, -1e308, 1e-308, 2**63, 10**400, 0.5, 48000,
                                float("nan"), float("inf"), float("-inf")])
             | st.floats(allow_nan=True, allow_infinity=True)
             | st.text(max_size=6) | st.sampled_from(["", "2.2 kHz", "nan", "lowpass",
                                                      "butterworth", "fir", "remez"]))
junk = st.recursive(junk_leaf, lambda inner: st.lists(inner, max_size=3)
                    | st.dictionaries(st.text(max_size=5), inner, max_size=3), max_leaves=6)


def _paths(node, prefix=()):
    """Every place in a parsed JSON document (dict keys and list items)."""
    out = [prefix]
    if isinstance(node, dict):
        for k, v in node.items():
            out += _paths(v, prefix + (k,))
    elif isinstance(node, list):
        for i, v in enumerate(node):
            out += _paths(v, prefix + (i,))
    return out


@st.composite
def mutated_projects(draw):
    d = copy.deepcopy(PRESETS[draw(st.sampled_from(sorted(PRESETS)))])
    for _ in range(draw(st.integers(1, 4))):
        paths = [p for p in _paths(d) if p]
        path = draw(st.sampled_from(paths))
        parent = d
        for k in path[:-1]:
            parent = parent[k]
        key = path[-1]
        old = parent[key]
        op = draw(st.sampled_from(["drop", "junk", "scale", "type", "dup", "extra"]))
        if op == "drop":
            del parent[key]
        elif op == "junk":
            parent[key] = draw(junk)
        elif op == "scale" and isinstance(old, (int, float)) and not isinstance(old, bool):
            parent[key] = old * draw(st.sampled_from([-1, 0, 1e-9, 0.5, 2, 10, 1e6, 1e300]))
        elif op == "type":
            parent[key] = {"a": old} if draw(st.booleans()) else [old, old]
        elif op == "dup" and isinstance(parent, list):
            parent.insert(key, copy.deepcopy(old))
        elif isinstance(old, dict):
            old[draw(st.text(max_size=5))] = draw(junk)
    return d


def _no_nan(x, where="report"):
    if isinstance(x, float):
        assert not math.isnan(x), f"{where}: NaN"
    elif isinstance(x, dict):
        for k, v in x.items():
            _no_nan(v, f"{where}.{k}")
    elif isinstance(x, (list, tuple)):
        for i, v in enumerate(x):
            _no_nan(v, f"{where}[{i}]")


def _finite_everywhere(x, where="report"):
    if isinstance(x, float):
        assert math.isfinite(x), f"{where}: {x!r}"
    elif isinstance(x, dict):
        for k, v in x.items():
            _finite_everywhere(v, f"{where}.{k}")
    elif isinstance(x, (list, tuple)):
        for i, v in enumerate(x):
            _finite_everywhere(v, f"{where}[{i}]")


_NAN_WORD = re.compile(r"(?<![A-Za-z])(nan|inf)(?![A-Za-z])", re.IGNORECASE)


def _no_nan_text(text: str, what: str):
    m = _NAN_WORD.search(text)
    assert m is None, f"{what}: {text[max(0, m.start() - 40): m.end() + 40]!r}"


def _through(d, base_dir=None):
    """Load, design, check, report, plot and export ``d``; refusals are crossplan's own."""
    try:
        p = project.from_dict(d, base_dir)
        engine.design_project(p)
        r = engine.analyse(p)
    except CrossplanError as e:
        assert e.field, f"no field path in {e!r}"
        return "refused"
    rep = r.to_dict()
    # No NaN before jsonio.dumps could hide one as null (an infinity is a figure that is
    # not there, e.g. the sum of no bands: it is printed as null); the JSON text is strict.
    _no_nan(rep)
    text = dumps(rep)
    json.loads(text, parse_constant=lambda c: (_ for _ in ()).throw(AssertionError(c)))
    _no_nan_text(text_report(r), "text report")
    for view in ("magnitude", "phase", "delay"):
        view_series(r, view)
        _no_nan_text(plot_report(r, view, 60, 16), f"{view} plot")
    with tempfile.TemporaryDirectory() as out:
        for fmt in ("json", "csv", "text"):
            try:
                res = export.write_export(p, [p.sample_rate], fmt, Path(out) / fmt)
            except CrossplanError as e:
                assert e.field or str(e), f"no message in {e!r}"
                continue
            for f in [*res.files, res.manifest]:
                body = Path(f).read_text()
                if fmt != "json" and not str(f).endswith(".json"):
                    _no_nan_text(body, str(f))
                else:
                    _finite_everywhere(json.loads(body), str(f))
    return "accepted"


@settings(**FUZZ)
@given(d=mutated_projects())
def test_mutated_presets_go_through_or_are_refused_with_a_field(d):
    _through(d)


def test_every_band_muted_goes_through_without_nan():
    d = copy.deepcopy(PRESETS["two-way"])
    for b in d["bands"]:
        b["mute"] = True
    assert _through(d) == "accepted"


row = st.one_of(
    st.tuples(st.floats(1, 30000), st.floats(-60, 120), st.floats(-720, 720)).map(
        lambda t: f"{t[0]:.6g} {t[1]:.4g} {t[2]:.4g}"),
    st.tuples(st.floats(1, 30000), st.floats(-60, 120)).map(lambda t: f"{t[0]:.6g}\t{t[1]:.4g}"),
    st.sampled_from(["# comment", "* star", "; semi", "// slashes", "", "Freq Mag Phase",
                     "1,5 80", "100 nan 0", "200 inf", "abc def", "1e400 80 0", "300 80 0 9",
                     "-5 80 0", "0 80", "400;81;10", "500,82,11", "\x00", "600 82 1e400"]),
    st.text(max_size=20))


@st.composite
def measurement_texts(draw):
    f = sorted(draw(st.lists(st.floats(5, 40000), min_size=0, max_size=40, unique=True)))
    lines = [f"{x:.7g} {draw(st.floats(-50, 110)):.5g} {draw(st.floats(-400, 400)):.5g}"
             for x in f]
    for _ in range(draw(st.integers(0, 6))):
        lines.insert(draw(st.integers(0, len(lines))), draw(row))
    return "\n".join(lines) + draw(st.sampled_from(["", "\n", "\r\n"]))


@settings(**FUZZ)
@given(text=measurement_texts(), extrapolate=st.booleans())
def test_measurement_files_go_through_or_are_refused_with_a_field(text, extrapolate):
    d = copy.deepcopy(PRESETS["desk-2way"])
    drv = {"file": "woofer.txt", "role": "woofer"}
    if extrapolate:
        drv["extrapolate"] = True
    d["bands"][0]["driver"] = drv
    with tempfile.TemporaryDirectory() as folder:
        Path(folder, "woofer.txt").write_text(text, encoding="utf-8", errors="surrogateescape")
        _through(d, folder)
