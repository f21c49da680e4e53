"""A worker process's C heap: large freed blocks kept for the next job instead of handed back.

glibc's ``malloc`` serves every block above its mmap threshold (128 kB, rising to at most
32 MB) with a fresh mapping and unmaps it on ``free``; numpy's large arrays (a take
read whole, its spectrum, the loudness filter's copies) are such blocks, so every job
of a sweep or batch worker touched fresh pages again: page faults that were about a
fifth of a sweep worker's CPU (system time). :func:`reuse_freed_memory` raises the
thresholds (``mallopt``: ``M_MMAP_THRESHOLD``, ``M_TRIM_THRESHOLD``) so freed blocks stay
in the heap and the next job's arrays reuse them. Peak memory is what the largest job
holds at once, as before; the memory is not handed back between jobs.

Only for worker processes this package starts (:class:`emulate.lifetime.WorkerPool`);
a process that imports the package is never changed. Where the C library has no
``mallopt`` (not glibc) nothing is done.
"""

from __future__ import annotations

import ctypes

__all__ = ["reuse_freed_memory", "KEPT_BLOCK_BYTES"]

KEPT_BLOCK_BYTES = 1 << 30  # blocks up to this size come from (and go back to) the heap
_M_TRIM_THRESHOLD, _M_MMAP_THRESHOLD = -1, -3  # glibc's malloc.h


def reuse_freed_memory() -> bool:
    """Keep freed blocks up to :data:`KEPT_BLOCK_BYTES` in this process's heap; True if done.

    Example
    -------
    >>> KEPT_BLOCK_BYTES // 2 ** 20  # MB (called here it would change the test process)
    1024
    """
    try:
        mallopt = ctypes.CDLL(None).mallopt
    except (OSError, AttributeError):
        return False
    mallopt.argtypes, mallopt.restype = (ctypes.c_int, ctypes.c_int), ctypes.c_int
    return bool(mallopt(_M_MMAP_THRESHOLD, KEPT_BLOCK_BYTES) and mallopt(_M_TRIM_THRESHOLD, KEPT_BLOCK_BYTES))
