"""``crossplan export FILE --rate R [...] --format F --out DIR [--arith A]``: coefficients for a DSP.

``--fractional-delay apply|round`` says how the WAV impulse responses make a
delay with a fraction of a sample (:mod:`planner.engine.delays`); the coefficient
formats hold the exact ``delay_samples``.

Exit 0 when written and every check passes, 1 when the files are written
but a check fails at some rate, or when the target arithmetic cannot hold
the design (then nothing is written), 2 for invalid input (a filter at or
above a rate's Nyquist frequency, a bad format name, ...).
"""

from __future__ import annotations

import sys

from planner.cli.common import designing, load_project
from planner.defaults import EXPORT_FORMATS as FORMATS


def add_arguments(p, name):
    p.add_argument("file", metavar="FILE", help="project file (JSON)")
    p.add_argument("--rate", type=float, action="append", metavar="HZ",
                   help="sample rate to export at (repeat for several; default: the project's)")
    p.add_argument("--format", choices=FORMATS, default="json",
                   help="json (default), csv, text or wav (impulse response per band)")
    p.add_argument("--out", required=True, metavar="DIR", help="folder for the files")
    p.add_argument("--arith", default="float64", metavar="FORMAT",
                   help="coefficient format of the target: float64 (default), float32 or qM.N "
                        "(M integer bits including sign), e.g. q1.31, q2.30, q1.23, q1.15")
    p.add_argument("--negate-feedback", action="store_true",
                   help="write -a1, -a2 (for engines whose recursion adds the feedback terms)")
    p.add_argument("--sections", choices=("per-filter", "paired"), default="per-filter",
                   help="per-filter (default): each filter's own sections in chain order, "
                        "labelled with the filter, for a DSP's per-filter slots; paired: the "
                        "band's poles and zeros re-paired, high-Q sections last, scaled for "
                        "fixed point")
    p.add_argument("--pre-attenuate", action="store_true",
                   help="lower each band's gain by its peak internal gain (when above 0 dB)")
    p.add_argument("--fractional-delay", choices=("apply", "round"), default=None,
                   help="wav: a delay with a fraction of a sample is applied with a "
                        "fractional-delay FIR, every band then one latency later (default), or "
                        "rounded to the nearest sample (the cost is printed); json, csv and "
                        "text hold the exact delay_samples")


def run(args) -> int:
    return designing(lambda: _run(args))


def _run(args) -> int:
    # The numerical core is imported when the command runs (start-up time).
    from planner import export

    proj = load_project(args.file)
    rates = args.rate or [proj.sample_rate]
    if args.fractional_delay and args.format != "wav":
        print(f"note: --fractional-delay is for --format wav; the {args.format} files hold "
              "the exact delay_samples", file=sys.stderr)
    res = export.write_export(proj, rates, args.format, args.out, arith=args.arith,
                              negate_feedback=args.negate_feedback,
                              pre_attenuate=args.pre_attenuate, source=args.file,
                              sections=args.sections,
                              fractional_delay=args.fractional_delay or "apply")
    for rx in res.rates:
        print("\n".join(export.arith_text(rx)))
    if not res.arith_ok:
        bad = [(rx, b) for rx in res.rates for b in rx.bands if not b.arith.ok]
        for rx, b in bad:
            where = f"section {b.arith.failed_section}" if b.arith.failed_section else "FIR"
            print(f"crossplan: band {b.name!r} {where}: {rx.arith.name} cannot hold the design "
                  f"at {rx.fs_hz:g} Hz ({b.arith.reason}); nothing written", file=sys.stderr)
        return 1
    what = {}
    if args.format == "wav":
        for rx, paths in zip(res.rates, res.band_files):
            what.update({p: f" (band {b.name}, {rx.fs_hz:g} Hz)" for b, p in zip(rx.bands, paths)})
    for p in res.files + [res.manifest]:
        print(f"wrote {p}{what.get(p, '')}")
    for line in res.notes:
        print(f"note: {line}")
    if not res.checks_ok:
        failed = ", ".join(f"{rx.fs_hz:g} Hz" for rx in res.rates if not rx.report.ok)
        print(f"check FAIL at {failed} (see the manifest, or crossplan check)", file=sys.stderr)
        return 1
    return 0
