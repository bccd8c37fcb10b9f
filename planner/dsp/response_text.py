"""A frequency response as plain text: one line per frequency, read tolerantly.

The layout is the common plain-text measurement one: one line per frequency,
``freq_hz  mag_db  [phase_deg]``, with ``*`` comment lines. Text in, text out:
reading and writing files is the caller's.

References
----------
.. [1] The common plain-text frequency-response layout (frequency, magnitude,
   phase columns; comment lines) used for measurement exchange: common
   practice, no published standard.
"""

from __future__ import annotations

import io
import re
import warnings
from dataclasses import dataclass

import numpy as np

from planner.errors import CrossplanError

__all__ = ["Response", "format_response_text", "parse_response_text"]


@dataclass
class Response:
    """A frequency response read from text.

    Attributes
    ----------
    freqs_hz, mag_db : ndarray
    phase_deg : ndarray or None
        None when the text had no phase column.
    header : list of str
        Comment lines, without the comment mark.
    """

    freqs_hz: np.ndarray
    mag_db: np.ndarray
    phase_deg: np.ndarray | None
    header: list


def format_response_text(freqs_hz, mag_db, phase_deg=None, header_lines=()) -> str:
    """Write a response as plain text, one frequency per line.

    Header lines come first, each as ``# text`` (``#`` opens a comment in most
    plain-text data readers; :func:`parse_response_text` also reads ``*``,
    ``;`` and ``//`` comments of files from elsewhere); then lines
    ``freq_hz  mag_db  phase_deg`` (phase omitted if None), frequency with
    8 significant digits, magnitude to 0.0001 dB, phase to 0.001 deg.

    Parameters
    ----------
    freqs_hz, mag_db : array_like, same length
    phase_deg : array_like, optional
    header_lines : sequence of str
        Comment lines (a line with a newline is split into several).

    Returns
    -------
    str
        Ending with a newline.

    References
    ----------
    .. [1] The common plain-text frequency-response layout (frequency,
       magnitude, phase columns; comment lines) used for measurement
       exchange: common practice, no published standard.
    """
    f = np.asarray(freqs_hz, dtype=float)
    m = np.asarray(mag_db, dtype=float)
    p = None if phase_deg is None else np.asarray(phase_deg, dtype=float)
    if f.ndim != 1 or m.shape != f.shape or (p is not None and p.shape != f.shape):
        raise CrossplanError(
            f"freqs_hz, mag_db and phase_deg must be 1-D of one length, not {f.shape}, "
            f"{m.shape}, {None if p is None else p.shape}", field="mag_db")
    cols = [f, m] if p is None else [f, m, p]
    if not all(np.all(np.isfinite(c)) for c in cols):
        raise CrossplanError("values must be finite numbers, found nan or inf", field="mag_db")
    lines = [f"# {s}".rstrip() for h in header_lines for s in str(h).splitlines() or [""]]
    # Column-wise (vectorised) formatting, joined into rows.
    rows = np.char.add(np.char.mod("%.8g", f), np.char.add("  ", np.char.mod("%.4f", m)))
    if p is not None:
        rows = np.char.add(rows, np.char.add("  ", np.char.mod("%.3f", p)))
    return "\n".join(lines + rows.tolist()) + "\n"


_SPLIT = re.compile(r"[,;\t ]+")
_COMMENT = ("*", "#", ";", "//")


def _comment_or_line(raw: str) -> tuple[str | None, str]:
    """(the comment's text, "") for a comment line, (None, the stripped line) otherwise
    (empty for a blank line); the rules both readers share."""
    line = raw.strip().lstrip("\ufeff")
    mark = next((c for c in _COMMENT if line.startswith(c)), None)
    return (line[len(mark):].strip(), "") if mark else (None, line)


