"""Fixtures of the editor tests."""

import pytest

from planner import project


@pytest.fixture
def two_way_file(tmp_path):
    """The two-way preset saved to a file of its own."""
    path = tmp_path / "two-way.json"
    project.save(project.load_preset("two-way"), path)
    return path
