"""``crossplan presets`` and ``crossplan new FILE --preset NAME`` (or ``new NAME FILE``)."""

from __future__ import annotations

from pathlib import Path

from planner import presets
from planner.errors import ProjectError
from planner.jsonio import atomic_write_text


def add_arguments(p, name):
    if name == "new":
        # "new FILE --preset NAME", and "new NAME FILE" as people also type it.
        p.usage = "%(prog)s [-h] [--preset PRESET] [--force] [PRESET] FILE"
        p.add_argument("names", nargs="+", metavar="[PRESET] FILE",
                       help="project file to write, after a preset's name if you like "
                       "(the same as --preset)")
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
    if len(args.names) > 2:
        raise ProjectError(f"takes a preset's name and a file, not {len(args.names)} names "
                           f"({' '.join(args.names)})", field="FILE")
    if len(args.names) == 2 and args.preset is not None:
        raise ProjectError(f"names the preset twice ({args.names[0]!r} and --preset "
                           f"{args.preset!r}); give one", field="preset")
    name = args.names[0] if len(args.names) == 2 else (args.preset or presets.DEMO)
    text = presets.text(name)
    out = Path(args.names[-1])
    if out.exists() and not args.force:

        raise ProjectError(f"{str(out)!r} exists already; use --force to overwrite it",
                           field="FILE")
    if out.parent and not out.parent.exists():

        raise ProjectError(f"folder {str(out.parent)!r} does not exist", field="FILE")
    # Write the preset's own text (it keeps its description and layout).
    atomic_write_text(out, text)
    print(f"wrote {out} from preset {name!r} ({presets.title(name)})")
    return 0
