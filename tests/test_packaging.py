"""The installed package holds every module: pyproject.toml lists every package folder.

A plain ``pip install .`` (as CI does) installs only the packages listed in
``[tool.setuptools] packages``; a folder left out would import in a source
checkout and be missing when installed.
"""

import os
import subprocess
import sys
import tomllib
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]


def test_every_package_folder_is_listed():
    conf = tomllib.loads((ROOT / "pyproject.toml").read_text(encoding="utf-8"))
    listed = set(conf["tool"]["setuptools"]["packages"])
    found = {".".join(p.parent.relative_to(ROOT).parts) for p in (ROOT / "planner").rglob("__init__.py")}
    assert found - listed == set(), f"not in pyproject.toml: {sorted(found - listed)}"
    assert "planner.preset_files" in listed       # the preset files, from presets/


def test_installed_copy_reads_its_presets(tmp_path):
    # Run outside the checkout, so the installed package (CI: a plain
    # ``pip install .``) is imported, not this folder: its presets must be there.
    code = ("import planner, planner.presets as p; from planner import project; "
            "print(planner.__file__); print(len(p.names())); "
            "print(project.load_preset(p.DEMO).name)")
    env = {k: v for k, v in os.environ.items() if k != "PYTHONPATH"}
    out = subprocess.run([sys.executable, "-c", code], cwd=tmp_path, env=env,
                         capture_output=True, text=True, check=True).stdout.splitlines()
    assert int(out[1]) == len(list((ROOT / "presets").glob("*.json")))
    assert out[2]
