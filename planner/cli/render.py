"""``crossplan render``: run audio, or a test signal of its own, through each band.

``crossplan render FILE IN.wav --out DIR [--rate R ...]`` runs IN through every
band with the exported (float64, or ``--arith``) coefficients and writes one
32-bit float WAV per band and their sum (``<stem>-<band>.wav``, the band's
part from :func:`planner.export.band_file_stems`, and ``<stem>-sum.wav``).
``--fractional-delay apply|round`` says how a delay with a fraction of a
sample is made (:mod:`planner.engine.delays`). ``crossplan render FILE --sweep|--impulse|
--noise [--seconds S --rate R --level-db L] --out DIR`` first writes the test
signal (with, for the sweep, a JSON sidecar holding f1 and f2 for
``crossplan measure``) and then the bands' outputs.
"""

from __future__ import annotations

import json
import sys

from planner.cli.common import ProgressBar, designing, load_project
from planner.errors import CrossplanError

#: Default level of the test signals, dBFS (peak for sweep and impulse, RMS for noise).
DEFAULT_LEVEL_DB = -20.0
#: Longest test signal, s: it is made in memory (10 min at 192 kHz: 0.9 GB of float64).
MAX_SIGNAL_S = 600.0
#: Inputs longer than this many seconds get a progress bar (on a terminal).
PROGRESS_AFTER_S = 5.0


def add_arguments(p, name):
    p.add_argument("file", metavar="FILE", help="project file (JSON)")
    p.add_argument("input", metavar="IN.wav", nargs="?", help="audio to run through the bands")
    sig = p.add_mutually_exclusive_group()
    sig.add_argument("--sweep", action="store_true",
                     help="write an exponential sine sweep (Farina) and its band outputs")
    sig.add_argument("--impulse", action="store_true", help="write a unit impulse and the bands' "
                                                            "impulse responses")
    sig.add_argument("--noise", action="store_true", help="write pink noise and its band outputs")
    p.add_argument("--out", required=True, metavar="DIR", help="folder for the WAV files")
    p.add_argument("--rate", type=float, action="append", metavar="HZ",
                   help="designed rate(s); the input must be at one of them (default: the "
                        "project's). For a test signal, its rate (the first one)")
    p.add_argument("--seconds", type=float, default=None,
                   help="test signal length in s (default: sweep 5, impulse 1, noise 10)")
    p.add_argument("--level-db", type=float, default=DEFAULT_LEVEL_DB,
                   help="test signal level in dBFS: peak for sweep/impulse, RMS for noise "
                        f"(default {DEFAULT_LEVEL_DB:g})")
    p.add_argument("--f1", type=float, default=20.0, help="sweep start, Hz (default 20)")
    p.add_argument("--f2", type=float, default=None,
                   help="sweep end, Hz (default: 20000 or 0.45 of the rate, the lower)")
    p.add_argument("--seed", type=int, default=None, help="noise seed (repeatable noise)")
    p.add_argument("--arith", default="float64", metavar="FORMAT",
                   help="coefficients rounded to this format first (run in float64)")
    p.add_argument("--fractional-delay", choices=("apply", "round"), default="apply",
                   help="a delay with a fraction of a sample: apply it with a fractional-delay "
                        "FIR, every band then one latency later (default), or round it to the "
                        "nearest sample (the cost is printed)")
    p.add_argument("--quiet", action="store_true", help="no progress bar")


