"""How the process gets memory for its arrays: freed blocks kept for the next ones (glibc).

An analysis makes and frees arrays of 0.1-10 MB many times a second (a keypress in the
editor, a block of a render). glibc's allocator serves a block that large from pages of
its own (``mmap``) and gives them back when it is freed, or gives back the free top of its
heap once that exceeds its trim threshold. Both thresholds move with what the process
allocated before, and in the state where they are low, every new array of that size
starts on fresh pages, which the kernel zeroes the first time each is touched. Measured
here (4 bands x 12 sections, 4128 points): the band responses with their derivative took
a median 3.2-8.7 ms with 800-2600 fresh pages per call in that state, against 1.9-2.6 ms
with none once the thresholds were fixed (figures in DEVELOPERS.md).
:func:`keep_freed_memory` fixes them (``mallopt``): blocks up to
:data:`MMAP_THRESHOLD_BYTES` come from the heap, and freed memory stays with the process
until more than :data:`TRIM_THRESHOLD_BYTES` of it is free at the heap's top.

The cost is resident memory: up to :data:`TRIM_THRESHOLD_BYTES` freed and kept after a
peak. This module imports neither numpy nor anything of crossplan.
"""

from __future__ import annotations

import ctypes
import os
import sys

__all__ = ["keep_freed_memory", "MMAP_THRESHOLD_BYTES", "TRIM_THRESHOLD_BYTES"]

#: Blocks up to this size come from the heap, not from pages of their own (bytes; glibc's
#: largest dynamic threshold on 64-bit systems).
MMAP_THRESHOLD_BYTES = 32 << 20
#: Free memory at the heap's top is given back only beyond this (bytes).
TRIM_THRESHOLD_BYTES = 128 << 20

# glibc's mallopt parameters (malloc.h).
_M_TRIM_THRESHOLD, _M_MMAP_THRESHOLD = -1, -3

#: Set by a user to choose the allocator's behaviour; crossplan then leaves it alone.
_USER_SETTINGS = ("MALLOC_MMAP_THRESHOLD_", "MALLOC_TRIM_THRESHOLD_", "MALLOC_TOP_PAD_")


def keep_freed_memory() -> bool:
    """Set glibc's allocator thresholds (module notes); True when they were set.

    Nothing is done (False) off Linux, where the C library has no ``mallopt`` or it refuses
    (musl's does), or when the user set the allocator's own environment variables
    (``MALLOC_MMAP_THRESHOLD_``, ``MALLOC_TRIM_THRESHOLD_``, ``MALLOC_TOP_PAD_``, or a
    ``glibc.malloc`` tunable in ``GLIBC_TUNABLES``).
    """
    if not sys.platform.startswith("linux"):
        return False
    if any(v in os.environ for v in _USER_SETTINGS) or \
            "glibc.malloc." in os.environ.get("GLIBC_TUNABLES", ""):
        return False
    try:
        mallopt = ctypes.CDLL(None).mallopt      # the C library the process runs on
    except (OSError, AttributeError):
        return False
    mallopt.argtypes = (ctypes.c_int, ctypes.c_int)
    mallopt.restype = ctypes.c_int
    # mallopt returns 1 on success; both are asked for (a refusal of one does not skip the
    # other).
    ok_mmap = mallopt(_M_MMAP_THRESHOLD, MMAP_THRESHOLD_BYTES) == 1
    ok_trim = mallopt(_M_TRIM_THRESHOLD, TRIM_THRESHOLD_BYTES) == 1
    return ok_mmap and ok_trim
