"""``crossplan compare FILE [--json] [--ripple-db R] [--atten-db A]``: IIR versus FIR per band.

Exit 0 when every band with a crossover was compared, 1 when some band's
spec cannot be met (the reason is printed; the other bands are still
shown), 2 for an invalid file or option.
"""

from __future__ import annotations

import argparse

from planner.cli.common import designing, load_project, positive_number
from planner.defaults import COMPARE_ATTEN_DB as DEFAULT_ATTEN_DB
from planner.defaults import COMPARE_RIPPLE_DB as DEFAULT_RIPPLE_DB
from planner.defaults import COMPARE_MAX_TAPS, IIR_FAMILIES
from planner.errors import ProjectError
from planner.jsonio import dumps

_db_value = positive_number("dB")


def _taps_value(text: str) -> int:
    try:
        v = int(text)
    except ValueError:
        v = 0
    if v < 3:
        raise argparse.ArgumentTypeError(f"must be a whole number of taps >= 3, not {text!r}")
    return v


def add_arguments(p, name):
    p.add_argument("file", metavar="FILE", help="project file (JSON)")
    p.add_argument("--json", action="store_true", help="print one JSON object")
    p.add_argument("--ripple-db", type=_db_value, default=DEFAULT_RIPPLE_DB, metavar="R",
                   help="pass band: where each band's response leaves an R dB window "
                        f"(default {DEFAULT_RIPPLE_DB:g})")
    p.add_argument("--atten-db", type=_db_value, default=DEFAULT_ATTEN_DB, metavar="A",
                   help="stop band: where each band's response stays A dB below its pass gain "
                        f"(default {DEFAULT_ATTEN_DB:g})")
    p.add_argument("--iir-family", choices=IIR_FAMILIES, default="auto",
                   help="IIR equivalents of FIR bands: auto (Butterworth up to order 8, "
                        "else elliptic), butterworth or elliptic")
    p.add_argument("--max-taps", type=_taps_value, default=None, metavar="N",
                   help=f"longest FIR equivalent tried (default {COMPARE_MAX_TAPS}); a band needing "
                        "more by Kaiser's estimate is reported at once, with the estimate")


def run(args) -> int:
    return designing(lambda: _run(args))


def _run(args) -> int:
    # The numerical core is imported when the command runs (start-up time).
    from planner import compare
    from planner.present.text import compare_text

    if not args.atten_db > args.ripple_db:
        raise ProjectError(f"{args.atten_db:g} dB must be above --ripple-db "
                           f"({args.ripple_db:g} dB)", field="--atten-db")
    proj = load_project(args.file)
    c = compare.compare_project(proj, args.ripple_db, args.atten_db, args.iir_family,
                                args.max_taps or COMPARE_MAX_TAPS)
    if args.json:
        print(dumps(c.to_dict()), end="")
    else:
        print(compare_text(c))
    return 0 if c.ok else 1
