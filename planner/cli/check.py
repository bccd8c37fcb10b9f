"""``crossplan check FILE [--json]``: the summed-response report.

Exit codes: 0 when every check passes, 1 when one fails or an FIR spec cannot
be met, 2 for an invalid file, 130 when cancelled (Ctrl-C during a design).
"""

from __future__ import annotations

from planner.cli.common import designing, load_project
from planner.jsonio import dumps


def add_arguments(p, name):
    p.add_argument("file", metavar="FILE", help="project file (JSON)")
    p.add_argument("--json", action="store_true", help="print one JSON object")
    p.add_argument("--points", type=int, default=None,
                   help="grid points instead of the project's analysis.points")
    p.add_argument("--arith", default=None, metavar="FORMAT",
                   help="also round each band to float32, float64 or qM.N and report it per band "
                        "(exit 1 if the format cannot hold the design); default: the "
                        "project's analysis.arith, if set")


def run(args) -> int:
    # Loading designs every filter (the FIR searches among them): both run
    # under the progress bar, and Ctrl-C or an unmet FIR spec end cleanly.
    return designing(lambda: _run(args))


def _run(args) -> int:
    # The numerical core is imported when the command runs (start-up time).
    from planner import engine
    from planner.present.text import text_report

    proj = load_project(args.file)
    r = engine.analyse(proj, points=args.points, group_delay=True)   # the report shows it
    rx = None
    arith = args.arith if args.arith is not None else proj.analysis.arith
    if arith is not None:
        # The numerical core is imported when the command runs (start-up time).
        from planner import export

        rx = export.export_rate(proj, proj.sample_rate, arith)
    if args.json:
        d = r.to_dict()
        if rx is not None:
            d["arith"] = export.arith_dict(rx)
        print(dumps(d), end="")
    else:
        print(text_report(r))
        if rx is not None:
            print("\n".join(export.arith_text(rx)))
    return 0 if r.ok and (rx is None or rx.arith_ok) else 1
