"""``crossplan presets`` and ``crossplan new FILE --preset NAME``."""

from __future__ import annotations

from pathlib import Path

from planner import presets
from planner.errors import ProjectError
from planner.jsonio import atomic_write_text


def add_arguments(p, name):
    if name == "new":
        p.add_argument("file", metavar="FILE", help="project file to write")
        p.add_argument("--preset", default=None, help="preset name (see 'crossplan presets'); "
                       "default: the demo")
        p.add_argument("--force", action="store_true", help="overwrite FILE if it exists")


def run(args) -> int:
    # Neither command designs anything: the presets are written as shipped
    # (the tests load and check every one), so numpy and scipy stay unloaded.

    if args.command == "presets":
        for n in presets.names():
            mark = " (demo)" if n == presets.DEMO else ""
            print(f"{n:<16} {presets.describe(n)}{mark}")
        return 0
    name = args.preset or presets.DEMO
    text = presets.text(name)
    out = Path(args.file)
    if out.exists() and not args.force:

        raise ProjectError(f"{str(out)!r} exists already; use --force to overwrite it",
                           field="FILE")
    if out.parent and not out.parent.exists():

        raise ProjectError(f"folder {str(out.parent)!r} does not exist", field="FILE")
    # Write the preset's own text (it keeps its description and layout).
    atomic_write_text(out, text)
    print(f"wrote {out} from preset {name!r} ({presets.title(name)})")
    return 0
