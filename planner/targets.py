"""Target curves for the solvers: flat, a tilt, a low shelf for room gain, or a text file.

A target is a level in dB as a function of frequency in Hz. Written on the
command line as

``flat``
    0 dB everywhere.
``tilt:DB`` (e.g. ``tilt:-0.8``)
    ``DB`` per octave about 1 kHz: ``DB * log2(f / 1000)``.
``shelf:DB@HZ`` (e.g. ``shelf:4@120``)
    A low shelf for room gain: ``DB`` below ``HZ``, 0 dB above, with the
    second-order shelf's transition (the analog prototype of the Audio EQ
    Cookbook low shelf with shelf slope S = 1 [1]_, its midpoint at ``HZ``).
``tilt:DB+shelf:DB@HZ``
    Both, their levels added.
a file name
    Plain text, one ``freq_hz level_db`` pair per line (the layout
    :func:`planner.dsp.response_text.parse_response_text` reads; a third
    column is ignored), interpolated linearly on log frequency and held
    flat beyond its first and last points.

References
----------
.. [1] R. Bristow-Johnson, "Audio EQ Cookbook", W3C Working Group Note,
   2021 (the shelving filter and its slope parameter S).
"""

from __future__ import annotations

import os
import re
from dataclasses import dataclass
from pathlib import Path
from typing import Callable

import numpy as np

from planner.dsp.response_text import parse_response_text
from planner.errors import CrossplanError, ProjectError

__all__ = ["Target", "parse_target", "project_target", "BUILT_IN"]

#: The built-in target forms, for help texts.
BUILT_IN = ("flat", "tilt:DB_PER_OCTAVE", "shelf:DB@HZ", "tilt:DB+shelf:DB@HZ")

_NUM = r"([+-]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?)"
_TILT = re.compile(rf"tilt:{_NUM}$")
_SHELF = re.compile(rf"shelf:{_NUM}@{_NUM}(?:hz|Hz)?$")


@dataclass(frozen=True)
class Target:
    """A target curve: its name as written and its level function."""

    name: str
    level_db: Callable[[np.ndarray], np.ndarray]

    def __call__(self, freqs_hz) -> np.ndarray:
        return np.asarray(self.level_db(np.asarray(freqs_hz, dtype=float)), dtype=float)


def _tilt(db_per_oct: float):
    return lambda f: db_per_oct * np.log2(f / 1000.0)


def _shelf(gain_db: float, freq_hz: float):
    """The analog low shelf ``H(s) = A (s^2 + sqrt(A)/Q s + A) / (A s^2 + sqrt(A)/Q s + 1)``,
    S = 1 (Q = 1/sqrt(2)), at ``s = j f / freq_hz`` ([1]_)."""
    a = 10.0 ** (gain_db / 40.0)
    k = np.sqrt(a) * np.sqrt(2.0)

    def level(f):
        s = 1j * f / freq_hz
        h = a * (s * s + k * s + a) / (a * s * s + k * s + 1)
        return 20.0 * np.log10(np.abs(h))
    return level


def _file(path: str, base_dir: str | os.PathLike | None):
    p = Path(path)
    full = p if p.is_absolute() or base_dir is None else Path(base_dir) / p
    try:
        text = full.read_text(encoding="utf-8")
    except FileNotFoundError:
        raise ProjectError(f"no such file, and not one of {', '.join(BUILT_IN)}: {path!r}",
                           field="target") from None
    except (OSError, UnicodeDecodeError) as e:
        raise ProjectError(f"cannot read {path!r}: {e}", field="target") from None
    try:
        r = parse_response_text(text)
    except CrossplanError as e:
        raise ProjectError(f"{path}: {e.field + ': ' if e.field else ''}{e.message}",
                           field="target") from None
    lf, lv = np.log(r.freqs_hz), np.array(r.mag_db, dtype=float)
    if len(lf) < 2:
        raise ProjectError(f"{path}: a target needs at least 2 lines, it has {len(lf)}",
                           field="target")
    return lambda f: np.interp(np.log(f), lf, lv)


def project_target(project) -> Target:
    """The target a project's sum is checked against: its ``analysis.target`` (read beside
    the project file), or flat when it has none. The solvers follow it unless told
    otherwise, so that what they make passes the project's own check.

    Raises
    ------
    ProjectError
        ``field='analysis.target'``: the curve cannot be read (a file gone since loading).
    """
    t = project.analysis.target
    if t is None:
        return parse_target("flat")
    try:
        return parse_target(t, project.source_dir)
    except CrossplanError as e:
        raise e.at("analysis") from None


def parse_target(text: str, base_dir: str | os.PathLike | None = None) -> Target:
    """A :class:`Target` from its written form (module notes).

    Raises
    ------
    ProjectError
        ``field='target'``: an unknown form, bad numbers, or a file that is
        missing or not a response.
    """
    t = str(text).strip()
    if t.lower() == "flat":
        return Target("flat", lambda f: np.zeros(np.shape(f)))
    parts = t.split("+shelf:") if t.startswith("tilt:") and "+shelf:" in t else [t]
    if len(parts) == 2:
        a, b = parse_target(parts[0]), parse_target("shelf:" + parts[1])
        return Target(t, lambda f: a(f) + b(f))
    m = _TILT.match(t)
    if m:
        v = float(m.group(1))
        if not abs(v) <= 6.0:
            raise ProjectError(f"a tilt must be within -6 .. 6 dB per octave, not {v:g}",
                               field="target")
        return Target(t, _tilt(v))
    m = _SHELF.match(t)
    if m:
        g, fc = float(m.group(1)), float(m.group(2))
        if not abs(g) <= 24.0:
            raise ProjectError(f"a shelf must be within -24 .. 24 dB, not {g:g}", field="target")
        if not 10.0 <= fc <= 20000.0:
            raise ProjectError(f"a shelf frequency must be within 10 .. 20000 Hz, not {fc:g}",
                               field="target")
        return Target(t, _shelf(g, fc))
    if t.startswith(("tilt:", "shelf:")):
        raise ProjectError(f"write tilt:DB_PER_OCTAVE or shelf:DB@HZ, not {t!r}", field="target")
    return Target(t, _file(t, base_dir))
