"""The C allocator's settings for the processes that audit chunks: large buffers stay in the heap.

A chunk makes and frees buffers of hundreds of kilobytes to megabytes (its JSON text, the batches' numpy
arrays, RDKit's joined molecules). With glibc's defaults, a freed buffer above the (adaptive) mmap
threshold is unmapped and the next one mapped afresh, and the top of the heap is given back to the system
as soon as 128 KiB lie free there, so the same memory is faulted in again page by page, chunk after chunk.
Measured on NCI first_5K (``--terms all``, 2 workers, the second of two runs): a process-pool worker had
45,000 to 105,000 minor page faults and 500 to 1,200 with the settings here, and used about 20% less CPU
time. Dask's nannies set ``MALLOC_TRIM_THRESHOLD_=65536`` in their workers' environment, which also turns
the adaptive threshold off: 230,000 to 300,000 faults per worker, 6,000 to 7,500 with these settings, about
10% less CPU time.

A worker's memory is bounded by its chunk, so keeping up to :data:`TRIM_THRESHOLD` of free heap costs
little; peak RSS is what the benchmark watches. Only processes ffaudit starts or runs as its command are
tuned (worker processes, a LocalCluster's workers, the ``ffaudit`` command itself), never a process that
imports ffaudit as a library.
"""

from __future__ import annotations

import ctypes
import ctypes.util
import platform

MMAP_THRESHOLD = 32 * 1024 * 1024
"""Buffers below this come from the heap (glibc's largest adaptive value, ``DEFAULT_MMAP_THRESHOLD_MAX``
on 64-bit systems)."""

TRIM_THRESHOLD = 128 * 1024 * 1024
"""Free memory at the top of the heap kept before it is given back to the system."""

_M_TRIM_THRESHOLD = -1  # glibc <malloc.h>
_M_MMAP_THRESHOLD = -3


def environment() -> dict[str, str]:
    """The same settings as environment variables, for processes started by others (glibc reads them at
    start-up; other C libraries ignore them)."""
    return {
        "MALLOC_MMAP_THRESHOLD_": str(MMAP_THRESHOLD),
        "MALLOC_TRIM_THRESHOLD_": str(TRIM_THRESHOLD),
    }


def tune() -> bool:
    """Apply the settings to this process with glibc's ``mallopt``; True when both were taken.

    Never raises: on another C library, or when ``mallopt`` refuses a value, nothing changes and the
    result is False.
    """
    if platform.system() != "Linux" or platform.libc_ver()[0] != "glibc":
        return False
    try:
        libc = ctypes.CDLL(ctypes.util.find_library("c") or "libc.so.6")
        mallopt = libc.mallopt
    except (OSError, AttributeError):
        return False
    mallopt.argtypes = (ctypes.c_int, ctypes.c_int)
    mallopt.restype = ctypes.c_int
    return bool(mallopt(_M_MMAP_THRESHOLD, MMAP_THRESHOLD)) and bool(
        mallopt(_M_TRIM_THRESHOLD, TRIM_THRESHOLD)
    )
