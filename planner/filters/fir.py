"""FIR filter types: linear-phase lowpass, highpass, bandpass and complementary split bands.

All designs are made by :mod:`planner.dsp.fir`; this module turns a
project's parameters into its calls, checks the combinations of fields, and
refuses, with :class:`FirSpecNotMetError`, a design that misses the
magnitude spec it was given.

JSON forms (see ``docs/fir.md``)::

    {"type": "lowpass", "family": "fir", "method": "window", "freq": 2200,
     "taps": 255, "window": "hann"}
    {"type": "lowpass", "family": "fir", "method": "window", "freq": 2200,
     "transition_hz": 400, "atten_db": 70}                     # Kaiser-sized
    {"type": "highpass", "family": "fir", "method": "remez", "freq": 2200,
     "transition_hz": 400, "ripple_db": 0.1, "atten_db": 60}    # fewest taps
    {"type": "bandpass", "family": "fir", "method": "lsq", "freq": 300,
     "freq2": 2800, "transition_hz": 200, "taps": 1023}
    {"type": "split", "family": "fir", "crossovers": [300, 2800], "band": 1,
     "taps": 1023, "method": "window", "window": "hann"}

Method names: ``window`` (windowed sinc), ``remez`` (Parks-McClellan
equiripple, scipy.signal.remez), ``lsq`` (weighted least squares,
scipy.signal.firls).

Long searches for the fewest taps report through :mod:`planner.progress`
and can be cancelled there (:class:`FirDesignCancelled`).

References
----------
.. [1] A. V. Oppenheim and R. W. Schafer, "Discrete-Time Signal Processing",
   3rd ed., Pearson, 2010, sec. 5.7 (linear phase types I-IV) and ch. 7.
.. [2] J. F. Kaiser, "Nonrecursive digital filter design using the I0-sinh
   window function", Proc. IEEE ISCAS, 1974, pp. 20-23.
.. [3] T. W. Parks and J. H. McClellan, IEEE Trans. Circuit Theory CT-19(2),
   1972, pp. 189-194.
"""

from __future__ import annotations

from functools import lru_cache
from typing import Any, Mapping

import numpy as np

from planner import progress
from planner.dsp import fir
from planner.errors import CrossplanError, ProjectError, SpecNotMetError
from planner.filters.fields import FieldSpec
from planner.filters.registry import FilterDesign, FilterKind, KindWarning, register
from planner.units import format_hz

__all__ = ["METHODS", "WINDOWS", "FirSpecNotMetError", "FirDesignCancelled", "spec_of",
           "split_signature", "KINDS"]

#: Design methods of the ``fir`` family.
METHODS = ("window", "remez", "lsq")
#: Window names of the project file (``rectangular`` is scipy's ``boxcar``).
WINDOWS = ("rectangular", "triangular", "hann", "hamming", "blackman", "kaiser")
_DSP_WINDOW = {"rectangular": "boxcar"}
#: The dsp names of the methods in :func:`planner.dsp.fir.complementary_split`.
_SPLIT_DESIGN = {"window": "window", "remez": "equiripple", "lsq": "least_squares"}
_METHOD_TEXT = {"window": "window", "remez": "remez", "lsq": "least squares"}

DEFAULT_WINDOW = "hann"
DEFAULT_RIPPLE_DB = 0.1
DEFAULT_ATTEN_DB = 60.0
#: Longest filter a project may hold (taps).
TAPS_HI = 32767


class FirSpecNotMetError(SpecNotMetError, ProjectError):
    """An FIR in a project cannot meet its magnitude spec (within ``max_taps``, or at ``taps``).

    Both a :class:`~planner.errors.SpecNotMetError` (the command line exits 1
    on it) and a :class:`~planner.errors.ProjectError` (the loader's one
    error family), so that it keeps its type and field path on its way up.
    """


class FirDesignCancelled(fir.DesignCancelled, ProjectError):
    """A tap search was cancelled through :mod:`planner.progress`; no filter was made."""


