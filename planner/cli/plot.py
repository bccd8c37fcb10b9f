"""``crossplan plot FILE [--view ...] [--width W --height H]``: a plot in the terminal."""

from __future__ import annotations

import shutil
import sys

from planner.cli.common import designing, load_project, positive_number
from planner.defaults import PLOT_VIEWS as VIEWS
from planner.defaults import TIME_VIEWS


def add_arguments(p, name):
    p.add_argument("file", metavar="FILE", help="project file (JSON)")
    p.add_argument("--view", choices=VIEWS + TIME_VIEWS, default="magnitude",
                   help="frequency views (magnitude, phase, delay) or time views "
                        "(impulse, step: per band and the sum, time in ms)")
    p.add_argument("--width", type=int, default=None, help="columns (default: terminal width)")
    p.add_argument("--height", type=int, default=None, help="rows (default: 24)")
    p.add_argument("--span-ms", type=_positive_ms, default=None, metavar="MS",
                   help="time views: how many ms to show (default: until the responses settle)")
    p.add_argument("--no-color", action="store_true", help="plain text (also: NO_COLOR=1)")


_positive_ms = positive_number("ms")


def run(args) -> int:
    # Loading designs every filter (FIR tap searches too): under the progress bar.
    return designing(lambda: _run(args))


def _run(args) -> int:
    # The numerical core is imported when the command runs (start-up time).
    from planner import engine
    from planner.present.views import plot_report, plot_time

    proj = load_project(args.file)
    cols = shutil.get_terminal_size((80, 24)).columns
    width = args.width or cols
    height = args.height or 24
    # Colour codes only for a terminal: "plot ... > file" writes plain text.
    color = False if args.no_color or not sys.stdout.isatty() else None
    if args.view in TIME_VIEWS:
        # The numerical core is imported when the command runs (start-up time).
        from planner import timeresp

        tr = timeresp.project_impulse(proj)
        if args.view == "step":
            tr = tr.step()
        print(plot_time(tr, proj.name, width, height, color=color, span_ms=args.span_ms))
        return 0
    r = engine.analyse(proj)
    print(plot_report(r, args.view, width, height, color=color))
    return 0