def _fast_parse(text: str) -> Response | None:
    """The common case at array speed, or None to leave the text to the line-by-line reader.

    Comment, blank and at most one title line before the data, then only data lines (blank
    lines at the end) with 2 or 3 columns each, the same on every line, in ASCII; numbers
    parsed at once (``numpy.loadtxt``) and checked as arrays. Anything else, or any value
    the rules refuse, gives None, so that :func:`parse_response_text` names the line and
    the rule.
    """
    lines = text.splitlines()
    header, title, start = [], False, None
    for i, raw in enumerate(lines):
        comment, line = _comment_or_line(raw)
        if comment is not None:
            header.append(comment)
            continue
        if not line:
            continue
        try:
            [float(t) for t in _SPLIT.split(line)[:3] if t]
            numbers = True
        except ValueError:
            numbers = False
        if not numbers:
            if title:
                return None
            title = True
            header.append(line)
            continue
        start = i
        break
    if start is None:
        return None
    data = lines[start:]
    while data and not data[-1].strip():     # blank lines at the end, as the line reader
        data.pop()                           # sees them (a lone "," is not blank)
    body = "\n".join(data).replace(",", " ").replace(";", " ").replace("\t", " ")
    # Only ASCII data, without the one white space numpy splits at and the line reader does
    # not (\x1f; the line ends splitlines knows are gone), is read here.
    if not body.isascii() or "\x1f" in body:
        return None
    # numpy.loadtxt (its C reader, given bytes: a quarter of the memory of text) parses
    # every number and refuses ragged rows and any token that is not a number.
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        try:
            a = np.loadtxt(io.BytesIO(body.encode("ascii")), dtype=float, comments=None,
                           ndmin=2, encoding="latin-1")
        except (ValueError, UserWarning):
            return None
    if a.shape[1] not in (2, 3) or a.shape[0] != len(data):
        return None
    ncol = a.shape[1]
    f = a[:, 0]
    if not np.all(np.isfinite(a)) or f[0] <= 0 or np.any(np.diff(f) <= 0):
        return None
    return Response(f.copy(), a[:, 1].copy(), a[:, 2].copy() if ncol == 3 else None, header)


def parse_response_text(text: str) -> Response:
    """Read a response written as text, tolerantly.

    Accepted: comment lines starting with ``*``, ``#``, ``;`` or ``//``;
    blank lines; one column-title line (non-numeric) before the data;
    columns split by commas, semicolons, tabs or spaces; 2 columns
    (frequency, magnitude) or 3 or more (frequency, magnitude, phase;
    further columns ignored), the same count on every line. Frequencies must
    be positive and strictly increasing.

    Parameters
    ----------
    text : str

    Returns
    -------
    Response

    Raises
    ------
    CrossplanError
        ``field='line N'`` naming the line, the rule and the bad text.

    References
    ----------
    .. [1] The common plain-text frequency-response layout: common practice,
       no published standard.
    """
    if not isinstance(text, str):
        raise CrossplanError(f"must be text, not {type(text).__name__}", field="text")
    fast = _fast_parse(text)
    if fast is not None:
        return fast
    header, rows, ncol, title_seen = [], [], None, False
    for no, raw in enumerate(text.splitlines(), start=1):
        comment, line = _comment_or_line(raw)
        if comment is not None:
            header.append(comment)
            continue
        if not line:
            continue
        tokens = [t for t in _SPLIT.split(line) if t]
        try:
            vals = [float(t) for t in tokens[:3]]
        except ValueError:
            if not rows and not title_seen:
                title_seen = True
                header.append(line)
                continue
            raise CrossplanError(f"expected numbers 'freq_hz mag_db [phase_deg]', got {raw!r}",
                                 field=f"line {no}") from None
        ncol = _check_row(vals, min(len(tokens), 3), ncol, rows[-1][0] if rows else None,
                          raw, no)
        rows.append(vals)
    if not rows:
        raise CrossplanError("no data lines 'freq_hz mag_db [phase_deg]' found", field="text")
    a = np.array(rows, dtype=float)
    return Response(a[:, 0], a[:, 1], a[:, 2] if ncol == 3 else None, header)


def _check_row(vals: list, n: int, ncol: int | None, f_prev: float | None, raw: str,
               no: int) -> int:
    """Check one data line's numbers (``n`` columns); the column count of the text."""
    if n < 2:
        raise CrossplanError(f"needs at least 2 columns (freq_hz mag_db), got {raw!r}",
                             field=f"line {no}")
    if ncol is None:
        ncol = n
    elif n != ncol:
        raise CrossplanError(f"has {n} columns where earlier lines have {ncol}: {raw!r}",
                             field=f"line {no}")
    if not all(np.isfinite(vals)):
        raise CrossplanError(f"values must be finite, got {raw!r}", field=f"line {no}")
    if vals[0] <= 0:
        raise CrossplanError(f"frequency {vals[0]:g} Hz must be above 0", field=f"line {no}")
    if f_prev is not None and vals[0] <= f_prev:
        raise CrossplanError(
            f"frequency {vals[0]:g} Hz must be above the previous line's {f_prev:g} Hz",
            field=f"line {no}")
    return ncol
