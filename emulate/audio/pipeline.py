"""Overlap reading, processing and writing: a reader thread and a writer thread.

libsndfile (through soundfile's cffi calls) and the numba kernels release the GIL, so
a render reads block n + 1 and writes block n - 1 while it filters block n. Each side
is joined to the caller through a bounded queue (``depth`` blocks), so memory stays a
few blocks whatever the file length.

Stopping: when the caller's loop ends by an exception (an error, Ctrl-C), both threads
are told to stop, the queues are drained and the threads joined before the exception
goes on, so the output file can be closed and removed with no thread still touching
it. An exception in a thread is raised again in the caller.
"""

from __future__ import annotations

import queue
import threading
from collections.abc import Callable, Iterable, Iterator
from contextlib import contextmanager

import numpy as np

__all__ = ["read_ahead", "write_behind", "BlockPool", "DEFAULT_DEPTH"]

DEFAULT_DEPTH = 3  # blocks waiting on each side of the caller
_POLL_S = 0.05  # how often a waiting thread looks at the stop flag
_END = object()


class BlockPool:
    """Arrays of one shape and dtype, reused: taken by one thread, given back by another.

    A render hands its blocks between the reader, the filter and the writer; reusing
    them spares an allocation (and the kernel's page faults on fresh memory) per block.
    A block is made when none is free, so ``take`` never waits: how many exist is
    bounded by the queues around them (``depth`` per queue plus one per thread).

    Parameters
    ----------
    shape : tuple of int
        Shape of every block.
    dtype : numpy dtype
        Element type.

    Example
    -------
    >>> pool = BlockPool((4, 2), np.int32)
    >>> a = pool.take(); pool.give(a); pool.take() is a
    True
    """

    def __init__(self, shape, dtype):
        self.shape, self.dtype = tuple(shape), np.dtype(dtype)
        self._free: queue.SimpleQueue = queue.SimpleQueue()

    def take(self) -> np.ndarray:
        """A free block (its contents are left over), or a new one."""
        try:
            return self._free.get_nowait()
        except queue.Empty:
            return np.empty(self.shape, self.dtype)

    def give(self, block: np.ndarray) -> None:
        """Give ``block`` back (nothing may use it after)."""
        self._free.put(block)


class _Failed:
    def __init__(self, error: BaseException):
        self.error = error


def _put(q: queue.Queue, item, stop: threading.Event) -> bool:
    """Put ``item`` unless told to stop first; True if it went in."""
    while not stop.is_set():
        try:
            q.put(item, timeout=_POLL_S)
            return True
        except queue.Full:
            continue
    return False


def _drain(q: queue.Queue) -> None:
    while True:
        try:
            q.get_nowait()
        except queue.Empty:
            return


@contextmanager
def read_ahead(blocks: Iterable, depth: int = DEFAULT_DEPTH) -> Iterator[Iterator]:
    """Iterate ``blocks`` in a thread, up to ``depth`` items ahead of the caller.

    Parameters
    ----------
    blocks : iterable
        Produces the items (e.g. a generator reading a file); run in the thread. Each
        item must be a new object (it is handed over, not copied).
    depth : int, optional
        Items waiting at most (>= 1).

    Yields
    ------
    iterator
        The same items in the same order; an exception raised by ``blocks`` is raised
        here at its place in the sequence.

    Raises
    ------
    Whatever ``blocks`` raises.

    Example
    -------
    >>> with read_ahead(iter(range(5)), depth=2) as items:
    ...     list(items)
    [0, 1, 2, 3, 4]
    """
    q: queue.Queue = queue.Queue(maxsize=depth)
    stop = threading.Event()

    def produce():
        try:
            for item in blocks:
                if not _put(q, item, stop):
                    return
            _put(q, _END, stop)
        except BaseException as exc:  # handed to the caller
            _put(q, _Failed(exc), stop)

    thread = threading.Thread(target=produce, name="emulate-reader", daemon=True)
    thread.start()

    def consume():
        while True:
            item = q.get()
            if item is _END:
                return
            if isinstance(item, _Failed):
                raise item.error
            yield item

    try:
        yield consume()
    finally:
        stop.set()
        _drain(q)
        thread.join()
        _drain(q)


@contextmanager
def write_behind(write: Callable[[object], object],
                 depth: int = DEFAULT_DEPTH) -> Iterator[Callable[[object], None]]:
    """Call ``write(item)`` in a thread for every item the caller puts, in order.

    On a normal exit every item put has been written when the ``with`` block ends; on
    an exception the items not yet written are dropped and the thread is joined before
    the exception goes on.

    Parameters
    ----------
    write : callable
        Called in the thread with each item (e.g. ``SoundFile.write``). Items must not
        be changed by the caller after they are put.
    depth : int, optional
        Items waiting at most (>= 1); ``put`` blocks while the queue is full.

    Yields
    ------
    callable
        ``put(item)``; raises the writer's exception if writing failed.

    Raises
    ------
    Whatever ``write`` raises (at the next ``put`` or at the end of the block).

    Example
    -------
    >>> got = []
    >>> with write_behind(got.append) as put:
    ...     for i in range(3):
    ...         put(i)
    >>> got
    [0, 1, 2]
    """
    q: queue.Queue = queue.Queue(maxsize=depth)
    stop = threading.Event()
    failure: list[BaseException] = []

    def consume():
        while not stop.is_set():
            try:
                item = q.get(timeout=_POLL_S)
            except queue.Empty:
                continue
            if item is _END:
                return
            try:
                write(item)
            except BaseException as exc:
                failure.append(exc)
                stop.set()
                return

    thread = threading.Thread(target=consume, name="emulate-writer", daemon=True)
    thread.start()

    def put(item) -> None:
        if failure:
            raise failure[0]
        if not _put(q, item, stop) and failure:
            raise failure[0]

    try:
        yield put
        if not failure:
            _put(q, _END, stop)
        thread.join()
    finally:
        stop.set()
        _drain(q)
        thread.join()
    if failure:
        raise failure[0]
