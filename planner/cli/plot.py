"""``crossplan plot FILE [--view ...] [--width W --height H]``: a plot in the terminal."""

from __future__ import annotations

import shutil

from planner.plots import VIEWS


def add_arguments(p, name):
    p.add_argument("file", metavar="FILE", help="project file (JSON)")
    p.add_argument("--view", choices=VIEWS, default="magnitude")
    p.add_argument("--width", type=int, default=None, help="columns (default: terminal width)")
    p.add_argument("--height", type=int, default=None, help="rows (default: 24)")
    p.add_argument("--no-color", action="store_true", help="plain text (also: NO_COLOR=1)")


def run(args) -> int:
    from planner import engine, report
    from planner.cli.common import load_project

    proj = load_project(args.file)
    r = engine.analyse(proj)
    cols = shutil.get_terminal_size((80, 24)).columns
    width = args.width or cols
    height = args.height or 24
    print(report.plot_report(r, args.view, width, height, color=False if args.no_color else None))
    return 0
