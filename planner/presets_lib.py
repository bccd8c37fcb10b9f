"""The built-in preset projects (JSON files in the ``presets/`` folder)."""

from __future__ import annotations

import json
from importlib import resources
from pathlib import Path

from typing import TYPE_CHECKING

from planner.errors import ProjectError

if TYPE_CHECKING:
    from planner.model import Project

__all__ = ["DEMO", "names", "text", "load", "describe", "title"]

#: The project opened by ``crossplan`` with no file.
DEMO = "two-way"


def _folder():
    try:
        folder = resources.files("planner.presets")
        if folder.joinpath(f"{DEMO}.json").is_file():
            return folder
    except ModuleNotFoundError:
        pass
    # A source checkout: the presets folder beside the package.
    return Path(__file__).resolve().parent.parent / "presets"


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


def load(name: str) -> Project:
    """Preset ``name`` as a checked project (this designs its filters)."""
    from planner import project

    return project.loads(text(name))


def describe(name: str) -> str:
    """The preset's description (``"description"`` key), else its project name."""
    raw = json.loads(text(name))
    return raw.get("description") or raw.get("name", "")


def title(name: str) -> str:
    """The preset's project name (``"name"`` key), read without checking the project."""
    return json.loads(text(name)).get("name", "")
