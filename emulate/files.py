"""Atomic file writing: a target appears complete or not at all.

Every writer in emulate goes through :func:`atomic_path`: it hands out a hidden
temporary path beside the target (same folder, so the final rename cannot cross
file systems), renames it onto the target when the block ends without error, and
removes it on any error or Ctrl-C.
"""

from __future__ import annotations

import contextlib
import os
import secrets
import shutil
from pathlib import Path
from typing import Iterator


@contextlib.contextmanager
def atomic_path(target) -> Iterator[Path]:
    """Yield a temporary path beside ``target``; move it onto ``target`` on success.

    Works for a file or a folder written at the temporary path. An existing
    ``target`` file is replaced atomically; ``os.replace`` refuses to replace a
    non-empty folder, so callers check folders first.

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
    temp = target.with_name(f".{target.name}.{secrets.token_hex(6)}.part")
    try:
        yield temp
        os.replace(temp, target)
    except BaseException:
        _remove(temp)
        raise


def write_text(target, text: str) -> None:
    """Write ``text`` (UTF-8) to ``target`` atomically."""
    with atomic_path(target) as temp:
        temp.write_text(text, encoding="utf-8")


def _remove(path: Path) -> None:
    if path.is_dir() and not path.is_symlink():
        shutil.rmtree(path, ignore_errors=True)
    else:
        path.unlink(missing_ok=True)
