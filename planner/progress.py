"""Progress and cancellation of long designs, without I/O.

A long design (the minimum-tap FIR searches of :mod:`planner.filters.fir`)
reports how far it has got and asks whether to stop through the *current
scope*, which whoever runs the work sets up around it::

    from planner import progress

    with progress.scope(report=show, cancel=stop_requested):
        project = planner.project.load("speaker.json")   # designs happen here

``report(fraction, text)`` receives a fraction in [0, 1] and a short text
naming the design; ``cancel()`` returns True to stop it, and the design then
raises :class:`planner.errors.DesignCancelled` (a
:class:`~planner.errors.DesignError`).

The scope lives in a :class:`contextvars.ContextVar`, so it belongs to the
thread (or asyncio task) that set it: a worker thread of the terminal UI
sets its own scope inside the thread and the command line sets another in
the main thread, and neither sees the other. Scopes nest: an inner scope's
reports also reach the outer ones, and the work stops when any enclosing
scope asks to cancel. Outside every scope, :func:`report` does nothing and
:func:`cancelled` is False.

This module prints nothing; the terminal bar of the command line is in
:mod:`planner.cli.common`.
"""

from __future__ import annotations

import math
from contextlib import contextmanager
from contextvars import ContextVar
from dataclasses import dataclass
from typing import Callable, Iterator

__all__ = ["Scope", "scope", "report", "cancelled", "reporter", "active", "bar_text"]


@dataclass(frozen=True)
class Scope:
    """One level of progress reporting: the callables and the scope it sits in."""

    report: Callable[[float, str], None] | None = None
    cancel: Callable[[], bool] | None = None
    parent: "Scope | None" = None


_CURRENT: ContextVar[Scope | None] = ContextVar("crossplan_progress_scope", default=None)


@contextmanager
def scope(report: Callable[[float, str], None] | None = None,
          cancel: Callable[[], bool] | None = None) -> Iterator[Scope]:
    """Set a progress scope for the work done inside the ``with`` block.

    Parameters
    ----------
    report : callable ``(fraction, text) -> None``, optional
        Called by long designs with a fraction in [0, 1] (non-decreasing
        within one design, 1.0 at its end) and a text such as
        ``"FIR lowpass 2.2 kHz (remez): searching the tap count"``.
    cancel : callable ``() -> bool``, optional
        Asked before each trial design; True stops the design with
        :class:`planner.errors.DesignCancelled`.

    Yields
    ------
    Scope
    """
    s = Scope(report, cancel, _CURRENT.get())
    token = _CURRENT.set(s)
    try:
        yield s
    finally:
        _CURRENT.reset(token)


def active() -> bool:
    """True inside at least one scope of the current thread or task."""
    return _CURRENT.get() is not None


def report(fraction: float, text: str = "") -> None:
    """Pass ``fraction`` (clipped to [0, 1]) and ``text`` to every enclosing scope, innermost first."""
    f = float(fraction)
    f = 0.0 if math.isnan(f) else min(1.0, max(0.0, f))
    s = _CURRENT.get()
    while s is not None:
        if s.report is not None:
            s.report(f, text)
        s = s.parent


def cancelled() -> bool:
    """True when any enclosing scope's ``cancel`` returns True."""
    s = _CURRENT.get()
    while s is not None:
        if s.cancel is not None and s.cancel():
            return True
        s = s.parent
    return False


def reporter(text: str) -> Callable[[float], None]:
    """A one-argument ``progress(fraction)`` callback that reports with ``text``.

    This is the form :func:`planner.dsp.fir.min_taps_equiripple` and
    :func:`planner.dsp.fir.min_taps_least_squares` take.
    """
    def _progress(fraction: float) -> None:
        report(fraction, text)

    return _progress


def bar_text(fraction: float, text: str = "", cells: int = 20) -> str:
    """``"[##########----------]  50% text"``: a text bar for a terminal or a status line."""
    f = min(max(float(fraction), 0.0), 1.0)
    full = int(round(f * cells))
    return f"[{'#' * full}{'-' * (cells - full)}] {f * 100:3.0f}% {text}"
