"""``crossplan [edit] [FILE]``: the terminal editor (the default command).

With no FILE the built-in demo project opens (saving asks for a file name).
Textual is imported here only, when the editor really starts. Where there is
no terminal to draw on (input or output redirected, as in a pipe or a
script) the editor cannot run: the command says so on stderr and prints the
check report and a magnitude plot instead, with the exit code of
``crossplan check``.

Given an edit to make (``--crossover KEY=HZ`` moves a crossover point, by
its name or its frequency, with every filter on either side of it and the
all-passes tied to it; ``--name-crossover NAME=HZ`` names the point at HZ
in the file and ties its filters to it) the command makes it without the
editor: one checked edit, saved atomically to FILE (or ``--out``), and the
check's result printed; exit codes as ``crossplan check``, 2 when the edit
is refused (nothing is saved).
"""

from __future__ import annotations

import sys
from pathlib import Path

from planner.cli.common import load_project, open_project
from planner.errors import ProjectError


def add_arguments(p, name):
    p.add_argument("file", metavar="FILE", nargs="?", default=None,
                   help="project file (JSON); default: the built-in demo")
    p.add_argument("--crossover", action="append", metavar="KEY=HZ", default=[],
                   help="move a crossover point without opening the editor: KEY is its name "
                        "(the file's crossovers) or its frequency (e.g. 3k=3.2k); every filter "
                        "of it moves, as one edit, and the file is saved")
    p.add_argument("--name-crossover", action="append", metavar="NAME=HZ", default=[],
                   help="name the crossover point at HZ in the file and tie its filters to it "
                        "(then --crossover NAME=... moves it by one value)")
    p.add_argument("--out", metavar="FILE", default=None,
                   help="with an edit: write the edited project here instead of over FILE")


def _pair(text: str, what: str) -> tuple[str, str]:
    key, sep, value = text.partition("=")
    if not sep or not key.strip() or not value.strip():
        raise ProjectError(f"write {what}=HZ (e.g. upper=3.2k), not {text!r}",
                           field="--crossover" if what == "KEY" else "--name-crossover")
    return key.strip(), value.strip()


def _edit(args) -> int:
    """Make the edits given on the command line, save, and print the check's result."""
    # The numerical core is imported when the command runs (start-up time).
    from planner import crossovers, engine, project, units
    from planner.present.text import failure_summary

    if args.file is None:
        print("crossplan: an edit needs a project FILE", file=sys.stderr)
        return 2
    proj = load_project(args.file)
    p = proj
    for text in args.name_crossover:
        name, hz = _pair(text, "NAME")
        point = crossovers.find_crossover(p, units.parse_freq_hz(hz, field="--name-crossover"))
        p = crossovers.name_crossover(p, point, name)
        print(f"named crossover {name!r}: {point.describe(p)}, {len(point.members)} filter(s) "
              "tied to it")
    for text in args.crossover:
        key, hz = _pair(text, "KEY")
        point = crossovers.find_crossover(p, key)
        new = units.parse_freq_hz(hz, field="--crossover")
        p = crossovers.move_crossover(p, point, new)
        how = f" (one value: crossovers.{point.name}.freq)" if point.name else ""
        print(f"moved crossover {point.describe(p)} to {units.format_hz(new)}: "
              f"{len(point.members)} filter(s){how}")
    out = args.out or args.file
    if p is not proj:
        project.save(project.rebased(p, Path(out).resolve().parent) if args.out else p, out)
        print(f"wrote {out}")
    r = engine.analyse(p)
    print(f"check: {'ok' if r.ok else 'FAIL: ' + failure_summary(r)}")
    return 0 if r.ok else 1


def _is_terminal() -> bool:
    # Textual reads keys from stdin and draws on the terminal behind stdout/stderr.
    return all(getattr(s, "isatty", lambda: False)() for s in (sys.stdin, sys.stdout, sys.stderr))


def run(args) -> int:
    if args.crossover or args.name_crossover:
        return _edit(args)
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
    opened = open_project(args.file, design=reason is not None)
    proj = opened.project
    if reason is not None:
        for line in opened.notices:
            print(f"crossplan: notice: {line}", file=sys.stderr)
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
    return run_editor(proj, args.file, opened.fingerprint, opened.notices)
