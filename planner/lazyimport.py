"""scipy's subpackages imported when first used, on a thread of their own.

``scipy.signal`` takes most of a command's start-up time (about half a second of the
0.6 s of ``crossplan check`` on the development machine), so the modules that need it
or another scipy subpackage ask for it here when they first use it, and a project whose
filters need none of them (Butterworth and Linkwitz-Riley crossovers, the EQ biquads)
is checked without it.

The import runs on a new thread, the caller waiting for it. CPython 3.11 keeps the frames
of Python calls in chunks of 16 kB that it maps when a call needs a new one and unmaps
when the call returns; scipy's import nests deeply, and reached from deep in a command's
call stack its depths can sit on a chunk's edge: one such import mapped and unmapped a
chunk about 49,400 times (strace) and took 0.3-0.4 s more. A new thread starts with a
frame stack of its own, so the import runs as shallow as a bare ``import scipy.signal``
wherever it is asked for. Imports nothing itself (the standard library only).
"""

from __future__ import annotations

import importlib
import sys
import threading
from types import ModuleType

__all__ = ["scipy_module"]

_LOCK = threading.Lock()


def scipy_module(name: str) -> ModuleType:
    """The scipy subpackage ``name`` (``"signal"``, ``"special"``, ``"optimize"``, ...),
    imported on first use on a thread of its own (module notes)."""
    full = f"scipy.{name}"
    mod = sys.modules.get(full)
    if mod is not None:
        return mod
    with _LOCK:
        if full not in sys.modules:
            failure: list[BaseException] = []

            def load() -> None:
                try:
                    importlib.import_module(full)
                except BaseException as e:      # handed to the caller below
                    failure.append(e)

            worker = threading.Thread(target=load, name=f"import {full}", daemon=True)
            worker.start()
            worker.join()
            if failure:
                raise failure[0]
    return importlib.import_module(full)
