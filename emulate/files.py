"""Atomic file writing: a target appears complete or not at all.

Every writer in emulate (audio, presets, pictures, build sheets, sweep summaries)
goes through :func:`atomic_path`: it hands out a hidden temporary path beside the
target (same folder, so the final rename cannot cross file systems), renames it
onto the target when the block ends without error, and removes it on any error
or Ctrl-C. The writer decides what may be replaced (:func:`check_new_output`,
:func:`check_new_folder` are the shared refusal rules); this module makes the
replacement atomic, or the creation when nothing may be replaced (``replace=False``).

Temporary names carry the writing process's id (``.NAME.<pid>-<random>.part``), so a
temporary left by a process that was killed (``kill -9``, power loss) is recognised
as stale by the next writer of the same target and removed (:func:`remove_stale`).
"""

from __future__ import annotations

import contextlib
import errno
import os
import re
import secrets
import shutil
import stat
from collections.abc import Iterator
from pathlib import Path

from emulate.errors import BadValueError, EmulateError, OutputRefusedError

__all__ = ["atomic_path", "write_text", "check_new_output", "check_new_folder", "parents_made",
           "remove_stale", "kept_files", "discard", "OutputRefusedError"]

_kept: list[Path] = []  # targets this process completed (see kept_files)
_staging: list[Path] = []  # temporary folders being written now (their content is not kept yet)


