"""The JSON Schema of project files (docs/project.schema.json), checked with ``jsonschema``.

The schema is made by tools/project_schema.py from the loader's own tables; the committed
file must be what the script makes. Every preset and every project, filter, driver and
target example in README.md and docs/ must be valid; unknown keys are allowed and known
keys type-checked; and whatever the schema refuses, the loader refuses too (the schema is
never stricter than crossplan).
"""

from __future__ import annotations

import copy
import importlib.util
import json
import re
from pathlib import Path

import pytest
from hypothesis import given, settings

jsonschema = pytest.importorskip("jsonschema")

from planner import presets, project  # noqa: E402
from planner.errors import CrossplanError  # noqa: E402
from tests.test_fuzz_pipeline import FUZZ, mutated_projects  # noqa: E402

ROOT = Path(__file__).resolve().parents[1]
SCHEMA = json.loads((ROOT / "docs" / "project.schema.json").read_text(encoding="utf-8"))
VALIDATOR = jsonschema.Draft202012Validator(SCHEMA)


def _part(name: str):
    return jsonschema.Draft202012Validator(
        {"$schema": SCHEMA["$schema"], "$defs": SCHEMA["$defs"], "$ref": f"#/$defs/{name}"})


def _tool():
    spec = importlib.util.spec_from_file_location("project_schema",
                                                  ROOT / "tools" / "project_schema.py")
    mod = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(mod)
    return mod


def test_the_committed_schema_is_what_the_tool_makes():
    assert (ROOT / "docs" / "project.schema.json").read_text(encoding="utf-8") == _tool().text()


def test_the_schema_is_a_valid_draft_2020_12_schema():
    assert SCHEMA["$schema"] == "https://json-schema.org/draft/2020-12/schema"
    jsonschema.Draft202012Validator.check_schema(SCHEMA)


@pytest.mark.parametrize("name", presets.names())
def test_every_preset_is_valid(name):
    VALIDATOR.validate(json.loads(presets.text(name)))


def _json_blocks():
    """Every ```json block of README.md and docs/*.md: (file, text)."""
    out = []
    for f in [ROOT / "README.md", *sorted((ROOT / "docs").glob("*.md"))]:
        for m in re.finditer(r"```json\n(.*?)```", f.read_text(encoding="utf-8"), re.S):
            out.append((f.name, m.group(1)))
    return out


def _values(text: str):
    """The JSON values of a block: one document, objects one after another, or
    ``"key": value`` fragments (returned as one-key objects)."""
    dec, i, out = json.JSONDecoder(), 0, []
    text = text.strip()
    while i < len(text):
        if text[i] == '"':                      # a fragment: "key": value
            key, i = dec.raw_decode(text, i)
            i = text.index(":", i) + 1
            while text[i].isspace():
                i += 1
            value, i = dec.raw_decode(text, i)
            out.append({key: value})
        else:
            value, i = dec.raw_decode(text, i)
            out.append(value)
        while i < len(text) and (text[i].isspace() or text[i] == ","):
            i += 1
    return out


def _examples():
    out = []
    for name, text in _json_blocks():
        for v in _values(text):
            if v.get("format") == "crossplan-project":
                out.append((name, "project", v))
            elif "type" in v:
                out.append((name, "filter", v))
            elif set(v) == {"driver"}:
                out.append((name, "driver", v["driver"]))
            elif set(v) == {"target"}:
                out.extend((name, "filter", f) for f in v["target"])
    return out


EXAMPLES = _examples()


def test_the_docs_have_examples_of_each_kind():
    kinds = {k for _, k, _ in EXAMPLES}
    assert {"project", "filter", "driver"} <= kinds and len(EXAMPLES) >= 8


@pytest.mark.parametrize("where, kind, value", EXAMPLES,
                         ids=[f"{w}-{k}-{i}" for i, (w, k, _) in enumerate(EXAMPLES)])
def test_every_docs_example_is_valid(where, kind, value):
    (VALIDATOR if kind == "project" else _part(kind)).validate(value)


def test_unknown_keys_are_allowed_at_every_level(example):
    junk = {"a": [1, {"b": None}], "c": "x"}
    example["plugin"] = junk
    example["analysis"]["future"] = junk
    example["bands"][0]["placement"] = junk
    example["bands"][0]["filters"][0]["note"] = junk
    example["bands"][0]["driver"] = {"model": "flat", "vendor": junk}
    example["acoustics"] = {"room": junk}
    VALIDATOR.validate(example)


@pytest.mark.parametrize("mutate, where", [
    (lambda d: d.__setitem__("version", "1"), "version"),
    (lambda d: d.__setitem__("sample_rate", "48k"), "sample_rate"),
    (lambda d: d.__setitem__("bands", []), "bands"),
    (lambda d: d["analysis"].__setitem__("points", 10.5), "points"),
    (lambda d: d["bands"][0].__setitem__("gain_db", "loud"), "gain_db"),
    (lambda d: d["bands"][0].__setitem__("invert", "yes"), "invert"),
    (lambda d: d["bands"][0]["filters"][0].__setitem__("order", "2"), "order"),
    (lambda d: d["bands"][0]["filters"][1].__setitem__("order", 3), "order"),   # LR: even
    (lambda d: d["bands"][0]["filters"][0].pop("freq"), "freq"),
    (lambda d: d["bands"][1]["filters"][1].__setitem__("q", 0), "q"),
    (lambda d: d["bands"][1]["filters"][1].__setitem__("type", "wobble"), "type"),
    (lambda d: d["bands"][0]["filters"][0].pop("family"), "family"),
    (lambda d: d["bands"][0].__setitem__("driver", {"model": "flat", "file": "x.txt"}),
     "driver"),
])
def test_known_keys_are_type_checked(example, mutate, where):
    mutate(example)
    errors = list(VALIDATOR.iter_errors(example))
    assert errors, f"{where}: the schema accepted it"
    with pytest.raises(CrossplanError):
        project.from_dict(example)          # and crossplan refuses it too


@settings(**FUZZ)
@given(d=mutated_projects())
def test_what_the_schema_refuses_the_loader_refuses(d):
    if VALIDATOR.is_valid(d):
        return
    try:
        project.from_dict(copy.deepcopy(d))
    except CrossplanError:
        return
    errors = [f"{'/'.join(map(str, e.absolute_path))}: {e.message}"
              for e in VALIDATOR.iter_errors(d)]
    raise AssertionError(f"the loader accepted what the schema refused: {errors[:3]}")
