"""A table of per-frame band powers kept on disk, so a finder's memory does not grow with the take.

A finder's first pass produces one row of band powers per frame (80 rows a second at a
12.5 ms hop). Held in memory, that table grows with the take (about 0.7 MB a minute for
40 bands in float32, twice that while it is put together). :class:`FrameTable` writes
the rows to an anonymous temporary file instead (``tempfile.TemporaryFile``: on POSIX
the file has no name, so nothing is left behind even when the process is killed) and
reads them back in chunks of rows, or a few columns at a time for exact percentiles
(``numpy.percentile`` on each whole column, as with an array in memory).

What this module does *not* do: it knows nothing about frames, bands or finders; it
stores a float32 matrix with a fixed number of columns.
"""

from __future__ import annotations

import tempfile
from collections.abc import Iterator

import numpy as np

__all__ = ["COLUMN_BUDGET_BYTES", "FrameTable"]

#: Memory allowed for the columns read at once by :meth:`FrameTable.percentile`, bytes.
COLUMN_BUDGET_BYTES = 8 * 2**20
#: Rows read at once by :meth:`FrameTable.chunks`.
CHUNK_ROWS = 8192


class FrameTable:
    """Rows of float32 values with a fixed number of columns, appended, then read back.

    Use it as a context manager (the file is closed, and with it deleted, on leaving).

    Example
    -------
    >>> with FrameTable(2) as t:
    ...     t.append(np.array([[1.0, 2.0], [3.0, 4.0]]))
    ...     t.append(np.array([[5.0, 6.0]]))
    ...     t.rows, t.percentile(50).tolist(), t.read(1, 3).tolist()
    (3, [3.0, 4.0], [[3.0, 4.0], [5.0, 6.0]])
    """

    def __init__(self, columns: int):
        self.columns = int(columns)
        self.rows = 0
        self._file = tempfile.TemporaryFile(prefix="emulate-frames-")

    def __enter__(self) -> "FrameTable":
        return self

    def __exit__(self, *exc) -> None:
        self.close()

    def close(self) -> None:
        """Close (and so delete) the file."""
        self._file.close()

    def append(self, rows: np.ndarray) -> None:
        """Add rows, shape ``(n, columns)`` (stored as float32)."""
        rows = np.ascontiguousarray(rows, dtype=np.float32)
        if rows.ndim != 2 or rows.shape[1] != self.columns:
            raise ValueError(f"rows must be (n, {self.columns}), got {rows.shape}")
        self._file.seek(self.rows * self._row_bytes)
        self._file.write(rows.tobytes())
        self.rows += rows.shape[0]

    def read(self, start: int, stop: int) -> np.ndarray:
        """Rows ``start:stop`` (clipped to the table), float32."""
        start, stop = max(0, start), min(self.rows, stop)
        out = np.empty((max(0, stop - start), self.columns), np.float32)
        if out.size:
            self._file.seek(start * self._row_bytes)
            self._file.readinto(memoryview(out).cast("B"))
        return out

    def chunks(self, rows: int = CHUNK_ROWS) -> Iterator[tuple[int, np.ndarray]]:
        """``(first_row, block)`` pairs covering the table in order, ``rows`` at a time."""
        for start in range(0, self.rows, rows):
            yield start, self.read(start, start + rows)

    def percentile(self, q: float, budget_bytes: int = COLUMN_BUDGET_BYTES, rows: np.ndarray | None = None) -> np.ndarray:
        """Each column's ``q``-th percentile over all rows (float32), as ``numpy.percentile`` gives it.

        Columns are read a group at a time, as many as fit in ``budget_bytes`` (at least one).
        ``rows``, a boolean mask over the rows, keeps only some of them.
        """
        out = np.empty(self.columns, np.float32)  # what numpy.percentile gives for float32
        group = max(1, budget_bytes // max(1, 4 * self.rows))
        for first in range(0, self.columns, group):
            picked = slice(first, min(self.columns, first + group))
            column = np.empty((self.rows, picked.stop - picked.start), np.float32)
            for start, block in self.chunks():
                column[start : start + block.shape[0]] = block[:, picked]
            out[picked] = np.percentile(column if rows is None else column[rows], q, axis=0)
        return out

    @property
    def _row_bytes(self) -> int:
        return 4 * self.columns
