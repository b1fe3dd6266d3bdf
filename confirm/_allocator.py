"""The C heap's thresholds for the analysis (glibc only; private helper).

The fit allocates and frees many arrays of a few MB. With glibc's default thresholds each one
is a fresh memory map, and the page faults cost about a fifth of an analysis; a Dask worker
starts with an even lower trim threshold (``MALLOC_TRIM_THRESHOLD_=65536``, which more than
doubles the time of an analysis there). :func:`tune_allocator` keeps such arrays in the heap.
The command line calls it at start-up, a Dask worker before each batch item.
"""

from __future__ import annotations

import ctypes
import ctypes.util
import sys

__all__ = ["tune_allocator"]

#: mallopt parameter numbers (malloc.h) and the values set.
_M_TRIM_THRESHOLD, _M_MMAP_THRESHOLD = -1, -3
_TRIM_THRESHOLD_BYTES = 512 * 1024 * 1024
_MMAP_THRESHOLD_BYTES = 256 * 1024 * 1024


def tune_allocator() -> None:
    """Keep large temporary arrays in the heap instead of fresh memory maps (glibc only).

    Elsewhere (or if the call fails) nothing changes.
    """
    if not sys.platform.startswith("linux"):
        return
    try:
        libc = ctypes.CDLL(ctypes.util.find_library("c") or "libc.so.6")
        libc.mallopt(_M_MMAP_THRESHOLD, _MMAP_THRESHOLD_BYTES)
        libc.mallopt(_M_TRIM_THRESHOLD, _TRIM_THRESHOLD_BYTES)
    except (OSError, AttributeError):
        return
