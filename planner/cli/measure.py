"""``crossplan measure RECORDING.wav --sweep SWEEP.wav --out response.txt``: a response from a sweep.

The recording of the tool's own exponential sweep (``crossplan render --sweep``)
is deconvolved into an impulse response (Farina, AES 2000), gated around its
main peak to drop later reflections, and written in the plain-text response
format (``freq_hz mag_db phase_deg`` lines after ``*`` comments). The sweep's
f1 and f2 come from the JSON sidecar written beside it (``SWEEP.json``), or
from ``--f1`` and ``--f2``.
"""

from __future__ import annotations

import json
import sys
from pathlib import Path

from planner import config
from planner.errors import CrossplanError
from planner.jsonio import atomic_write_text


def add_arguments(p, name):
    p.add_argument("recording", metavar="RECORDING.wav", help="what the microphone recorded")
    p.add_argument("--sweep", required=True, metavar="SWEEP.wav", help="the sweep as played")
    p.add_argument("--out", required=True, metavar="FILE", help="response text file to write")
    p.add_argument("--gate-ms", type=float, default=5.0,
                   help="window after the main peak, ms; end it before the first reflection "
                        "(default 5)")
    p.add_argument("--pre-ms", type=float, default=1.0, help="kept before the peak, ms (default 1)")
    p.add_argument("--fade-ms", type=float, default=None,
                   help="half-Hann fade length, ms (default: the smaller of 1 and --gate-ms)")
    p.add_argument("--f1", type=float, default=None, help="sweep start, Hz (else from SWEEP.json)")
    p.add_argument("--f2", type=float, default=None, help="sweep end, Hz (else from SWEEP.json)")
    p.add_argument("--points", type=int, default=400, help="log-spaced output points (default 400)")
    p.add_argument("--method", choices=("inverse", "division"), default="inverse",
                   help="inverse filter (default) or regularised spectral division")
    p.add_argument("--channel", type=int, default=0, help="recording channel, from 0 (default 0)")


def _number(v, where: str, what: str) -> float:
    """``v`` as a float if it is a finite JSON number above 0, else a CrossplanError at ``where``."""
    import math

    if isinstance(v, bool) or not isinstance(v, (int, float)):
        raise CrossplanError(f"expected {what}, got {json.dumps(v)[:80]}", field=where)
    try:
        f = float(v)
    except OverflowError:
        f = math.inf
    if not math.isfinite(f) or f <= 0:
        raise CrossplanError(f"expected {what} (finite, above 0), got {str(v)[:40]}",
                             field=where)
    return f


def _sidecar(side: Path) -> dict:
    """The sweep's JSON sidecar as a dict, refused with the file's name when it is not one."""
    try:
        meta = json.loads(side.read_text(encoding="utf-8"))
    except UnicodeDecodeError:
        raise CrossplanError("not UTF-8 text", field=str(side)) from None
    except ValueError as e:
        raise CrossplanError(f"not JSON: {e}", field=str(side)) from None
    except OSError as e:
        raise CrossplanError(f"cannot read it: {e.strerror or e}", field=str(side)) from None
    if not isinstance(meta, dict):
        raise CrossplanError(f"expected an object with f1_hz and f2_hz, got a "
                             f"{type(meta).__name__ if meta is not None else 'null'}",
                             field=str(side))
    return meta


