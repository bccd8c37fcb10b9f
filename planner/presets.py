"""The built-in preset projects: the JSON files of the ``presets/`` folder, read as text.

No numpy and no project model here: ``crossplan presets`` and ``crossplan
new`` list and copy presets without loading the numerical core. A preset as
a checked project is :func:`planner.project.load_preset`.
"""

from __future__ import annotations

import json
from importlib import resources
from pathlib import Path

from planner.errors import ProjectError

__all__ = ["DEMO", "names", "text", "describe", "title"]

#: The project opened by ``crossplan`` with no file.
DEMO = "desk-2way"


#: The ``presets/`` folder of a source checkout, beside the ``planner`` package.
_CHECKOUT = Path(__file__).resolve().parent.parent / "presets"


def _folder():
    # A source checkout (tests, or running without installing) reads its own
    # folder; an installed copy reads the files shipped as package data
    # (pyproject.toml maps ``presets/`` to ``planner.preset_files``).
    if _CHECKOUT.joinpath(f"{DEMO}.json").is_file():
        return _CHECKOUT
    return resources.files("planner.preset_files")


def names() -> list[str]:
    """Names of the presets, sorted."""
    return sorted(p.name[:-5] for p in _folder().iterdir() if p.name.endswith(".json"))


def text(name: str) -> str:
    """The JSON text of preset ``name``."""
    f = _folder().joinpath(f"{name}.json")
    if not f.is_file():
        raise ProjectError(f"no preset called {name!r}; presets: {', '.join(names())}",
                           field="preset")
    return f.read_text(encoding="utf-8")


def describe(name: str) -> str:
    """The preset's description (``"description"`` key), else its project name."""
    raw = json.loads(text(name))
    return raw.get("description") or raw.get("name", "")


def title(name: str) -> str:
    """The preset's project name (``"name"`` key), read without checking the project."""
    return json.loads(text(name)).get("name", "")
