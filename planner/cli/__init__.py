"""The ``crossplan`` command line.

``main(argv)`` runs any command in-process and returns its exit code:
0 when every check passes, 1 when a check fails (or a design spec cannot be
met), 2 when the input is invalid. Commands live in small modules of this
package; each has ``add_arguments(parser, name)`` and ``run(args) -> int``.

Parsing stays light: only the chosen command's module is imported to add its
arguments (the top-level help lists the commands from :data:`COMMANDS`), the
command modules import nothing of the numerical core at module level (their
choices and defaults come from :mod:`planner.defaults`), and the core is
imported when the command runs. So ``crossplan --help``, ``--version``,
``presets``, ``new`` and ``COMMAND --help`` import neither numpy nor scipy.
This package never imports textual (only the ``edit`` command does, when run).
"""

from __future__ import annotations

import os

# One BLAS/OpenMP thread unless the user chose otherwise, set before numpy is
# first imported (the thread count is read once, when the library loads). The
# arrays here are small (a few bands x a few thousand points): on a busy
# 2-core machine the default threads fought other jobs for the cores and the
# band responses took 16.3 ms instead of 0.90 ms; on an idle machine one
# thread costs about 10 % on long FIR responses. Figures in DEVELOPERS.md.
for _var in ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ.setdefault(_var, "1")
del _var

import argparse  # noqa: E402 - after the thread settings above, on purpose
import importlib  # noqa: E402
import sys  # noqa: E402

from planner import __version__
from planner.errors import CrossplanError
from planner.jsonio import os_error_text

__all__ = ["main", "console_main", "COMMANDS", "EXIT_OK", "EXIT_FAIL", "EXIT_INVALID"]

EXIT_OK, EXIT_FAIL, EXIT_INVALID = 0, 1, 2

#: command name -> (module, one-line help)
COMMANDS: dict[str, tuple[str, str]] = {
    "edit": ("planner.cli.edit", "open a project in the terminal editor (the default)"),
    "check": ("planner.cli.check", "check a project: sum flatness, crossings, headroom"),
    "plot": ("planner.cli.plot", "plot a project's responses in the terminal"),
    "new": ("planner.cli.presets", "write a new project file from a preset"),
    "presets": ("planner.cli.presets", "list the built-in presets"),
    "export": ("planner.cli.export", "write per-band coefficients for a DSP, at one or more rates"),
    "render": ("planner.cli.render", "run audio or a test signal through the bands, to WAV files"),
    "measure": ("planner.cli.measure", "a frequency response from a recorded sweep (Farina)"),
    "compare": ("planner.cli.compare", "IIR versus FIR per band for the same magnitude spec"),
    "align": ("planner.cli.solve", "search band delays, polarities and trims for a flat sum"),
    "fit": ("planner.cli.solve", "solve EQ or band gains so the sum follows a target curve"),
}


class _Parser(argparse.ArgumentParser):
    """An argparse parser whose usage errors exit with code 2 and a one-line message."""

    def error(self, message):  # noqa: D401 - argparse API
        self.print_usage(sys.stderr)
        raise _UsageError(f"{self.prog}: {message}")


class _UsageError(Exception):
    pass


def build_parser(command: str | None = None) -> argparse.ArgumentParser:
    """The ``crossplan`` parser, with the arguments of ``command`` only.

    Every command is listed (name and one-line help, from :data:`COMMANDS`),
    but only ``command``'s module is imported to add its arguments; with
    ``command=None`` none is, which is enough for ``--help`` and ``--version``.
    """
    parser = _Parser(
        prog="crossplan",
        description="Plan and check multi-band loudspeaker crossovers and EQ. "
                    "With no command, opens the editor (on the demo project if no FILE).")
    parser.add_argument("--version", action="version", version=f"crossplan {__version__}")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND", parser_class=_Parser)
    for name, (mod, help_) in COMMANDS.items():
        p = sub.add_parser(name, help=help_, description=help_)
        if name == command:
            importlib.import_module(mod).add_arguments(p, name)
        p.set_defaults(_module=mod)
    return parser


def _quiet_encoding_errors() -> None:
    """Print what cannot be encoded as backslash escapes instead of failing on it."""
    for stream in (sys.stdout, sys.stderr):
        reconfigure = getattr(stream, "reconfigure", None)
        if reconfigure is not None:
            try:
                reconfigure(errors="backslashreplace")
            except (ValueError, OSError):   # a stream that cannot change any more
                pass