# ---------------------------------------------------------------------------
# fields

_FREQ = FieldSpec("freq", "freq", "Hz", help="cut-off in Hz (lower edge of a bandpass); "
                  "the -6 dB point of a window design, the centre of the transition otherwise")
_FREQ2 = FieldSpec("freq2", "freq", "Hz", help="upper edge of the bandpass in Hz")
_METHOD = FieldSpec("method", "choice", required=False, default="window", choices=METHODS,
                    help="window: windowed sinc; remez: equiripple; lsq: least squares")
_TAPS = FieldSpec("taps", "int", "", required=False, lo=3, hi=TAPS_HI,
                  help="filter length; odd except for a window lowpass. Omit for remez/lsq "
                       "to search the fewest taps, or size a Kaiser window by transition_hz")
_WINDOW = FieldSpec("window", "choice", required=False, choices=WINDOWS,
                    help=f"window of the window method (default {DEFAULT_WINDOW})")
_BETA = FieldSpec("beta", "float", "", required=False, lo=0.0, hi=50.0,
                  help="Kaiser window shape (or give atten_db for Kaiser's formula)")
_TRANSITION = FieldSpec("transition_hz", "freq", "Hz", required=False,
                        help="transition width in Hz, centred on freq (and freq2)")
_PASS = FieldSpec("pass_hz", "freq", "Hz", required=False,
                  help="pass-band edge in Hz (instead of transition_hz; lowpass/highpass)")
_STOP = FieldSpec("stop_hz", "freq", "Hz", required=False,
                  help="stop-band edge in Hz (instead of transition_hz; lowpass/highpass)")
_RIPPLE = FieldSpec("ripple_db", "float", "dB", required=False, lo=1e-4, hi=20.0,
                    help=f"largest peak-to-peak pass-band ripple (default {DEFAULT_RIPPLE_DB} dB)")
_ATTEN = FieldSpec("atten_db", "float", "dB", required=False, lo=10.0, hi=200.0,
                   help=f"smallest stop-band attenuation (default {DEFAULT_ATTEN_DB:g} dB "
                        "for remez/lsq; sizes a Kaiser window)")
_MAX_TAPS = FieldSpec("max_taps", "int", "", required=False, lo=3, hi=TAPS_HI,
                      help=f"longest filter the tap search tries (default "
                           f"{fir.DEFAULT_MAX_TAPS})")

_CROSSOVERS = FieldSpec("crossovers", "floats", "Hz", lo=1, hi=16,
                        help="crossover frequencies in Hz, increasing; the same in every band")
_BAND = FieldSpec("band", "int", "", lo=0, hi=16,
                  help="which band of the split this is: 0 = lowest")
_SPLIT_TAPS = FieldSpec("taps", "int", "", lo=3, hi=TAPS_HI,
                        help="odd length of every band of the split")


# ---------------------------------------------------------------------------
# checks


def _given(p: Mapping[str, Any], *names: str) -> list[str]:
    return [n for n in names if p.get(n) is not None]


def _refuse(p: Mapping[str, Any], names, why: str) -> None:
    for n in names:
        if p.get(n) is not None:
            raise ProjectError(f"{why}; remove {n} ({p[n]!r})", field=n)


def _odd_taps(taps: int, why: str) -> None:
    if taps % 2 == 0:
        raise ProjectError(
            f"must be odd for {why} (type I linear phase: symmetric about a whole-sample "
            f"centre, no forced zero at Nyquist), not {taps}", field="taps")


def _within_limit(p: Mapping[str, Any], method: str, field: str) -> None:
    """Refuse ``p[field]`` taps beyond what ``method`` may design (planner.config.FIR_MAX_TAPS)."""
    if p.get(field) is None:
        return
    try:
        fir.check_method_taps(method, p[field], field)
    except CrossplanError as e:
        raise ProjectError(e.message, field=field) from None