def _test_signal(args, fs):
    # The numerical core is imported when the command runs (start-up time).
    from planner.dsp import signals

    import math

    if not math.isfinite(args.level_db):
        raise CrossplanError(f"must be a finite number of dBFS, not {args.level_db:g}",
                             field="level_db")
    if args.level_db > 0:
        raise CrossplanError(f"{args.level_db:g} dBFS is above full scale", field="level_db")
    amp = 10.0 ** (args.level_db / 20.0)
    if args.seconds is not None and args.seconds > MAX_SIGNAL_S:
        raise CrossplanError(f"{args.seconds:g} s is longer than the {MAX_SIGNAL_S:g} s a test "
                             "signal may last (it is made in memory)", field="seconds")
    if args.sweep:
        secs = 5.0 if args.seconds is None else args.seconds
        f2 = args.f2 if args.f2 is not None else min(20000.0, 0.45 * fs)
        fade_in, fade_out = min(0.02, secs / 10), min(0.005, secs / 10)
        x = signals.exp_sweep(args.f1, f2, secs, fs, fade_in, fade_out, amplitude=amp)
        meta = {"format": "crossplan-sweep", "version": 1, "sample_rate": fs, "f1_hz": args.f1,
                "f2_hz": f2, "seconds": secs, "fade_in_s": fade_in, "fade_out_s": fade_out,
                "level_db": args.level_db}
        return "sweep", x, meta
    if args.impulse:
        secs = 1.0 if args.seconds is None else args.seconds
        return "impulse", signals.impulse(int(round(secs * fs)), fs, amplitude=amp), None
    secs = 10.0 if args.seconds is None else args.seconds
    return "noise", signals.pink_noise(int(round(secs * fs)), fs, seed=args.seed, rms=amp), None


def run(args) -> int:
    return designing(lambda: _run(args))


def _run(args) -> int:
    from pathlib import Path

    # The numerical core is imported when the command runs (start-up time).
    from planner import export
    from planner.audio import render, wav
    from planner.engine import rounding
    from planner.present.text import SAFETY_NOTE

    proj = load_project(args.file)
    rates = args.rate or [proj.sample_rate]
    testing = args.sweep or args.impulse or args.noise
    if testing == bool(args.input):
        raise CrossplanError("give either IN.wav or one of --sweep, --impulse, --noise",
                             field="input")
    out = Path(args.out)
    run = export.RunFiles()
    signal_files = []
    if testing:
        fs = float(rates[0])
        stem, x, meta = _test_signal(args, fs)
        p = run.claim(out / f"{stem}.wav", f"the {stem} signal")
        signal_files.append((p, x, None))
        if meta is not None:
            signal_files.append((run.claim(p.with_suffix(".json"), f"the {stem} parameters"),
                                 None, meta))
    else:
        info = wav.open_wav(args.input)
        for note in info.notes:
            print(f"warning: {note}", file=sys.stderr)
        fs = render.same_rate_or_refuse(info.fs_hz, rates)
        wav.check_finite(info, "input")
        stem = export.short_stem(Path(args.input).stem)
    rx = export.export_rate(proj, fs, args.arith)
    bad = [b for b in rx.bands if not b.arith.ok]
    if bad:
        print("\n".join(export.arith_text(rx)), file=sys.stderr)
        return 1
    names = [b.name for b in rx.bands]
    band_paths = [run.claim(out / f"{stem}-{st}.wav", f"band {n!r}")
                  for n, st in zip(names, export.band_file_stems(names))]
    sum_path = run.claim(out / f"{stem}-sum.wav", "the sum")
    render.out_path(out, "")   # makes the folder
    if testing:
        print(SAFETY_NOTE)
    written = []
    for p, sig, meta in signal_files:
        if meta is None:
            export.write_file(p, lambda t, sig=sig: wav.write_wav(t, sig, fs))
        else:
            export.write_text_file(p, json.dumps(meta, indent=1) + "\n")
        written.append((p, ""))
    if testing:
        n, channels = len(x), 1
        blocks = (x[i:i + render.BLOCK_SAMPLES] for i in range(0, n, render.BLOCK_SAMPLES))
    else:
        # The input streams: one block is read, run through every band and written at a time.
        n, channels, blocks = info.frames, info.channels, info.blocks(render.BLOCK_SAMPLES)
    show = (not args.quiet and sys.stderr.isatty() and n > PROGRESS_AFTER_S * fs)
    bar = ProgressBar(sys.stderr) if show else None
    try:
        plan = render.render_to_files(
            blocks, n, channels, rx, band_paths, sum_path,
            None if bar is None else (lambda done, total: bar.update(done / total, "rendering")),
            args.fractional_delay)
    finally:
        if bar is not None:
            bar.clear()
    written += [(p, f" (band {name})") for name, p in zip(names, band_paths)]
    written.append((sum_path, " (sum of the active bands)"))
    for p, what in written:
        print(f"wrote {p}{what}")
    for line in rounding.run_notes(rx.report, plan):
        print(f"note: {line}")
    return 0