def _band(args, fs: float):
    """The sweep's (f1, f2) in Hz: the flags, else the sidecar; checked against the rate ``fs``."""
    f1, f2 = args.f1, args.f2
    side = Path(args.sweep).with_suffix(".json")
    where = {"f1": "f1", "f2": "f2"}
    if (f1 is None or f2 is None) and side.is_file():
        meta = _sidecar(side)
        for key in ("f1_hz", "f2_hz"):
            if key not in meta and (args.f1 if key == "f1_hz" else args.f2) is None:
                raise CrossplanError(f"{key}: missing (expected a number in Hz)",
                                     field=str(side))
        if f1 is None:
            f1, where["f1"] = meta["f1_hz"], f"{side}: f1_hz"
        if f2 is None:
            f2, where["f2"] = meta["f2_hz"], f"{side}: f2_hz"
        rate = meta.get("sample_rate")
        if rate is not None and _number(rate, f"{side}: sample_rate", "a number in Hz") != fs:
            raise CrossplanError(f"the sidecar says {float(rate):g} Hz but the sweep is at "
                                 f"{fs:g} Hz", field=f"{side}: sample_rate")
    if f1 is None or f2 is None:
        raise CrossplanError(f"no {side.name} beside the sweep: give --f1 and --f2 (Hz)",
                             field="sweep")
    f1 = _number(f1, where["f1"], "a number in Hz")
    f2 = _number(f2, where["f2"], "a number in Hz")
    if f2 <= f1:
        raise CrossplanError(f"{f2:g} Hz must be above f1 ({f1:g} Hz)", field=where["f2"])
    if f2 > fs / 2:
        raise CrossplanError(f"{f2:g} Hz is above Nyquist ({fs / 2:g} Hz) for the sweep's "
                             f"{fs:g} Hz", field=where["f2"])
    return f1, f2


def _mono(x, channel, field):
    if x.ndim == 1:
        return x
    if not 0 <= channel < x.shape[1]:
        raise CrossplanError(f"channel {channel} does not exist ({x.shape[1]} channels)",
                             field=field)
    return x[:, channel]


def _read(path, field):
    """A WAV file as float64 samples and its rate; its header notes printed as warnings."""
    # The numerical core is imported when the command runs (start-up time).
    from planner.audio import wav

    info = wav.open_wav(path)
    for note in info.notes:
        print(f"warning: {note}", file=sys.stderr)
    wav.check_finite(info, field)
    return info.read(), info.fs_hz


def run(args) -> int:
    # The numerical core is imported when the command runs (start-up time).
    import numpy as np
    from planner.dsp import measure

    rec, fs = _read(args.recording, "recording")
    sweep, fs_s = _read(args.sweep, "sweep")
    if fs != fs_s:
        raise CrossplanError(f"the recording is at {fs:g} Hz but the sweep at {fs_s:g} Hz",
                             field="recording")
    f1, f2 = _band(args, fs_s)
    rec = _mono(rec, args.channel, "channel")
    sweep = _mono(sweep, 0, "sweep")
    if not 2 <= args.points <= config.MAX_POINTS:
        raise CrossplanError(f"must be 2 .. {config.MAX_POINTS} points, not {args.points}",
                             field="points")
    for w in measure.check_recording(rec, sweep, fs, args.pre_ms, args.gate_ms):
        print(f"warning: {w}", file=sys.stderr)
    fade = min(1.0, args.gate_ms) if args.fade_ms is None else args.fade_ms
    ir = measure.deconvolve_sweep(rec, sweep, fs, f1, f2, method=args.method)
    g = measure.gate(ir, fs, args.pre_ms, args.gate_ms, fade)
    freqs = np.geomspace(f1, f2, args.points)
    mag, ph = measure.ir_to_response(g.ir, fs, freqs, t0_samples=g.start - g.peak)
    lowest = 1000.0 / (args.pre_ms + args.gate_ms)
    header = [
        f"crossplan measure: {Path(args.recording).name} deconvolved with {Path(args.sweep).name}",
        f"sweep {f1:g} - {f2:g} Hz at {fs:g} Hz, method {args.method} (Farina, AES 2000)",
        f"gate {args.pre_ms:g} ms before the peak to {args.gate_ms:g} ms after, fades "
        f"{fade:g} ms; peak at {g.peak / fs * 1000:.3f} ms",
        f"below about {lowest:.0f} Hz (1 / gate length) the response is smoothed by the gate",
        "phase is referred to the peak; columns: freq_hz mag_db phase_deg",
    ]
    atomic_write_text(args.out, measure.format_response_text(freqs, mag, ph, header))
    print(f"wrote {args.out} (peak at {g.peak / fs * 1000:.3f} ms; trust it above about "
          f"{lowest:.0f} Hz)")
    return 0