def _edges(p: Mapping[str, Any], fs_hz: float):
    """Pass and stop edges (Hz) of a remez/lsq spec from transition_hz or pass_hz/stop_hz."""
    kind, f1 = p["_type"], p["freq"]
    nyq = fs_hz / 2
    if p.get("transition_hz") is not None:
        tw = p["transition_hz"]
        _refuse(p, ("pass_hz", "stop_hz"), "give transition_hz or pass_hz and stop_hz, not both")
        edges = [f1] + ([p["freq2"]] if kind == "bandpass" else [])
        for f in edges:
            if not (0 < f - tw / 2 and f + tw / 2 < nyq):
                raise ProjectError(
                    f"{tw:g} Hz centred on {f:g} Hz puts a band edge outside 0 .. {nyq:g} Hz "
                    "(Nyquist)", field="transition_hz")
        if kind == "bandpass":
            if not p["freq2"] - p["freq"] > tw:
                raise ProjectError(f"{p['freq2']:g} Hz must be above freq + transition_hz "
                                   f"({p['freq'] + tw:g} Hz)", field="freq2")
            return (f1 + tw / 2, p["freq2"] - tw / 2), (f1 - tw / 2, p["freq2"] + tw / 2)
        if kind == "lowpass":
            return f1 - tw / 2, f1 + tw / 2
        return f1 + tw / 2, f1 - tw / 2
    if kind == "bandpass":
        _refuse(p, ("pass_hz", "stop_hz"), "a bandpass spec is given by transition_hz "
                "(centred on freq and freq2)")
        raise ProjectError(f"missing; a {p['method']} bandpass needs transition_hz (Hz)",
                           field="transition_hz")
    given = _given(p, "pass_hz", "stop_hz")
    if not given:
        raise ProjectError(f"missing; a {p['method']} design needs transition_hz (Hz), "
                           "or pass_hz and stop_hz", field="transition_hz")
    if len(given) == 1:
        other = "stop_hz" if given[0] == "pass_hz" else "pass_hz"
        raise ProjectError(f"missing; {given[0]} is given, so {other} is needed too", field=other)
    fp, fst = p["pass_hz"], p["stop_hz"]
    lo, hi = (fp, fst) if kind == "lowpass" else (fst, fp)
    if not lo < hi:
        side = "above" if kind == "lowpass" else "below"
        raise ProjectError(f"{fst:g} Hz must be {side} pass_hz ({fp:g} Hz) for a {kind}",
                           field="stop_hz")
    if not lo <= f1 <= hi:
        raise ProjectError(f"{f1:g} Hz must lie in the transition band {lo:g} .. {hi:g} Hz "
                           "between pass_hz and stop_hz", field="freq")
    return fp, fst


def spec_of(p: Mapping[str, Any], kind: str, fs_hz: float) -> fir.FirSpec:
    """The magnitude spec of a checked remez/lsq filter's parameters."""
    q = dict(p, _type=kind)
    pass_hz, stop_hz = _edges(q, fs_hz)
    return fir.FirSpec(kind, pass_hz, stop_hz,
                       p.get("ripple_db") if p.get("ripple_db") is not None else DEFAULT_RIPPLE_DB,
                       p.get("atten_db") if p.get("atten_db") is not None else DEFAULT_ATTEN_DB)


def _kaiser_spec(p: Mapping[str, Any], kind: str) -> fir.FirSpec:
    """The attenuation spec a Kaiser-sized window design is measured against."""
    tw, f1 = p["transition_hz"], p["freq"]
    if kind == "bandpass":
        f2 = p["freq2"]
        pass_hz, stop_hz = (f1 + tw / 2, f2 - tw / 2), (f1 - tw / 2, f2 + tw / 2)
    elif kind == "lowpass":
        pass_hz, stop_hz = f1 - tw / 2, f1 + tw / 2
    else:
        pass_hz, stop_hz = f1 + tw / 2, f1 - tw / 2
    # The ripple is not part of a window design's spec: a loose bound that
    # the measurement always meets keeps FirSpec's checks satisfied.
    return fir.FirSpec(kind, pass_hz, stop_hz, 20.0, p["atten_db"])


