"""How long work lives: stop on Ctrl-C, SIGTERM and SIGHUP; never leave a worker behind.

- :func:`stop_on_signals` turns SIGTERM and SIGHUP into :class:`Stopped` (a
  ``KeyboardInterrupt``) in the main thread, so every ``atomic_path`` block removes
  what it was writing, exactly as for Ctrl-C.
- :func:`watch_parent` is the initializer of every worker process: the worker
  ignores Ctrl-C (the parent decides and ends it), and dies with its parent,
  even after ``kill -9`` of the parent: on Linux the kernel sends it SIGKILL
  (``prctl(PR_SET_PDEATHSIG)``), elsewhere a watchdog thread sees the parent
  change and exits.
- :func:`end_workers` kills a process pool's workers at once (used when work is
  interrupted, so the parent need not wait for the renders in flight).
"""

from __future__ import annotations

import contextlib
import ctypes
import os
import signal
import sys
import threading
import time
from collections.abc import Iterator

__all__ = ["Stopped", "stop_on_signals", "watch_parent", "end_workers"]

_PR_SET_PDEATHSIG = 1  # linux/prctl.h
_WATCH_S = 0.5
STOP_SIGNALS = tuple(getattr(signal, name) for name in ("SIGTERM", "SIGHUP") if hasattr(signal, name))


class Stopped(KeyboardInterrupt):
    """The process was asked to stop by a signal (SIGTERM, SIGHUP)."""


def _raise_stopped(number, _frame):
    raise Stopped(signal.Signals(number).name)


@contextlib.contextmanager
def stop_on_signals() -> Iterator[None]:
    """Within the block, SIGTERM and SIGHUP raise :class:`Stopped` in the main thread.

    Outside the main thread (where Python cannot set handlers) the block runs as is.
    The previous handlers are restored afterwards.

    Example
    -------
    >>> with stop_on_signals():
    ...     pass
    """
    if threading.current_thread() is not threading.main_thread():
        yield
        return
    previous = {number: signal.signal(number, _raise_stopped) for number in STOP_SIGNALS}
    try:
        yield
    finally:
        for number, handler in previous.items():
            signal.signal(number, handler)


def watch_parent() -> None:
    """Worker initializer: ignore Ctrl-C and SIGTERM/SIGHUP defaults aside, die with the parent.

    Ctrl-C in a terminal reaches the whole process group; the worker ignores it and
    the parent ends it (:func:`end_workers`). Its stop signals are reset to their
    default (end the process) rather than inheriting the parent's handlers.

    Example
    -------
    >>> callable(watch_parent)
    True
    """
    signal.signal(signal.SIGINT, signal.SIG_IGN)
    for number in STOP_SIGNALS:
        signal.signal(number, signal.SIG_DFL)
    parent = os.getppid()
    if sys.platform.startswith("linux"):
        with contextlib.suppress(OSError, AttributeError):
            libc = ctypes.CDLL(None, use_errno=True)
            libc.prctl(_PR_SET_PDEATHSIG, signal.SIGKILL, 0, 0, 0)
    if os.getppid() != parent:  # the parent died before the request took hold
        os._exit(1)
    threading.Thread(target=_watch, args=(parent,), daemon=True, name="watch-parent").start()


def _watch(parent: int) -> None:
    while os.getppid() == parent:
        time.sleep(_WATCH_S)
    os._exit(1)


def end_workers(pool) -> None:
    """Kill the worker processes of a ``ProcessPoolExecutor`` now and drop its queued jobs.

    Example
    -------
    >>> from concurrent.futures import ProcessPoolExecutor
    >>> end_workers(ProcessPoolExecutor(1))
    """
    processes = list((getattr(pool, "_processes", None) or {}).values())
    for process in processes:
        with contextlib.suppress(OSError, AttributeError):
            process.kill()
    with contextlib.suppress(Exception):
        pool.shutdown(wait=False, cancel_futures=True)
    for process in processes:
        with contextlib.suppress(Exception):
            process.join(timeout=2.0)
