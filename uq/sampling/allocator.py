"""Allocator settings of the processes that run the model: the command line's, and the worker
processes the tool starts itself (glibc only; elsewhere nothing is done).

The transit model and the estimators allocate and free many temporaries of 0.1-5 MiB. With
glibc's defaults such a block is mapped fresh from the kernel and handed back when freed, so
every use of it page-faults again; in the default glider assessment that cost as much as a
third of the model's time and made SALib's bootstrap 4x slower, depending only on what ran
before (benchmarks/README.md, 2026-12-03). Raising the mmap threshold to 32 MiB and the trim
threshold to 128 MiB keeps those blocks in the heap for reuse. Results are unchanged (only
where memory comes from); the peak RSS of the default glider assessment measured 297 MiB
with the settings and 305 MiB without. Set for the command line and for the processes the
tool owns (a process pool's workers, a local Dask cluster's, whose nanny otherwise exports
MALLOC_TRIM_THRESHOLD_=65536: its workers ran the model 2.1x slower than one plain process,
benchmarks/README.md). A library should not change its host process's allocator: API users
can export MALLOC_MMAP_THRESHOLD_ and MALLOC_TRIM_THRESHOLD_ (the same glibc settings) before
starting Python, and so can the workers of a cluster they start themselves.
"""
from __future__ import annotations

import ctypes
import ctypes.util
import os

__all__ = ["keep_blocks_in_heap", "worker_environment"]

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


def worker_environment() -> dict[str, str]:
    """The same thresholds as environment variables for a worker process about to start
    (glibc reads them at start-up); the user's own values where they set them."""
    return {"MALLOC_MMAP_THRESHOLD_": os.environ.get("MALLOC_MMAP_THRESHOLD_",
                                                     str(MMAP_THRESHOLD)),
            "MALLOC_TRIM_THRESHOLD_": os.environ.get("MALLOC_TRIM_THRESHOLD_",
                                                     str(TRIM_THRESHOLD))}