def _check_band(kind: str):
    def check(p: Mapping[str, Any], fs_hz: float) -> None:
        method = p["method"]
        if kind == "bandpass" and not p["freq2"] > p["freq"]:
            raise ProjectError(f"{p['freq2']:g} Hz must be above freq ({p['freq']:g} Hz)",
                               field="freq2")
        if method == "window":
            _check_window(p, kind, fs_hz)
            return
        _refuse(p, ("window", "beta"), f"the {method} method takes no window")
        _within_limit(p, method, "taps")
        _within_limit(p, method, "max_taps")
        if p.get("taps") is not None:
            _odd_taps(p["taps"], f"a {method} design")
            _refuse(p, ("max_taps",), "max_taps bounds the search made when taps is omitted")
        spec_of(p, kind, fs_hz)
    return check


def _check_window_shape(p: Mapping[str, Any], win: str) -> None:
    """A kaiser window needs ``beta`` or ``atten_db`` (one of them); other windows take neither."""
    if win == "kaiser":
        if p.get("beta") is None and p.get("atten_db") is None:
            raise ProjectError("missing; the kaiser window needs beta, or atten_db for "
                               "Kaiser's formula", field="beta")
        if p.get("beta") is not None and p.get("atten_db") is not None:
            raise ProjectError("give beta or atten_db, not both", field="atten_db")
    else:
        _refuse(p, ("beta",), f"beta shapes the kaiser window only, not {win}")
        _refuse(p, ("atten_db",), f"atten_db sizes a kaiser window only, not {win}")


def _check_window(p: Mapping[str, Any], kind: str, fs_hz: float) -> None:
    _refuse(p, ("ripple_db", "pass_hz", "stop_hz"),
            "this applies to the remez and lsq methods, not to window")
    win = p.get("window") or DEFAULT_WINDOW
    if p.get("taps") is None:
        # Kaiser 1974: length and beta from the transition and attenuation.
        missing = [n for n in ("transition_hz", "atten_db") if p.get(n) is None]
        if missing:
            raise ProjectError("missing; a window design needs taps, or transition_hz and "
                               "atten_db for a Kaiser window sized by Kaiser's formula",
                               field="taps" if len(missing) == 2 else missing[0])
        if p.get("window") not in (None, "kaiser"):
            raise ProjectError(f"transition_hz and atten_db size a Kaiser window; the "
                               f"{win} window cannot be sized that way: give taps, or use "
                               "window kaiser", field="window")
        _refuse(p, ("beta",), "beta comes from atten_db by Kaiser's formula here")
        tw, nyq = p["transition_hz"], fs_hz / 2
        edges = [p["freq"]] + ([p["freq2"]] if kind == "bandpass" else [])
        for f in edges:
            if not (0 < f - tw / 2 and f + tw / 2 < nyq):
                raise ProjectError(
                    f"{tw:g} Hz centred on {f:g} Hz puts a band edge outside 0 .. {nyq:g} Hz "
                    "(Nyquist)", field="transition_hz")
        if kind == "bandpass" and not p["freq2"] - p["freq"] > tw:
            raise ProjectError(f"{p['freq2']:g} Hz must be above freq + transition_hz "
                               f"({p['freq'] + tw:g} Hz)", field="freq2")
        return
    _refuse(p, ("transition_hz",), "give taps or transition_hz (with atten_db), not both")
    _refuse(p, ("max_taps",), "max_taps bounds the Kaiser sizing made when taps is omitted")
    if kind in ("highpass", "bandpass"):
        _odd_taps(p["taps"], f"a window {kind}")
    _check_window_shape(p, win)


# ---------------------------------------------------------------------------
# designs


def _not_met(message: str) -> FirSpecNotMetError:
    return FirSpecNotMetError(message, field="taps")