def main(argv: list[str] | None = None) -> int:
    """Run ``crossplan`` with ``argv`` (without the program name); return the exit code.

    Every error a user can cause ends in one line on stderr and an exit code:
    :class:`~planner.errors.CrossplanError` and file-system errors
    (:class:`OSError`: the path and the reason) exit 2, so does running out
    of memory, Ctrl-C 130 (also during start-up), a closed pipe 0.
    """
    _quiet_encoding_errors()
    try:
        return _main(argv)
    except CrossplanError as e:
        print(f"crossplan: {e}", file=sys.stderr)
        return EXIT_INVALID
    except KeyboardInterrupt:
        print("crossplan: interrupted", file=sys.stderr)
        return 130
    except BrokenPipeError:
        return EXIT_OK
    except OSError as e:
        print(f"crossplan: {os_error_text(e)}", file=sys.stderr)
        return EXIT_INVALID
    except MemoryError:
        print("crossplan: out of memory: the input or the work asked for is too large for "
              "this machine", file=sys.stderr)
        return EXIT_INVALID


def _main(argv: list[str] | None) -> int:
    argv = list(sys.argv[1:] if argv is None else argv)
    names = set(COMMANDS)
    # ``crossplan`` and ``crossplan FILE`` open the editor.
    if not argv or (argv[0] not in names and not argv[0].startswith("-")):
        argv = ["edit", *argv]
    parser = build_parser(argv[0] if argv[0] in names else None)
    try:
        args = parser.parse_args(argv)
    except _UsageError as e:
        print(e, file=sys.stderr)
        return EXIT_INVALID
    except SystemExit as e:  # --help, --version
        return int(e.code or 0)
    if args.command is None:
        parser.print_help()
        return EXIT_OK
    if args._module not in _LIGHT_MODULES:
        _load_numerical_core(scipy_signal=args._module not in _NUMPY_MODULES)
    return int(importlib.import_module(args._module).run(args))


#: Command modules that run without numpy or scipy (``presets`` and ``new``).
_LIGHT_MODULES = frozenset({"planner.cli.presets"})
#: Command modules that need numpy but scipy only for some filters (Bessel, FIR): they ask
#: for scipy's subpackages when first used (:mod:`planner.lazyimport`), so a project of
#: Butterworth and Linkwitz-Riley crossovers and EQ is checked, plotted, exported and
#: edited without importing scipy.signal (most of the start-up time).
_NUMPY_MODULES = frozenset({"planner.cli.check", "planner.cli.plot", "planner.cli.export",
                            "planner.cli.edit"})


def _load_numerical_core(scipy_signal: bool = True) -> None:
    """Import numpy (and scipy.signal, unless ``scipy_signal`` is false: the command then
    asks for it when a filter needs it, :mod:`planner.lazyimport`) here, near the bottom
    of the call stack, before the command imports them through planner's own modules.

    CPython 3.11 keeps the frames of Python calls in chunks of 16 kB that it maps from
    the system when a call needs a new one and unmaps when the call returns. scipy's
    import nests deeply and repeats sibling imports at the same depths; reached through
    ``python -m planner`` and planner's chain (runpy, the command, the engine, the filter
    designs), those depths sat on a chunk's edge, and its import mapped and unmapped a
    chunk about 49,400 times (strace), taking 67,000 minor page faults against 18,000 and
    0.3-0.4 s more (``benchmarks/bench_startup.py``). Imported from here it takes the
    same modules in the same time as a bare ``import numpy, scipy.signal``.
    """
    # The numerical core, only for the commands that compute (start-up time of the others).
    import numpy  # noqa: F401
    if scipy_signal:
        import scipy.signal  # noqa: F401


def console_main() -> None:
    """Entry point of the ``crossplan`` console script (and of ``python -m planner``).

    The process keeps the memory of freed arrays for the next ones
    (:func:`planner.memory.keep_freed_memory`): the editor and the checks make and free
    arrays of megabytes at every step.
    """
    from planner.memory import keep_freed_memory    # ctypes, only in the command's own process

    keep_freed_memory()
    try:
        code = main()
    except KeyboardInterrupt:       # between the last check and the exit
        print("crossplan: interrupted", file=sys.stderr)
        code = 130
    sys.exit(code)
