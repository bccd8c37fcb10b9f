"""``crossplan [edit] [FILE]``: the terminal editor (the default command)."""

from __future__ import annotations

import sys


def add_arguments(p, name):
    p.add_argument("file", metavar="FILE", nargs="?", default=None,
                   help="project file (JSON); default: the built-in demo")


def run(args) -> int:
    from planner.cli.common import load_project

    proj = load_project(args.file)
    try:
        from planner.tui.app import run_editor
    except ImportError:
        run_editor = None
    if run_editor is None or not sys.stdout.isatty():
        # No terminal UI here (or not a terminal): print the report and a plot.
        from planner import engine, report

        r = engine.analyse(proj)
        print(report.text_report(r))
        print(report.plot_report(r, "magnitude", 80, 22))
        return 0 if r.ok else 1
    return run_editor(proj, args.file)