def _search(p: Mapping[str, Any], kind: str, fs_hz: float, spec: fir.FirSpec) -> np.ndarray:
    method = p["method"]
    search = fir.min_taps_equiripple if method == "remez" else fir.min_taps_least_squares
    text = f"{_head(p, kind)} ({_METHOD_TEXT[method]}): fewest taps"
    progress.report(0.0, text)
    try:
        found = search(spec, fs_hz,
                       max_taps=p.get("max_taps") or fir.DEFAULT_MAX_TAPS,
                       progress=progress.reporter(text), cancel=progress.cancelled)
    except fir.DesignCancelled as e:
        raise FirDesignCancelled(e.message, field=e.field) from None
    except SpecNotMetError as e:
        raise FirSpecNotMetError(e.message + "; raise max_taps or loosen the spec",
                                 field=e.field) from None
    return found.taps


def _fixed(p: Mapping[str, Any], kind: str, fs_hz: float, spec: fir.FirSpec) -> np.ndarray:
    """A remez/lsq design at the given length, refused unless it meets the spec."""
    n, method = p["taps"], p["method"]
    what = "equiripple (remez)" if method == "remez" else "least squares (firls)"
    try:
        if method == "remez":
            h = fir.equiripple_fir(spec, fs_hz, n)
        else:
            h = _least_squares(spec, fs_hz, n)
    except CrossplanError:
        raise
    except ValueError as e:   # scipy's remez: no convergence
        raise _not_met(f"{spec.describe()}: {what} did not converge at {n} taps ({e}); "
                       "omit taps to search the fewest that meet the spec") from None
    ripple, atten = fir.measure_spec(h, spec, fs_hz)
    if ripple <= spec.ripple_db and atten >= spec.atten_db:
        return h
    est = fir.estimate_taps(spec, fs_hz)
    if est > n:
        need = f"about {est} taps would be needed (Kaiser 1974 estimate)"
    else:
        need = (f"the Kaiser 1974 estimate for an equiripple design is {est} taps, "
                f"but {what} needs more")
    raise _not_met(f"{spec.describe()} not met by {what} at {n} taps, {fs_hz:g} Hz: reached "
                   f"ripple {ripple:.3g} dB and attenuation {atten:.3g} dB; {need}; omit taps "
                   "to search the fewest that meet the spec")


def _least_squares(spec: fir.FirSpec, fs_hz: float, n: int) -> np.ndarray:
    # The weights of the spec (delta_p / delta_s on the stop band), as in
    # fir.min_taps_least_squares; the transition lies between the edges.
    r = 10.0 ** (spec.ripple_db / 20.0)
    dp, ds = (r - 1.0) / (r + 1.0), 10.0 ** (-spec.atten_db / 20.0)
    if spec.kind == "bandpass":
        (p1, p2), (s1, s2) = spec.pass_hz, spec.stop_hz
        tw = p1 - s1
        return fir.least_squares_fir("bandpass", (p1 + s1) / 2, fs_hz, n, tw,
                                     freq2_hz=(p2 + s2) / 2, stop_weight=dp / ds)
    lo, hi = sorted((spec.pass_hz, spec.stop_hz))
    return fir.least_squares_fir(spec.kind, (lo + hi) / 2, fs_hz, n, hi - lo,
                                 stop_weight=dp / ds)


