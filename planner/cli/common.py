"""Helpers shared by the commands: loading a project or the demo; progress bar and cancel.

Imported while the arguments are parsed, so it imports nothing of the
numerical core at module level (see :mod:`planner.cli`).
"""

from __future__ import annotations

from typing import TYPE_CHECKING

from planner import presets, progress
from planner.errors import DesignCancelled, SpecNotMetError
from planner.progress import bar_text

if TYPE_CHECKING:
    from planner.model import Project


def positive_number(unit: str):
    """An argparse type: a finite number above 0, refused as "a positive number of <unit>"."""
    def parse(text: str) -> float:
        import argparse
        import math

        try:
            v = float(text)
        except ValueError:
            v = float("nan")
        if not (v > 0 and math.isfinite(v)):
            raise argparse.ArgumentTypeError(f"must be a positive number of {unit}, not {text!r}")
        return v
    return parse


def open_project(path: str | None, design: bool = True):
    """Load ``path`` (or the demo when None) as a :class:`planner.project.Opened`: the project,
    the fingerprint of the bytes read (None for the demo) and the loader's notices (a file
    of an older format version is migrated in memory and says so).

    With ``design`` every filter is designed at once (see :func:`load_project`).
    """
    # The core is imported when a command runs, not when the parser is built (start-up).
    from planner import engine, project

    if path is None:
        opened = project.Opened(project.load_preset(presets.DEMO), None, ())
    else:
        opened = project.read(path)
    if design:
        engine.design_project(opened.project)
    return opened


def load_project(path: str | None, design: bool = True) -> Project:
    """Load ``path``, or the built-in demo project when ``path`` is None.

    With ``design`` (the default) every filter is designed at once
    (:func:`planner.engine.design_project`), so that one that cannot be made
    is refused before the command works; ``design=False`` leaves that to the
    analysis (the editor, which designs in a worker with progress). The
    loader's notices (an older format version, migrated in memory) are
    printed on stderr, one line each.
    """
    import sys

    opened = open_project(path, design)
    for line in opened.notices:
        print(f"crossplan: notice: {line}", file=sys.stderr)
    return opened.project


class ProgressBar:
    """A one-line progress bar on a terminal stream, redrawn in place with a carriage return.

    ``update(fraction, text)`` is a :func:`planner.progress.scope` report
    callable; the line is redrawn only when the shown percentage or text
    changes, and :meth:`clear` wipes it.
    """

    def __init__(self, stream, width: int | None = None):
        import shutil

        self.stream = stream
        self.width = width or shutil.get_terminal_size((80, 24)).columns
        self._shown: tuple[int, str] | None = None

    def line(self, fraction: float, text: str) -> str:
        """The bar's text: ``[#####-----]  50% text``, cut to the width (less one column)."""

        return bar_text(fraction, text)[: max(10, self.width - 1)]

    def update(self, fraction: float, text: str = "") -> None:
        if fraction >= 1.0:       # a design is done: wipe the bar before anything prints
            self.clear()
            return
        key = (int(round(fraction * 100)), text)
        if key == self._shown:
            return
        self._shown = key
        self.stream.write("\r\033[K" + self.line(fraction, text))
        self.stream.flush()

    def clear(self) -> None:
        if self._shown is not None:
            self.stream.write("\r\033[K")
            self.stream.flush()
            self._shown = None


#: Exit code of a command stopped by Ctrl-C (128 + SIGINT, the shell's convention).
EXIT_CANCELLED = 130


def designing(work, stream=None) -> int:
    """Run ``work()`` (a command's body returning its exit code) with progress and cancel.

    Designs made inside report to a one-line bar on ``stream`` (default
    ``sys.stderr``) when it is a terminal, and nothing is drawn otherwise.
    A design spec that cannot be met (:class:`~planner.errors.SpecNotMetError`)
    prints its message and returns 1; Ctrl-C (:class:`KeyboardInterrupt`) or
    a cancelled design (:class:`planner.errors.DesignCancelled`) prints
    ``cancelled`` and returns 130. Nothing is written to the project: the
    commands only read it, and saves are atomic.
    """
    import sys

    out = sys.stderr if stream is None else stream
    isatty = getattr(out, "isatty", None)
    bar = ProgressBar(out) if isatty is not None and isatty() else None
    try:
        with progress.scope(report=bar.update if bar is not None else None):
            return int(work())
    except SpecNotMetError as e:
        if bar is not None:
            bar.clear()
        print(f"crossplan: {e}", file=out)
        return 1
    except (DesignCancelled, KeyboardInterrupt):
        if bar is not None:
            bar.clear()
        print("crossplan: cancelled", file=out)
        return EXIT_CANCELLED
    finally:
        if bar is not None:
            bar.clear()
