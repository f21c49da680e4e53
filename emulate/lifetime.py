"""How long work lives: stop on Ctrl-C, SIGTERM and SIGHUP; never leave a worker behind.

- :func:`stop_on_signals` turns SIGTERM and SIGHUP into :class:`Stopped` (a
  ``KeyboardInterrupt``) in the main thread, so every ``atomic_path`` block removes
  what it was writing, exactly as for Ctrl-C.
- :func:`watch_parent` is the initializer of every worker process: the worker
  ignores Ctrl-C (the parent decides and ends it), and dies with its parent,
  even after ``kill -9`` of the parent: on Linux the kernel sends it SIGKILL
  (``prctl(PR_SET_PDEATHSIG)``), elsewhere a watchdog thread sees the parent
  change and exits.
- :class:`WorkerPool` is the process pool of every parallel command (sweep, batch):
  its workers run :func:`watch_parent`, keep their freed memory for the next job
  (:mod:`emulate.heap`) and report their process ids to the parent
  as they start (through a pipe the parent owns), so the parent knows exactly which
  processes are its workers without looking inside the executor.
- :func:`end_workers` kills a :class:`WorkerPool`'s workers at once (used when work
  is interrupted, so the parent need not wait for the renders in flight).
- :func:`quiet_late_faults` is called once a stop has become the command's one
  line: a stop can land inside a library's constructor (numba's compiler, for one),
  and the half-built object's finaliser then fails when it is freed, which Python
  would print as a traceback after that line.
"""

from __future__ import annotations

import contextlib
import ctypes
import multiprocessing
import os
import signal
import sys
import threading
import time
from collections.abc import Iterator
from concurrent.futures import ProcessPoolExecutor

__all__ = ["Stopped", "stop_on_signals", "quiet_late_faults", "watch_parent", "WorkerPool", "end_workers"]

_PR_SET_PDEATHSIG = 1  # linux/prctl.h
_WATCH_S = 0.5
END_S = 10.0  # end_workers waits at most this long for killed workers to be reaped
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


def quiet_late_faults() -> None:
    """After a stop, drop the faults of objects freed late instead of printing their tracebacks.

    The command is ending and has said so in one line; what the interrupted library
    leaves half-built fails in its finaliser (``Exception ignored in ...``), which
    changes nothing but would print a traceback. ``EMULATE_DEBUG=1`` still shows them.

    Example
    -------
    >>> callable(quiet_late_faults)
    True
    """
    if not os.environ.get("EMULATE_DEBUG"):
        sys.unraisablehook = _drop


def _drop(_unraisable) -> None:
    pass


def watch_parent(parent: int | None = None) -> None:
    """Worker initializer: ignore Ctrl-C and SIGTERM/SIGHUP defaults aside, die with the parent.

    ``parent`` is the parent's process id as the parent saw it before starting the
    worker (default: the worker's parent now). Given, a worker forked just before its
    parent was killed sees that it was orphaned and ends at once, instead of taking
    the reaper for its parent and running a job nobody will collect.

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
    parent = os.getppid() if parent is None else parent
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


class WorkerPool(ProcessPoolExecutor):
    """A process pool whose workers die with the parent and whose process ids the parent knows.

    Each worker runs :func:`watch_parent`, then writes its process id into a pipe the
    parent made (a ``multiprocessing.SimpleQueue``: the write is finished before the
    worker takes its first job), so :meth:`worker_ids` names every worker that ever
    ran a job, through public interfaces only.

    Parameters
    ----------
    max_workers : int
        Worker processes, at least 1.

    Example
    -------
    >>> with WorkerPool(1) as pool:
    ...     pool.submit(os.getpid).result() in pool.worker_ids()
    True
    """

    def __init__(self, max_workers: int):
        context = multiprocessing.get_context()
        self._started = context.SimpleQueue()
        self._ids: set[int] = set()
        super().__init__(max_workers=max_workers, mp_context=context, initializer=_start_worker,
                         initargs=(self._started, os.getpid()))

    def worker_ids(self) -> set[int]:
        """The process ids of the workers started so far (a worker running a job is always among them)."""
        with contextlib.suppress(OSError, EOFError, ValueError):
            while not self._started.empty():
                self._ids.add(self._started.get())
        return set(self._ids)


def _start_worker(started, parent: int) -> None:
    """Worker initializer of :class:`WorkerPool`: watch the parent, keep freed memory for the
    next job (:func:`emulate.heap.reuse_freed_memory`), then say who we are."""
    from emulate.heap import reuse_freed_memory

    watch_parent(parent)
    reuse_freed_memory()
    started.put(os.getpid())


def end_workers(pool: WorkerPool) -> None:
    """Kill the worker processes of a :class:`WorkerPool` now and drop its queued jobs.

    Returns once every worker that ran a job is gone (reaped), or after ``END_S``
    seconds at most; killing one worker breaks the pool, which then ends the others
    itself. The pool cannot be used again.

    Example
    -------
    >>> end_workers(WorkerPool(1))
    """
    with contextlib.suppress(Exception):
        pool.shutdown(wait=False, cancel_futures=True)
    deadline = time.monotonic() + END_S
    while True:
        workers = pool.worker_ids()
        for pid in workers:
            with contextlib.suppress(OSError):
                os.kill(pid, signal.SIGKILL)
        living = {child.pid for child in multiprocessing.active_children()} & workers
        if not living or time.monotonic() > deadline:
            return
        time.sleep(0.02)
