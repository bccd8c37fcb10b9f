"""The installed package holds every module: pyproject.toml lists every package folder.

A plain ``pip install .`` (as CI does) installs only the packages listed in
``[tool.setuptools] packages``; a folder left out would import in a source
checkout and be missing when installed.
"""

import tomllib
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]


def test_every_package_folder_is_listed():
    conf = tomllib.loads((ROOT / "pyproject.toml").read_text(encoding="utf-8"))
    listed = set(conf["tool"]["setuptools"]["packages"])
    found = {".".join(p.parent.relative_to(ROOT).parts) for p in (ROOT / "planner").rglob("__init__.py")}
    assert found - listed == set(), f"not in pyproject.toml: {sorted(found - listed)}"
    assert "planner.presets" in listed            # the preset files, from presets/
