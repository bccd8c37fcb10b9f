"""``crossplan export FILE --rate R [...] --format F[,F] --out DIR [--arith A]``: coefficients for a DSP.

``--fractional-delay apply|round`` says how the WAV impulse responses make a
delay with a fraction of a sample (:mod:`planner.engine.delays`); the coefficient
formats hold the exact ``delay_samples``. Several formats (``--format
json,csv`` or ``--format`` repeated) share one design and one check per rate.

Exit codes (:data:`EPILOG`): 0 written and every check passes; 1 the files are
written but a check fails at some rate; 2 invalid input (a filter at or above
a rate's Nyquist frequency, a bad format name, ...), nothing written; 3 the
design cannot be made or held (the target arithmetic cannot hold a band, an
FIR spec cannot be met), nothing written. The last line printed says which:
``wrote 6 files to out/; ...`` or ``nothing written: ...``.
"""

from __future__ import annotations

import sys

from planner.cli.common import designing, load_project
from planner.defaults import EXPORT_FORMATS as FORMATS
from planner.errors import CrossplanError, SpecNotMetError

#: Exit codes of ``crossplan export``.
EXIT_WRITTEN, EXIT_CHECK_FAILED, EXIT_INVALID, EXIT_NOT_HELD = 0, 1, 2, 3

EPILOG = """exit codes:
  0  files written; every check passes at every rate
  1  files written (and the manifest); a check fails at some rate
  2  nothing written: invalid input (file, rate, format, flag, a filter at or
     above a rate's Nyquist frequency, a file that cannot be written)
  3  nothing written: the design cannot be made or held (the number format
     cannot hold a band, an FIR spec cannot be met)
the last line says which: "wrote N files to DIR; ..." or "nothing written: ..."
"""


def _formats(text: str) -> list[str]:
    """An argparse type for --format: one name or several joined by commas."""
    import argparse

    out = [x.strip() for x in text.split(",") if x.strip()]
    bad = [x for x in out if x not in FORMATS]
    if bad or not out:
        raise argparse.ArgumentTypeError(f"must be one or more of {', '.join(FORMATS)} "
                                         f"(comma-separated), not {text!r}")
    return out


def add_arguments(p, name):
    import argparse

    p.epilog = EPILOG
    p.formatter_class = argparse.RawDescriptionHelpFormatter
    usage_error = p.error

    def error(message):   # a usage error ends, as every outcome does, in one line saying so
        usage_error(f"{message}\nnothing written: invalid usage (exit 2)")
    p.error = error
    p.add_argument("file", metavar="FILE", help="project file (JSON)")
    p.add_argument("--rate", type=float, action="append", metavar="HZ",
                   help="sample rate to export at (repeat for several; default: the project's)")
    p.add_argument("--format", type=_formats, action="append", metavar="F[,F...]",
                   help="json (default), csv, text or wav (impulse response per band); "
                        "several at once as json,csv or --format repeated: one design, one "
                        "check, every file in the manifest")
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


def _nothing(reason: str, code: int) -> int:
    print(f"nothing written: {reason}", file=sys.stderr)
    return code


def _run(args) -> int:
    # The numerical core is imported when the command runs (start-up time).
    from planner import export
    from planner.present.text import failure_summary

    fmts = list(dict.fromkeys(f for group in (args.format or [["json"]]) for f in group))
    try:
        proj = load_project(args.file)
    except SpecNotMetError as e:
        print(f"crossplan: {e}", file=sys.stderr)
        return _nothing("an FIR spec cannot be met (above)", EXIT_NOT_HELD)
    except CrossplanError as e:
        print(f"crossplan: {e}", file=sys.stderr)
        return _nothing("the project is invalid (above)", EXIT_INVALID)
    rates = args.rate or [proj.sample_rate]
    if args.fractional_delay and "wav" not in fmts:
        print(f"note: --fractional-delay is for --format wav; the {','.join(fmts)} files hold "
              "the exact delay_samples", file=sys.stderr)
    try:
        res = export.write_export(proj, rates, fmts, args.out, arith=args.arith,
                                  negate_feedback=args.negate_feedback,
                                  pre_attenuate=args.pre_attenuate, source=args.file,
                                  sections=args.sections,
                                  fractional_delay=args.fractional_delay or "apply")
    except SpecNotMetError as e:
        print(f"crossplan: {e}", file=sys.stderr)
        return _nothing("an FIR spec cannot be met at a rate (above)", EXIT_NOT_HELD)
    except CrossplanError as e:
        print(f"crossplan: {e}", file=sys.stderr)
        written = getattr(e, "written", [])
        if written:
            print(f"incomplete: wrote {len(written)} file(s) to {args.out} before the error, "
                  "and no manifest: export again", file=sys.stderr)
            return EXIT_INVALID
        return _nothing(str(e), EXIT_INVALID)
    for rx in res.rates:
        print("\n".join(export.arith_text(rx)))
    if not res.arith_ok:
        bad = [(rx, b) for rx in res.rates for b in rx.bands if not b.arith.ok]
        for rx, b in bad:
            where = f"section {b.arith.failed_section}" if b.arith.failed_section else "FIR"
            print(f"crossplan: band {b.name!r} {where}: {rx.arith.name} cannot hold the design "
                  f"at {rx.fs_hz:g} Hz ({b.arith.reason})", file=sys.stderr)
        rx, b = bad[0]
        return _nothing(f"{rx.arith.name} cannot hold band {b.name!r} at {rx.fs_hz:g} Hz"
                        + (f" (and {len(bad) - 1} more)" if len(bad) > 1 else ""),
                        EXIT_NOT_HELD)
    what = {}
    if "wav" in res.formats:
        for rx, paths in zip(res.rates, _wav_paths(res)):
            what.update({p: f" (band {b.name}, {rx.fs_hz:g} Hz)" for b, p in zip(rx.bands, paths)})
    for p in res.files + [res.manifest]:
        print(f"wrote {p}{what.get(p, '')}")
    for line in res.notes:
        print(f"note: {line}")
    n = len(res.files) + 1
    head = f"wrote {n} files ({', '.join(res.formats)} and the manifest) to {args.out}"
    if not res.checks_ok:
        failed = "; ".join(f"at {rx.fs_hz:g} Hz: {failure_summary(rx.report)}"
                           for rx in res.rates if not rx.report.ok)
        print(f"{head}; check failed {failed}", file=sys.stderr)
        return EXIT_CHECK_FAILED
    print(f"{head}; every check passes")
    return EXIT_WRITTEN


def _wav_paths(res) -> list[list]:
    """Per rate, each band's WAV file (the run's files in the order they were written)."""
    wavs = res.files_by_format.get("wav", [])
    k = len(res.rates[0].bands) if res.rates else 0
    return [wavs[i * k:(i + 1) * k] for i in range(len(res.rates))]
