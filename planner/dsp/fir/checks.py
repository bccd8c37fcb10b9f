"""Argument checks shared by the FIR designs: each returns the clean value or raises.

Every error is a :class:`planner.errors.DesignError` whose field is the
argument's name in the project (``"sample_rate"``, ``"freq"``, ``"type"``,
``"taps"``, ``"atten_db"``, ...), and whose message gives the rule and the bad
value.
"""

from __future__ import annotations

import math

import numpy as np

from planner import config
from planner.errors import DesignError

__all__ = ["KINDS", "METHOD_NAMES", "check_method_taps", "check_fs", "check_freq", "check_upper_edge", "check_kind", "check_taps",
           "check_atten", "check_positive"]

#: Filter kinds accepted by the designs.
KINDS = ("lowpass", "highpass", "bandpass")


def check_fs(fs_hz) -> float:
    """The sample rate in Hz as a float: positive and finite (field ``sample_rate``)."""
    try:
        fs = float(fs_hz)
    except (TypeError, ValueError):
        fs = float("nan")
    if not (fs > 0 and math.isfinite(fs)):
        raise DesignError(f"must be a positive number of Hz, not {fs_hz!r}", field="sample_rate")
    return fs


def check_freq(freq_hz, fs: float, field: str) -> float:
    """A frequency in Hz strictly between 0 Hz and Nyquist (``fs / 2``)."""
    try:
        f = float(freq_hz)
    except (TypeError, ValueError):
        raise DesignError(f"must be a number of Hz, not {freq_hz!r}", field=field) from None
    if not (0.0 < f < fs / 2):
        raise DesignError(
            f"{f:g} Hz must be above 0 Hz and below Nyquist ({fs / 2:g} Hz) "
            f"for sample_rate {fs:g}", field=field)
    return f


def check_upper_edge(freq2_hz, fs: float) -> float:
    """The upper edge ``freq2`` of a bandpass in Hz: given, and inside (0, fs/2)."""
    if freq2_hz is None:
        raise DesignError("a bandpass needs its upper edge freq2, none given", field="freq2")
    return check_freq(freq2_hz, fs, "freq2")


def check_kind(kind) -> str:
    """One of :data:`KINDS` (field ``type``)."""
    if kind not in KINDS:
        raise DesignError(f"must be one of {', '.join(KINDS)}, not {kind!r}", field="type")
    return kind


def check_taps(taps, kind: str | None = None, odd: bool = False) -> int:
    """A whole number of taps, at least 3; odd when ``odd`` or for a highpass or bandpass.

    An even-length highpass or bandpass (type II linear phase) has a forced
    zero at Nyquist (Oppenheim and Schafer, "Discrete-Time Signal
    Processing", 3rd ed., sec. 5.7.3), hence type I (odd) for those.
    """
    if isinstance(taps, bool) or not isinstance(taps, (int, np.integer)):
        raise DesignError(f"must be a whole number of taps, not {taps!r}", field="taps")
    n = int(taps)
    if n < 3:
        raise DesignError(f"must be at least 3 taps, not {n}", field="taps")
    if (odd or kind in ("highpass", "bandpass")) and n % 2 == 0:
        what = f"a {kind}" if kind in ("highpass", "bandpass") else "this design"
        raise DesignError(
            f"must be odd for {what} (type I linear phase, whole-sample delay), not {n}",
            field="taps")
    return n


def check_atten(atten_db, minimum: float = 0.0) -> float:
    """A stop-band attenuation in dB above ``minimum`` (field ``atten_db``)."""
    try:
        a = float(atten_db)
    except (TypeError, ValueError):
        a = float("nan")
    if not (a > minimum and math.isfinite(a)):
        raise DesignError(f"must be a number of dB above {minimum:g}, not {atten_db!r}",
                          field="atten_db")
    return a


def check_positive(value, field: str, unit: str) -> float:
    """A positive finite number; the message names ``unit``."""
    try:
        v = float(value)
    except (TypeError, ValueError):
        v = float("nan")
    if not (v > 0 and math.isfinite(v)):
        raise DesignError(f"must be a positive number of {unit}, not {value!r}", field=field)
    return v


#: The project's name of each design method (``window``, ``remez``, ``lsq``) from the
#: names the dsp functions use; :data:`planner.config.FIR_MAX_TAPS` is keyed by it.
METHOD_NAMES = {"window": "window", "remez": "remez", "equiripple": "remez",
                "firls": "lsq", "lsq": "lsq", "least_squares": "lsq"}

_WHY = {"window": "longer windows are not needed by any audio crossover",
        "remez": "its time grows with the square of the length, about 10 s a design at 16383 "
                 "taps", "lsq": "a least-squares design solves an (N/2) x (N/2) system, "
                                "about 0.8 GB and 25 s at 8191 taps"}


def check_method_taps(method: str, taps: int, field: str = "taps") -> int:
    """``taps`` if ``method`` may design that many, else a DesignError naming the limit.

    The limits are :data:`planner.config.FIR_MAX_TAPS` (time and memory of one design).
    """
    name = METHOD_NAMES.get(method, method)
    limit = config.FIR_MAX_TAPS.get(name)
    if limit is not None and int(taps) > limit:
        others = ", ".join(f"{m} up to {n}" for m, n in config.FIR_MAX_TAPS.items()
                           if m != name and n > limit)
        hint = f"; use fewer taps, or another method ({others})" if others else \
            "; use fewer taps"
        raise DesignError(f"{int(taps)} taps is above the limit of {limit} taps for the {name} "
                          f"method: {_WHY[name]}{hint}", field=field)
    return int(taps)