def _kaiser_sized(p: Mapping[str, Any], kind: str, fs_hz: float) -> np.ndarray:
    """Kaiser window sized by Kaiser 1974, lengthened by 2 taps at a time until it meets atten_db.

    Kaiser's length formula is an estimate (within a couple of taps, Oppenheim
    and Schafer sec. 7.6.1), so the design is measured and, where it falls
    short, lengthened; it is refused beyond ``max_taps``.
    """
    atten, tw = p["atten_db"], p["transition_hz"]
    beta = fir.kaiser_beta(atten)
    n = fir.kaiser_taps(atten, tw, fs_hz)
    max_taps = p.get("max_taps") or fir.DEFAULT_MAX_TAPS
    spec = _kaiser_spec(p, kind)
    reached = None
    while n <= max_taps:
        h = fir.window_fir(kind, p["freq"], fs_hz, n, window="kaiser", beta=beta,
                           freq2_hz=p.get("freq2"))
        reached = fir.measure_spec(h, spec, fs_hz)[1]
        if reached >= atten:
            return h
        n += 2
    first = fir.kaiser_taps(atten, tw, fs_hz)
    last = (f"reached attenuation {reached:.3g} dB at {n - 2} taps" if reached is not None
            else f"Kaiser's formula gives {first} taps")
    raise _not_met(f"{spec.kind} Kaiser window for {atten:g} dB over {tw:g} Hz at {fs_hz:g} Hz "
                   f"needs more than max_taps {max_taps}: {last}; about {first} taps would be "
                   "needed (Kaiser 1974)")


def _design_band(kind: str):
    def design(p: Mapping[str, Any], fs_hz: float) -> FilterDesign:
        method = p["method"]
        if method == "window":
            if p.get("taps") is None:
                h = _kaiser_sized(p, kind, fs_hz)
            else:
                win = p.get("window") or DEFAULT_WINDOW
                beta = p.get("beta")
                if win == "kaiser" and beta is None:
                    beta = fir.kaiser_beta(p["atten_db"])
                h = fir.window_fir(kind, p["freq"], fs_hz, p["taps"],
                                   window=_DSP_WINDOW.get(win, win), beta=beta,
                                   freq2_hz=p.get("freq2"))
        else:
            spec = spec_of(p, kind, fs_hz)
            h = _fixed(p, kind, fs_hz, spec) if p.get("taps") is not None \
                else _search(p, kind, fs_hz, spec)
        return FilterDesign(np.zeros((0, 6)), np.asarray(h, dtype=float))
    return design


# ---------------------------------------------------------------------------
# labels


def _head(p: Mapping[str, Any], kind: str) -> str:
    where = (f"{format_hz(p['freq'])} - {format_hz(p['freq2'])}" if kind == "bandpass"
             else format_hz(p["freq"]))
    return f"FIR {kind} {where}"


def _label_band(kind: str):
    def label(p: Mapping[str, Any]) -> str:
        head, method = _head(p, kind), p.get("method", "window")
        if method == "window":
            if p.get("taps") is None:
                return (f"{head}, Kaiser window for {p.get('atten_db', 0):g} dB over "
                        f"{format_hz(p.get('transition_hz', 0))}")
            return f"{head}, {p['taps']} taps ({p.get('window') or DEFAULT_WINDOW} window)"
        if p.get("taps") is not None:
            return f"{head}, {p['taps']} taps ({method})"
        atten = p.get("atten_db") if p.get("atten_db") is not None else DEFAULT_ATTEN_DB
        ripple = p.get("ripple_db") if p.get("ripple_db") is not None else DEFAULT_RIPPLE_DB
        return f"{head}, fewest taps for {atten:g} dB / {ripple:g} dB ({method})"
    return label


# ---------------------------------------------------------------------------
# complementary split bands


def split_signature(p: Mapping[str, Any]) -> tuple:
    """What every band of one complementary split must share (all but ``band``)."""
    return (tuple(p["crossovers"]), p["taps"], p.get("method", "window"),
            (p.get("window") or DEFAULT_WINDOW) if p.get("method", "window") == "window"
            else None, p.get("beta"), p.get("atten_db"), p.get("transition_hz"))


def describe_split(p: Mapping[str, Any]) -> str:
    """``"crossovers 300 Hz, 2.8 kHz, 1023 taps, hann window"`` (for warnings)."""
    xo = ", ".join(format_hz(f) for f in p["crossovers"])
    method = p.get("method", "window")
    how = (f"{p.get('window') or DEFAULT_WINDOW} window" if method == "window" else method)
    extra = ""
    if p.get("transition_hz") is not None:
        extra = f", transition {format_hz(p['transition_hz'])}"
    if p.get("beta") is not None:
        extra += f", beta {p['beta']:g}"
    if p.get("atten_db") is not None:
        extra += f", {p['atten_db']:g} dB"
    return f"crossovers {xo}, {p['taps']} taps, {how}{extra}"


