"""Tests of emulate.heap: a worker's freed large blocks are reused by the next job, not faulted in again.

Reference: glibc's malloc serves blocks above its mmap threshold with fresh mappings (mallopt(3),
M_MMAP_THRESHOLD), each of whose pages faults once when first written; the minor fault counts
come from getrusage(2).
"""

from __future__ import annotations

import ctypes
import os
import resource
import subprocess
import sys

import pytest

from emulate.lifetime import WorkerPool

pytestmark = pytest.mark.skipif(not sys.platform.startswith("linux"), reason="glibc's mallopt")

BLOCK_BYTES = 48 << 20  # a minute of 48 kHz stereo float64, about


def faults_of_a_second_block() -> int:
    """Minor page faults while a large block is allocated and written after one like it was freed
    (plain malloc: numpy asks for huge pages, which would hide the count)."""
    libc = ctypes.CDLL(None)
    libc.malloc.restype, libc.malloc.argtypes = ctypes.c_void_p, (ctypes.c_size_t,)
    libc.free.argtypes = (ctypes.c_void_p,)
    first = libc.malloc(BLOCK_BYTES)
    ctypes.memset(first, 1, BLOCK_BYTES)
    libc.free(first)
    before = resource.getrusage(resource.RUSAGE_SELF).ru_minflt
    second = libc.malloc(BLOCK_BYTES)
    ctypes.memset(second, 1, BLOCK_BYTES)
    faults = resource.getrusage(resource.RUSAGE_SELF).ru_minflt - before
    libc.free(second)
    return faults


PAGES = BLOCK_BYTES // resource.getpagesize()


def test_a_pool_worker_reuses_a_freed_block():
    with WorkerPool(1) as pool:
        faults = pool.submit(faults_of_a_second_block).result()
    assert faults < PAGES // 10  # a fresh mapping faults in every page (12,288)


CALLER = """
import sys
sys.path.insert(0, {tests!r})
import emulate.heap
from emulate.lifetime import WorkerPool
from test_heap import faults_of_a_second_block
with WorkerPool(1):
    pass
print(faults_of_a_second_block())
"""


def test_the_calling_process_is_left_as_it_is():
    # importing the package or starting a pool changes nothing in this process; in a fresh
    # interpreter, whose heap has no history (a long-lived process may already hold a freed
    # region big enough at the top of its heap, which would hide the count)
    code = CALLER.format(tests=os.path.dirname(os.path.abspath(__file__)))
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True, timeout=120)
    assert int(out.stdout.split()[-1]) > PAGES // 2
