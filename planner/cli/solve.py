"""``crossplan align FILE`` and ``crossplan fit FILE [--target T]``: the solvers.

``align`` searches band delays, polarities and (when allowed) trims,
crossover and all-pass frequencies for the flattest, best-phased sum
(:mod:`planner.solve.alignment`); ``fit`` solves EQ gains, or band gains, for a
target curve (:mod:`planner.solve.eqfit`). Both print before and after, and
write the result to a new file (``NAME-aligned.json``, ``NAME-fitted.json``
beside the input, or ``--out``) unless ``--overwrite``; the input is never
changed otherwise, and ``align`` never writes a project worse than its input.

Exit codes: 0 when the result passes the project's checks (``fit``: when its
largest error is within the project's flatness limit), 1 when it does not
(the result is still written: it is the best found), 2 for invalid input or
an output file that exists already, 130 when cancelled.
"""

from __future__ import annotations

from pathlib import Path

from planner.cli.common import designing, load_project
from planner.defaults import (ALIGN_DEFAULT, ALIGN_FREQ_OCTAVES, ALIGN_MAX_DELAY_MS, ALIGN_TRIM_DB,
                               ALIGN_VARIABLES, FIT_BANKS, FIT_LIMIT_DB)
from planner.errors import ProjectError
from planner.jsonio import dumps

_SUFFIX = {"align": "aligned", "fit": "fitted"}


def _number(text: str, lo: float, hi: float, what: str) -> float:
    import argparse
    import math

    try:
        v = float(text)
    except ValueError:
        v = float("nan")
    if not (math.isfinite(v) and lo <= v <= hi):
        raise argparse.ArgumentTypeError(f"must be {what} within {lo:g} .. {hi:g}, not {text!r}")
    return v


def add_arguments(p, name):
    p.add_argument("file", metavar="FILE", help="project file (JSON)")
    p.add_argument("--out", metavar="FILE2", default=None,
                   help=f"write the result here (default: FILE's name with -{_SUFFIX[name]} "
                        "added, beside it)")
    p.add_argument("--overwrite", action="store_true",
                   help="write over the output file if it exists (over FILE when no --out)")
    p.add_argument("--json", action="store_true", help="print one JSON object")
    if name == "align":
        # Each bound's default is the project's "solve" section, then crossplan's own.
        p.add_argument("--vary", default=None, metavar="LIST",
                       help=f"what may change, comma-separated, of {', '.join(ALIGN_VARIABLES)} "
                            f"(default: the file's solve.vary, else {','.join(ALIGN_DEFAULT)})")
        p.add_argument("--max-delay-ms", type=lambda t: _number(t, 0, 1000, "ms"), default=None,
                       metavar="MS", help="the largest delay a band may get (default: the "
                       f"file's solve.max_delay_ms, else {ALIGN_MAX_DELAY_MS:g} ms)")
        p.add_argument("--trim-db", type=lambda t: _number(t, 0, 40, "dB"), default=None,
                       metavar="DB", help="trims within +-DB with --vary gain (default: the "
                       f"file's solve.trim_db, else {ALIGN_TRIM_DB:g})")
        p.add_argument("--freq-octaves", type=lambda t: _number(t, 0, 2, "octaves"),
                       default=None, metavar="OCT",
                       help="how far crossover and all-pass frequencies may move with --vary "
                            "freq or allpass (default: the file's solve.freq_octaves, else "
                            f"{ALIGN_FREQ_OCTAVES:g} octave)")
        p.add_argument("--move", default=None, metavar="HZ[,HZ]",
                       help="only these crossover or all-pass frequencies may move "
                            "(default: all)")
        p.add_argument("--target", default=None, metavar="TARGET",
                       help="the curve the sum should follow: flat, tilt:DB, shelf:DB@HZ or "
                            "a text file of 'freq_hz level_db' lines (default: the "
                            "project's analysis.target, flat when it has none)")
    else:
        p.add_argument("--target", default=None, metavar="TARGET",
                       help="flat, tilt:DB (per octave about 1 kHz), shelf:DB@HZ (a low "
                            "shelf for room gain), tilt:DB+shelf:DB@HZ, or a text file of "
                            "'freq_hz level_db' lines (default: the project's "
                            "analysis.target, flat when it has none, as align and the "
                            "editor)")
        p.add_argument("--bands", default=None, metavar="NAMES",
                       help="the bands whose gains move, comma-separated (default: every "
                            "active band)")
        p.add_argument("--bank", choices=FIT_BANKS, default=None,
                       help="first add peaking filters at 0 dB at the ISO 266 centres to the "
                            "one band named by --bands (a graphic EQ)")
        p.add_argument("--split", action="store_true",
                       help="fit the bands' own gains (a multi-band split that must "
                            "recombine) instead of their EQ filters'")
        p.add_argument("--limit-db", type=lambda t: _number(t, 0.1, 30, "dB"),
                       default=None, metavar="DB",
                       help="each gain within +-DB (default: the file's solve.limit_db, else "
                            f"{FIT_LIMIT_DB:g})")
        p.add_argument("--minimax", action="store_true",
                       help="after least squares, lower the largest error (minimax)")