def _check_split(p: Mapping[str, Any], fs_hz: float) -> None:
    xo, nyq = p["crossovers"], fs_hz / 2
    for i, f in enumerate(xo):
        if not 0 < f < nyq:
            raise ProjectError(f"{f:g} Hz must be above 0 Hz and below Nyquist ({nyq:g} Hz) "
                               f"for sample_rate {fs_hz:g}", field=f"crossovers[{i}]")
        if i and not f > xo[i - 1]:
            raise ProjectError(f"{f:g} Hz must be above crossovers[{i - 1}] ({xo[i - 1]:g} Hz): "
                               "the crossovers must increase", field=f"crossovers[{i}]")
    if p["band"] > len(xo):
        raise ProjectError(f"{p['band']} is beyond the last band: {len(xo)} crossover(s) make "
                           f"bands 0 .. {len(xo)}", field="band")
    _odd_taps(p["taps"], "a complementary split (its bands are lowpass differences and a "
                         "delayed impulse at (taps-1)/2)")
    method = p["method"]
    _within_limit(p, method, "taps")
    if method == "window":
        _refuse(p, ("transition_hz",), "the window split is set by taps and window; "
                "transition_hz applies to the remez and lsq splits")
        win = p.get("window") or DEFAULT_WINDOW
        _check_window_shape(p, win)
        return
    _refuse(p, ("window", "beta", "atten_db"), f"the {method} split takes no window")
    if p.get("transition_hz") is None:
        raise ProjectError(f"missing; a {method} split needs transition_hz (Hz), the width "
                           "of each transition centred on its crossover", field="transition_hz")
    tw = p["transition_hz"]
    if not (xo[0] - tw / 2 > 0 and xo[-1] + tw / 2 < nyq):
        raise ProjectError(f"{tw:g} Hz centred on the outer crossovers puts a band edge outside "
                           f"0 .. {nyq:g} Hz (Nyquist)", field="transition_hz")
    for i in range(1, len(xo)):
        if xo[i] - xo[i - 1] <= tw:
            raise ProjectError(f"{tw:g} Hz is wider than the gap between crossovers {xo[i - 1]:g} "
                               f"and {xo[i]:g} Hz", field="transition_hz")


@lru_cache(maxsize=64)
def _split_bands(crossovers: tuple, fs_hz: float, taps: int, method: str, window: str,
                 beta: float | None, transition_hz: float | None) -> tuple:
    bands = fir.complementary_split(list(crossovers), fs_hz, taps, design=_SPLIT_DESIGN[method],
                                    window=_DSP_WINDOW.get(window, window), beta=beta,
                                    transition_hz=transition_hz)
    for b in bands:
        b.setflags(write=False)
    return tuple(bands)


def _design_split(p: Mapping[str, Any], fs_hz: float) -> FilterDesign:
    win = p.get("window") or DEFAULT_WINDOW
    beta = p.get("beta")
    if p["method"] == "window" and win == "kaiser" and beta is None:
        beta = fir.kaiser_beta(p["atten_db"])
    bands = _split_bands(tuple(p["crossovers"]), float(fs_hz), p["taps"], p["method"], win,
                         beta, p.get("transition_hz"))
    return FilterDesign(np.zeros((0, 6)), np.array(bands[p["band"]]))


def _label_split(p: Mapping[str, Any]) -> str:
    xo = ", ".join(format_hz(f) for f in p["crossovers"])
    method = p.get("method", "window")
    how = f"{p.get('window') or DEFAULT_WINDOW} window" if method == "window" else method
    return (f"FIR split band {p['band']} of 0-{len(p['crossovers'])} at {xo}, "
            f"{p['taps']} taps ({how})")


