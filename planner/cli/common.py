"""Helpers shared by the commands: loading a project or the demo."""

from __future__ import annotations

from planner import presets_lib as presets, project
from planner.model import Project


def load_project(path: str | None) -> Project:
    """Load ``path``, or the built-in demo project when ``path`` is None."""
    if path is None:
        return presets.load(presets.DEMO)
    return project.load(path)