@contextlib.contextmanager
def atomic_path(target, *, mode: int | None = None, replace: bool = True) -> Iterator[Path]:
    """Yield a temporary path beside ``target``; move it onto ``target`` on success.

    The caller creates a file or a folder at the yielded path (nothing exists
    there yet). When the block ends without error it gets permission bits
    ``mode`` (if given) and is renamed onto ``target`` with :func:`os.replace`:
    an existing file is replaced atomically; an existing folder is first moved
    aside, then removed once the new one is in place (put back if the rename
    fails). With ``replace=False`` nothing existing is replaced: a file is linked
    into place (:func:`os.link` fails when the target exists, so two writers cannot
    both create it) and a folder is renamed only onto no folder or an empty one.
    On any exception (KeyboardInterrupt included) the temporary file or folder is
    removed, ``target`` is left as it was, and the exception goes on; an error
    naming a path inside the temporary names the same path under ``target``.
    Stale temporaries of ``target`` left by dead processes are removed first.
    Does not check whether ``target`` may be replaced, or that its folder exists.

    Parameters
    ----------
    target : str or path-like
        The file or folder to write.
    mode : int, optional
        Permission bits for the result (e.g. ``0o644``); default: as created.
    replace : bool, optional
        Whether an existing ``target`` may be replaced (default True).

    Yields
    ------
    pathlib.Path
        ``.NAME.<pid>-<random>.part`` in the folder of ``target``.

    Raises
    ------
    FileExistsError
        ``replace=False`` and ``target`` exists (nothing is left behind).
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
    remove_stale(target)
    temp = _beside(target, "part")
    _staging.append(temp)
    try:
        yield temp
        if mode is not None:
            os.chmod(temp, mode)
        (_replace if replace else _create)(temp, target)
    except OSError as exc:
        _remove(temp)
        raise _renamed(exc, temp, target) from None
    except EmulateError as exc:  # its message may name a file inside the temporary folder
        _remove(temp)
        if len(exc.args) == 1 and isinstance(exc.args[0], str):
            exc.args = (exc.args[0].replace(str(temp), str(target)),)
        raise
    except BaseException:
        _remove(temp)
        raise
    finally:
        _staging.remove(temp)
    if not any(_inside(target, folder) for folder in _staging):
        _kept.append(target)


def kept_files(since: int = 0) -> list[Path]:
    """Targets this process completed with :func:`atomic_path`, from number ``since`` on.

    Used to say truthfully what an interrupted command kept; a file completed inside
    a folder that is still being written is not counted (it goes with the folder).

    Example
    -------
    >>> mark = len(kept_files())
    >>> kept_files(mark)
    []
    """
    return list(_kept[since:])


def discard(path) -> None:
    """Remove a file this process completed because a later step of the same command failed.

    Example
    -------
    >>> discard("/nonexistent/never-written.wav")
    """
    path = Path(path)
    if path in _kept:
        _kept.remove(path)
        path.unlink(missing_ok=True)


def check_new_output(path, *, force: bool, what: str = "output") -> Path:
    """Refuse an output file that exists (unless ``force``) or that could never be a file.

    The one rule of every command that writes a file: an existing regular file is
    replaced only with ``force``; a folder, FIFO, device or socket is never written
    into (not even with ``force``); the folder must exist and be writable.

    Parameters
    ----------
    path : str or path-like
        The file to be written.
    force : bool
        Whether an existing regular file may be replaced.
    what : str
        What the file is, for the message (``"OUT"``, ``"--plot"`` ...).

    Returns
    -------
    pathlib.Path

    Raises
    ------
    OutputRefusedError
        With one line naming the path, the reason and what is allowed.

    Example
    -------
    >>> import tempfile
    >>> check_new_output(Path(tempfile.mkdtemp()) / "new.wav", force=False).name
    'new.wav'
    """
    path = Path(path)
    try:
        info = os.stat(path)
    except (FileNotFoundError, NotADirectoryError):  # the folder check below says which
        info = None
    except OSError as exc:
        raise OutputRefusedError(f"{path}: {what} cannot be checked ({exc.strerror})") from None
    if info is not None and not stat.S_ISREG(info.st_mode):
        kind = "a folder" if stat.S_ISDIR(info.st_mode) else "not a regular file (FIFO, device or socket)"
        raise OutputRefusedError(f"{path}: {what} is {kind}; allowed: a path to a new or regular file")
    if info is not None and not force:
        raise OutputRefusedError(f"{path}: {what} already exists; choose another name or pass --force "
                            "to replace it")
    _check_folder_writable(path, what)
    return path


def check_new_folder(path, *, force: bool, what: str = "--out") -> Path:
    """Refuse an output folder that exists with content (unless ``force``) or is not a folder.

    Missing parent folders are allowed (the writer makes them with :func:`parents_made`).

    Raises
    ------
    OutputRefusedError
        ``path`` is a file (or a FIFO, device...), or a non-empty folder without ``force``,
        or the nearest existing parent is not a writable folder.

    Example
    -------
    >>> import tempfile
    >>> check_new_folder(Path(tempfile.mkdtemp()) / "out", force=False).name
    'out'
    """
    path = Path(path)
    if path.exists() and not path.is_dir():
        raise OutputRefusedError(f"{path}: {what} exists and is not a folder; allowed: a new or empty folder")
    if path.is_dir() and not force and any(path.iterdir()):
        raise OutputRefusedError(f"{path}: {what} folder exists and is not empty; choose another folder "
                            "or pass --force to replace it")
    _check_folder_writable(path, what)
    return path


def _check_folder_writable(path: Path, what: str) -> None:
    folder = path.parent
    while not folder.exists() and folder != folder.parent:
        folder = folder.parent
    if not folder.is_dir():
        raise OutputRefusedError(f"{path}: {folder} is not a folder; allowed: a path inside a folder")
    if not os.access(folder, os.W_OK | os.X_OK):
        raise OutputRefusedError(f"{path}: folder {folder} is not writable; allowed: a folder you can write to")


@contextlib.contextmanager
def parents_made(target) -> Iterator[None]:
    """Create the missing parent folders of ``target``; remove them again if the block fails.

    Example
    -------
    >>> import tempfile
    >>> base = Path(tempfile.mkdtemp())
    >>> with parents_made(base / "a" / "b" / "out"):
    ...     pass
    >>> (base / "a" / "b").is_dir()
    True
    """
    missing = []
    folder = Path(target).parent
    while not folder.exists():
        missing.append(folder)
        folder = folder.parent
    for folder in reversed(missing):
        folder.mkdir()
    try:
        yield
    except BaseException:
        for folder in missing:
            with contextlib.suppress(OSError):
                folder.rmdir()
        raise


_TEMP_RE = re.compile(r"\.(?P<name>.+)\.(?P<pid>\d+)-[0-9a-f]{12}\.(?P<kind>part|old)")


def remove_stale(target) -> list[Path]:
    """Remove the temporaries of ``target`` that a dead process left; return what was removed.

    A ``.part`` of a dead process is removed. A ``.old`` (an earlier folder moved aside
    during a swap) is removed only when ``target`` exists; otherwise it is the user's
    previous folder and is put back. Temporaries of live processes are left alone.

    Example
    -------
    >>> import tempfile
    >>> remove_stale(Path(tempfile.mkdtemp()) / "out.wav")
    []
    """
    target = Path(target)
    try:
        entries = list(os.scandir(target.parent))
    except OSError:
        return []
    removed = []
    for entry in entries:
        found = _TEMP_RE.fullmatch(entry.name)
        if not found or found["name"] != target.name or _alive(int(found["pid"])):
            continue
        path = Path(entry.path)
        if found["kind"] == "old" and not os.path.lexists(target):
            os.replace(path, target)
            continue
        _remove(path)
        removed.append(path)
    return removed


def _alive(pid: int) -> bool:
    """Whether process ``pid`` still runs (a zombie, dead but not yet reaped, does not)."""
    if pid == os.getpid():
        return True
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return False
    except OSError:  # exists, owned by someone else
        pass
    try:
        state = Path(f"/proc/{pid}/stat").read_text().rsplit(")", 1)[1].split()[0]
    except (OSError, IndexError):  # no /proc here: trust the signal check
        return True
    return state != "Z"


def _inside(path: Path, folder: Path) -> bool:
    return path == folder or folder in path.parents


def _renamed(exc: OSError, temp: Path, target: Path) -> OSError:
    """The error with a path inside the temporary shown as the same path under the target."""
    for attribute in ("filename", "filename2"):
        name = getattr(exc, attribute, None)
        if isinstance(name, (str, os.PathLike)) and _inside(Path(name), temp):
            setattr(exc, attribute, str(target / Path(name).relative_to(temp)) if Path(name) != temp
                    else str(target))
    return exc


def write_text(target, text: str, *, mode: int | None = None, replace: bool = True) -> None:
    """Write ``text`` (UTF-8, ``\\n`` line ends) to ``target`` atomically, flushed to disk.

    Parameters
    ----------
    target : str or path-like
        The file to write; an existing file is replaced.
    text : str
        The whole content.
    mode : int, optional
        Permission bits of the file; default: as created.
    replace : bool, optional
        Whether an existing file may be replaced (default True); if not, the
        file is created only if absent, atomically.

    Raises
    ------
    FileExistsError
        ``replace=False`` and the file exists.
    OSError
        If the folder does not exist or cannot be written (nothing is left behind).

    Example
    -------
    >>> import tempfile
    >>> path = Path(tempfile.mkdtemp()) / "notes.txt"
    >>> write_text(path, "a\\n"); path.read_text()
    'a\\n'
    """
    with atomic_path(target, mode=mode, replace=replace) as temp:
        with open(temp, "w", encoding="utf-8", newline="\n") as out:
            out.write(text)
            out.flush()
            os.fsync(out.fileno())


def _beside(target: Path, suffix: str) -> Path:
    return target.with_name(f".{target.name}.{os.getpid()}-{secrets.token_hex(6)}.{suffix}")


def _create(temp: Path, target: Path) -> None:
    """Move ``temp`` to ``target`` only if nothing (or, for a folder, an empty folder) is there."""
    if temp.is_dir():
        if os.path.lexists(target) and not (target.is_dir() and not any(target.iterdir())):
            raise FileExistsError(17, "File exists", str(target))
        os.replace(temp, target)
        return
    try:
        os.link(temp, target)  # fails with FileExistsError when target exists: atomic create
    except FileExistsError:
        raise
    except OSError as exc:  # a file system without hard links (FAT, some network shares)
        if exc.errno not in _NO_LINKS:
            raise
        if os.path.lexists(target):  # the best such a file system allows: check, then rename
            raise FileExistsError(errno.EEXIST, os.strerror(errno.EEXIST), str(target)) from None
        os.replace(temp, target)
        return
    temp.unlink()


_NO_LINKS = {errno.EPERM, errno.ENOTSUP, errno.EOPNOTSUPP, errno.EMLINK, errno.ENOSYS}


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


PICTURE_FORMATS = ("png", "svg")  # a picture's format, by its file name's suffix


def check_picture_suffix(path) -> Path:
    """The picture's path if its suffix is .png or .svg.

    Raises
    ------
    BadValueError : another suffix.
    """
    path = Path(path)
    if path.suffix.lower().lstrip(".") not in PICTURE_FORMATS:
        raise BadValueError(f"{path}: a picture is written as .png or .svg (by its name's suffix)")
    return path


def check_picture_path(path) -> Path:
    """The picture's path if its suffix is .png or .svg and its folder exists.

    Raises
    ------
    BadValueError : another suffix, or a missing folder.
    """
    path = check_picture_suffix(path)
    if not path.parent.is_dir():
        raise BadValueError(f"{path}: folder {path.parent} does not exist")
    return path
