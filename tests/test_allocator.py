"""Allocator settings of audit processes: large buffers are reused from the heap, not faulted in afresh.

The check is the kernel's own count of minor page faults (``getrusage``) in a fresh Python process that
makes and frees a 4 MiB buffer 40 times, started with Dask's nanny setting ``MALLOC_TRIM_THRESHOLD_=65536``
in its environment (with which every such buffer is mapped and faulted in anew: about 1,000 faults each).
"""

from __future__ import annotations

import os
import platform
import subprocess
import sys

import pytest

from ffaudit.engine import allocator

glibc_only = pytest.mark.skipif(
    platform.system() != "Linux" or platform.libc_ver()[0] != "glibc",
    reason="the settings are glibc's (mallopt); elsewhere tune() changes nothing",
)

_CHURN = """
import resource, sys
from ffaudit.engine import allocator
tuned = sys.argv[1] == "tuned"
if tuned:
    assert allocator.tune()
before = resource.getrusage(resource.RUSAGE_SELF).ru_minflt
for i in range(40):
    buffer = b"x" * (4 << 20)  # writes every page
    del buffer
print(resource.getrusage(resource.RUSAGE_SELF).ru_minflt - before)
"""


def _faults(mode: str) -> int:
    env = dict(os.environ, MALLOC_TRIM_THRESHOLD_="65536")
    out = subprocess.run(
        [sys.executable, "-c", _CHURN, mode], env=env, capture_output=True, text=True, check=True
    )
    return int(out.stdout.strip())


@glibc_only
def test_tuned_process_reuses_large_buffers_instead_of_faulting_them_in_again():
    plain, tuned = _faults("plain"), _faults("tuned")
    # 40 buffers of 1,024 pages each: nearly all faulted anew without the settings, once with them
    assert plain > 20 * 1024, plain
    assert tuned * 10 < plain, (tuned, plain)


def test_environment_carries_the_same_settings():
    env = allocator.environment()
    assert env == {
        "MALLOC_MMAP_THRESHOLD_": str(allocator.MMAP_THRESHOLD),
        "MALLOC_TRIM_THRESHOLD_": str(allocator.TRIM_THRESHOLD),
    }
    # glibc caps the mmap threshold at 32 MiB on 64-bit systems (DEFAULT_MMAP_THRESHOLD_MAX): a larger
    # value would be refused
    assert allocator.MMAP_THRESHOLD <= 32 * 1024 * 1024
