"""Atomic file writing: a target appears complete or not at all.

Every writer in emulate (audio, presets, pictures, build sheets, sweep summaries)
goes through :func:`atomic_path`: it hands out a hidden temporary path beside the
target (same folder, so the final rename cannot cross file systems), renames it
onto the target when the block ends without error, and removes it on any error
or Ctrl-C. The writer decides what may be replaced; this module only makes the
replacement atomic.
"""

from __future__ import annotations

import contextlib
import os
import secrets
import shutil
from collections.abc import Iterator
from pathlib import Path

__all__ = ["atomic_path", "write_text"]


@contextlib.contextmanager
def atomic_path(target, *, mode: int | None = None) -> Iterator[Path]:
    """Yield a temporary path beside ``target``; move it onto ``target`` on success.

    The caller creates a file or a folder at the yielded path (nothing exists
    there yet). When the block ends without error it gets permission bits
    ``mode`` (if given) and is renamed onto ``target`` with :func:`os.replace`:
    an existing file is replaced atomically; an existing folder is first moved
    aside, then removed once the new one is in place (put back if the rename
    fails). On any exception (KeyboardInterrupt included) the temporary file or
    folder is removed, ``target`` is left as it was, and the exception goes on.
    Does not check whether ``target`` may be replaced, or that its folder exists.

    Parameters
    ----------
    target : str or path-like
        The file or folder to write.
    mode : int, optional
        Permission bits for the result (e.g. ``0o644``); default: as created.

    Yields
    ------
    pathlib.Path
        ``.NAME.<random>.part`` in the folder of ``target``.

    Raises
    ------
    OSError
        From the writer, or when the rename fails (nothing is left behind).

    Example
    -------
    >>> import tempfile
    >>> folder = Path(tempfile.mkdtemp())
    >>> with atomic_path(folder / "a.txt") as temp:
    ...     _ = temp.write_text("hello")
    >>> (folder / "a.txt").read_text()
    'hello'
    """
    target = Path(target)
    temp = _beside(target, "part")
    try:
        yield temp
        if mode is not None:
            os.chmod(temp, mode)
        _replace(temp, target)
    except BaseException:
        _remove(temp)
        raise


def write_text(target, text: str, *, mode: int | None = None) -> None:
    """Write ``text`` (UTF-8, ``\\n`` line ends) to ``target`` atomically, flushed to disk.

    Parameters
    ----------
    target : str or path-like
        The file to write; an existing file is replaced.
    text : str
        The whole content.
    mode : int, optional
        Permission bits of the file; default: as created.

    Raises
    ------
    OSError
        If the folder does not exist or cannot be written (nothing is left behind).

    Example
    -------
    >>> import tempfile
    >>> path = Path(tempfile.mkdtemp()) / "notes.txt"
    >>> write_text(path, "a\\n"); path.read_text()
    'a\\n'
    """
    with atomic_path(target, mode=mode) as temp, open(temp, "w", encoding="utf-8", newline="\n") as out:
        out.write(text)
        out.flush()
        os.fsync(out.fileno())


def _beside(target: Path, suffix: str) -> Path:
    return target.with_name(f".{target.name}.{secrets.token_hex(6)}.{suffix}")


def _replace(temp: Path, target: Path) -> None:
    """``os.replace(temp, target)``; a folder replacing a folder swaps the old one out first."""
    if not (temp.is_dir() and target.is_dir() and not target.is_symlink()):
        os.replace(temp, target)
        return
    old = _beside(target, "old")
    os.replace(target, old)
    try:
        os.replace(temp, target)
    except BaseException:
        os.replace(old, target)
        raise
    _remove(old)


def _remove(path: Path) -> None:
    if path.is_dir() and not path.is_symlink():
        shutil.rmtree(path, ignore_errors=True)
    else:
        path.unlink(missing_ok=True)
