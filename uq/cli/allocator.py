"""Allocator settings of the command-line process (glibc only; elsewhere nothing is done).

The transit model and the estimators allocate and free many temporaries of 0.1-5 MiB. With
glibc's defaults such a block is mapped fresh from the kernel and handed back when freed, so
every use of it page-faults again; in the default glider assessment that cost as much as a
third of the model's time and made SALib's bootstrap 4x slower, depending only on what ran
before (benchmarks/README.md, 2026-12-03). Raising the mmap threshold to 32 MiB and the trim
threshold to 128 MiB keeps those blocks in the heap for reuse. Results are unchanged (only
where memory comes from); the peak RSS of the default glider assessment measured 297 MiB
with the settings and 305 MiB without. Set here for the command line only: a library should
not change its host process's allocator; API users can export MALLOC_MMAP_THRESHOLD_ and
MALLOC_TRIM_THRESHOLD_ (the same glibc settings) before starting Python.
"""
from __future__ import annotations

import ctypes
import ctypes.util
import os

__all__ = ["keep_blocks_in_heap"]

_M_TRIM_THRESHOLD = -1  # glibc <malloc.h>
_M_MMAP_THRESHOLD = -3
MMAP_THRESHOLD = 32 * 2**20  # [bytes]
TRIM_THRESHOLD = 128 * 2**20  # [bytes]


def keep_blocks_in_heap() -> bool:
    """Apply the thresholds with ``mallopt``; False where glibc is not the allocator or the
    user already set them in the environment (theirs are kept)."""
    if any(k in os.environ for k in ("MALLOC_MMAP_THRESHOLD_", "MALLOC_TRIM_THRESHOLD_")):
        return False
    name = ctypes.util.find_library("c")
    if not name:
        return False
    try:
        libc = ctypes.CDLL(name)
        mallopt = libc.mallopt
    except (OSError, AttributeError):  # not glibc (macOS, Windows, musl without mallopt)
        return False
    mallopt.argtypes = (ctypes.c_int, ctypes.c_int)
    mallopt.restype = ctypes.c_int
    return bool(mallopt(_M_MMAP_THRESHOLD, MMAP_THRESHOLD)) and bool(
        mallopt(_M_TRIM_THRESHOLD, TRIM_THRESHOLD))
