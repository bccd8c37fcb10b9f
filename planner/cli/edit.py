"""``crossplan [edit] [FILE]``: the terminal editor (the default command).

With no FILE the built-in demo project opens (saving asks for a file name).
Textual is imported here only, when the editor really starts. Where there is
no terminal to draw on (input or output redirected, as in a pipe or a
script) the editor cannot run: the command says so on stderr and prints the
check report and a magnitude plot instead, with the exit code of
``crossplan check``.
"""

from __future__ import annotations

import sys

from planner.cli.common import load_project


def add_arguments(p, name):
    p.add_argument("file", metavar="FILE", nargs="?", default=None,
                   help="project file (JSON); default: the built-in demo")


def _is_terminal() -> bool:
    # Textual reads keys from stdin and draws on the terminal behind stdout/stderr.
    return all(getattr(s, "isatty", lambda: False)() for s in (sys.stdin, sys.stdout, sys.stderr))


def run(args) -> int:
    reason = None
    if not _is_terminal():
        reason = "not a terminal"
    else:
        try:
            # The numerical core is imported when the command runs (start-up time).
            from planner.tui.app import run_editor
        except ImportError as e:  # textual missing or broken
            reason = f"the terminal editor cannot start ({e})"
    # The editor designs in its worker, with a progress bar; the report designs here.
    proj = load_project(args.file, design=reason is not None)
    if reason is not None:
        # The numerical core is imported when the command runs (start-up time).
        from planner import engine
        from planner.present.text import text_report
        from planner.present.views import plot_report

        print(f"crossplan: {reason}: printing the check report instead of opening the editor",
              file=sys.stderr)
        r = engine.analyse(proj)
        print(text_report(r))
        print(plot_report(r, "magnitude", 80, 22, color=False))   # not a terminal: plain
        return 0 if r.ok else 1
    return run_editor(proj, args.file)