# ---------------------------------------------------------------------------
# rules across filters: method changes, the bands of one split


#: FIR fields that only one kind of method takes.
WINDOW_ONLY = ("window", "beta")
SPEC_ONLY = ("ripple_db", "pass_hz", "stop_hz", "max_taps")


def prepare_edit(raw: dict, key: str, value: Any, given: set) -> None:
    """An FIR's method changes: drop the fields the new method refuses (unless given now).

    A window design takes ``window``/``beta`` and no ripple or explicit edges;
    remez and lsq the reverse. ``transition_hz`` and ``atten_db`` serve both
    (a Kaiser window is sized from them), so they stay.
    """
    if key != "method" or raw.get("method", "window") == value:
        return
    for k in (SPEC_ONLY if value == "window" else WINDOW_ONLY):
        if k not in given:
            raw.pop(k, None)


def same_split(a: Mapping[str, Any], b: Mapping[str, Any]) -> bool:
    """Whether two split filters are bands of one split (all but ``band`` equal)."""
    return split_signature(a) == split_signature(b)


def split_warnings(found: list) -> list[KindWarning]:
    """Complementary FIR split bands of the active bands that do not add up to a pure delay.

    All of them must share crossovers, taps and method, and each band index
    of the split must be there exactly once. ``found``: (band index, band
    name, filter index, params) of every live split filter of an active band.
    """
    if not found:
        return []
    out = []
    i0, name0, j0, p0 = found[0]
    sig0 = split_signature(p0)
    for i, name, j, p in found[1:]:
        if split_signature(p) != sig0:
            out.append(KindWarning(
                f"band {name}, filter {j + 1}: its FIR split ({describe_split(p)}) differs "
                f"from that of band {name0}, filter {j0 + 1} ({describe_split(p0)}): the bands "
                "no longer sum to a pure delay; give every split filter the same crossovers, "
                "taps and method", band=i, filter=j, code="split-mismatch"))
    if out:
        return out
    n_bands = len(p0["crossovers"]) + 1
    where: dict[int, list[tuple[int, str]]] = {}
    for i, name, j, p in found:
        where.setdefault(p["band"], []).append((i, name))
    for k in range(n_bands):
        names = [name for _, name in where.get(k, [])]
        if not names:
            out.append(KindWarning(
                f"split band {k} (of 0-{n_bands - 1}) is in no active band: the sum lacks it "
                "and is not a pure delay", code="split-missing"))
        elif len(names) > 1:
            out.append(KindWarning(
                f"split band {k} is in {len(names)} active bands ({', '.join(names)}): it is "
                "summed twice and the sum is not a pure delay", band=where[k][1][0],
                code="split-doubled"))
    return out


# ---------------------------------------------------------------------------
# registration


def _band_kind(kind: str) -> FilterKind:
    # pass_hz and stop_hz are fields of the bandpass too, so that giving them
    # there is refused with a reason rather than kept as an unknown key.
    fields = [_FREQ] + ([_FREQ2] if kind == "bandpass" else []) + [
        _METHOD, _TAPS, _WINDOW, _BETA, _TRANSITION, _PASS, _STOP, _RIPPLE, _ATTEN, _MAX_TAPS]
    return FilterKind(kind, "fir", f"FIR {kind}", tuple(fields), _design_band(kind),
                      _label_band(kind), check=_check_band(kind), prepare_edit=prepare_edit)


KINDS = tuple(register(_band_kind(k)) for k in ("lowpass", "highpass", "bandpass")) + (
    register(FilterKind(
        "split", "fir", "band of a complementary FIR split",
        (_CROSSOVERS, _BAND, _SPLIT_TAPS, _METHOD, _WINDOW, _BETA, _ATTEN, _TRANSITION),
        _design_split, _label_split, check=_check_split, shares_design=same_split,
        prepare_edit=prepare_edit, project_warnings=split_warnings)),
)