def _out_path(args) -> Path:
    src = Path(args.file)
    if args.out is not None:
        out = Path(args.out)
    elif args.overwrite:
        out = src
    else:
        out = src.with_name(f"{src.stem}-{_SUFFIX[args.command]}{src.suffix or '.json'}")
    if out.exists() and not args.overwrite:
        raise ProjectError(f"{str(out)!r} exists already; use --overwrite to write over it, "
                           "or --out to choose another name", field="--out")
    if not out.resolve().parent.is_dir():
        raise ProjectError(f"folder {str(out.parent)!r} does not exist", field="--out")
    return out


def _band_indices(project, text: str | None):
    if text is None:
        return None
    names = [n.strip() for n in text.split(",") if n.strip()]
    known = [b.name for b in project.bands]
    bad = [n for n in names if n not in known]
    if bad or not names:
        raise ProjectError(f"no band named {', '.join(map(repr, bad)) or 'nothing'}; the bands "
                           f"are {', '.join(known)}", field="--bands")
    return [known.index(n) for n in names]


def _write(project, out: Path) -> None:
    # The numerical core is imported when the command runs (start-up time).
    from planner import project as pj

    pj.save(pj.rebased(project, out.resolve().parent), out)


def run(args) -> int:
    return designing(lambda: _run(args))


def _run(args) -> int:
    if args.file is None:
        raise ProjectError("name a project file", field="FILE")
    out = _out_path(args)
    proj = load_project(args.file)
    # The numerical core is imported when the command runs (start-up time).
    from planner.solve import parse_target, project_target

    target = (project_target(proj) if args.target is None
              else parse_target(args.target, Path(args.file).resolve().parent))
    if args.command == "align":
        return _align(args, proj, target, out)
    return _fit(args, proj, target, out)


def _align(args, proj, target, out: Path) -> int:
    # The numerical core is imported when the command runs (start-up time).
    from planner.present.solve import alignment_dict, alignment_text
    from planner.solve import Bounds, align

    vary = (list(proj.solve.vary) if args.vary is None
            else [v.strip() for v in args.vary.split(",") if v.strip()])
    move = None
    if args.move is not None:
        try:
            move = tuple(float(x) for x in args.move.split(",") if x.strip())
        except ValueError:
            raise ProjectError(f"must be frequencies in Hz, comma-separated, not {args.move!r}",
                               field="--move") from None
    own = Bounds.of(proj)
    bounds = Bounds(own.max_delay_ms if args.max_delay_ms is None else args.max_delay_ms,
                    own.trim_db if args.trim_db is None else args.trim_db,
                    own.freq_octaves if args.freq_octaves is None else args.freq_octaves, move)
    a = align(proj, vary, bounds, target)
    written = None
    if a.improved:
        _write(a.project, out)
        written = str(out)
    if args.json:
        print(dumps(alignment_dict(a, written)), end="")
    else:
        print(alignment_text(a, written, target.name))
    return 0 if a.after.ok else 1


def _fit(args, proj, target, out: Path) -> int:
    # The numerical core is imported when the command runs (start-up time).
    from planner.present.solve import fit_dict, fit_text
    from planner.solve import fit

    f = fit(proj, target, bands=_band_indices(proj, args.bands), split=args.split,
            bank=args.bank,
            limit_db=proj.solve.limit_db if args.limit_db is None else args.limit_db,
            minimax=args.minimax)
    _write(f.project, out)
    if args.json:
        print(dumps(fit_dict(f, str(out))), end="")
    else:
        print(fit_text(f, str(out)))
    within = abs(f.max_error_db) <= proj.analysis.flatness_db
    return 0 if within and f.after.check("headroom").state != "fail" else 1
