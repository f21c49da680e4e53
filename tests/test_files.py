"""Tests for emulate.files: atomic replacement of files and folders (POSIX rename semantics)."""

import os
from pathlib import Path
import stat

import pytest

from emulate import files
from emulate.files import atomic_path, write_text


class Boom(Exception):
    pass


def names(folder):
    return sorted(p.name for p in folder.iterdir())


@pytest.fixture
def old_folder(tmp_path):
    """An existing, non-empty folder ``sheet`` holding ``old.md``."""
    target = tmp_path / "sheet"
    target.mkdir()
    (target / "old.md").write_text("old")
    return target


class TestAtomicPath:
    def test_success_renames_onto_target(self, tmp_path):
        target = tmp_path / "a.txt"
        with atomic_path(target) as temp:
            assert temp.parent == tmp_path and temp.name.startswith(".a.txt.") and not temp.exists()
            temp.write_text("new")
            assert not target.exists()  # nothing at the target until the block ends
        assert target.read_text() == "new"
        assert names(tmp_path) == ["a.txt"]

    def test_replaces_existing_file(self, tmp_path):
        target = tmp_path / "a.txt"
        target.write_text("old")
        with atomic_path(target) as temp:
            temp.write_text("new")
        assert target.read_text() == "new" and names(tmp_path) == ["a.txt"]

    @pytest.mark.parametrize("error", [Boom, KeyboardInterrupt])
    def test_exception_removes_temporary_and_keeps_target(self, tmp_path, error):
        target = tmp_path / "a.txt"
        target.write_text("old")
        with pytest.raises(error), atomic_path(target) as temp:
            temp.write_text("half")
            raise error()
        assert target.read_text() == "old" and names(tmp_path) == ["a.txt"]

    def test_failed_rename_removes_temporary(self, tmp_path, monkeypatch):
        target = tmp_path / "a.txt"
        target.write_text("old")

        def refuse(*_args):
            raise OSError("disk full")
        monkeypatch.setattr(files.os, "replace", refuse)
        with pytest.raises(OSError, match="disk full"), atomic_path(target) as temp:
            temp.write_text("new")
        assert target.read_text() == "old" and names(tmp_path) == ["a.txt"]

    def test_new_folder(self, tmp_path):
        target = tmp_path / "sheet"
        with atomic_path(target) as temp:
            temp.mkdir()
            (temp / "x.md").write_text("x")
        assert names(target) == ["x.md"] and names(tmp_path) == ["sheet"]

    def test_folder_replaces_non_empty_folder(self, tmp_path, old_folder):
        target = old_folder
        with atomic_path(target) as temp:
            temp.mkdir()
            (temp / "new.md").write_text("new")
        assert names(target) == ["new.md"]
        assert names(tmp_path) == ["sheet"]  # the old folder is gone, no temporary left

    def test_failed_folder_write_keeps_old_folder(self, tmp_path, old_folder):
        target = old_folder
        with pytest.raises(Boom), atomic_path(target) as temp:
            temp.mkdir()
            (temp / "new.md").write_text("new")
            raise Boom()
        assert names(target) == ["old.md"] and names(tmp_path) == ["sheet"]

    def test_failed_folder_swap_puts_old_folder_back(self, tmp_path, old_folder, monkeypatch):
        target = old_folder
        real_replace = os.replace

        def refuse_new(src, dst):
            if str(src).endswith(".part"):
                raise OSError("disk full")
            real_replace(src, dst)
        monkeypatch.setattr(files.os, "replace", refuse_new)
        with pytest.raises(OSError, match="disk full"), atomic_path(target) as temp:
            temp.mkdir()
        assert names(target) == ["old.md"] and names(tmp_path) == ["sheet"]

    def test_file_never_replaces_a_folder(self, tmp_path, old_folder):
        # os.replace refuses a file onto a folder (POSIX rename(2): EISDIR); so does atomic_path
        target = old_folder
        with pytest.raises(IsADirectoryError), atomic_path(target) as temp:
            temp.write_text("file")
        assert names(target) == ["old.md"] and names(tmp_path) == ["sheet"]

    @pytest.mark.parametrize("mode", [0o600, 0o644, 0o755])
    def test_mode(self, tmp_path, mode):
        with atomic_path(tmp_path / "a.txt", mode=mode) as temp:
            temp.write_text("x")
        assert stat.S_IMODE(os.stat(tmp_path / "a.txt").st_mode) == mode


class TestWriteText:
    def test_writes_utf8_with_newlines_kept(self, tmp_path):
        target = tmp_path / "n.toml"
        write_text(target, "name = \"Ré\"\nmix = 0.5\n")
        assert target.read_bytes() == "name = \"Ré\"\nmix = 0.5\n".encode()
        assert names(tmp_path) == ["n.toml"]

    def test_missing_folder_leaves_nothing(self, tmp_path):
        with pytest.raises(FileNotFoundError):
            write_text(tmp_path / "missing" / "n.toml", "x")
        assert names(tmp_path) == []


class TestAtomicPathCreateOnly:
    def test_creates_a_new_file(self, tmp_path):
        with atomic_path(tmp_path / "a.txt", replace=False) as temp:
            temp.write_text("new")
        assert names(tmp_path) == ["a.txt"]

    def test_regression_parallel_creates_cannot_both_succeed(self, tmp_path):
        # a file appearing between a caller's check and the commit is never replaced
        target = tmp_path / "a.txt"
        with pytest.raises(FileExistsError):
            with atomic_path(target, replace=False) as temp:
                temp.write_text("second")
                target.write_text("first")
        assert target.read_text() == "first" and names(tmp_path) == ["a.txt"]

    @pytest.mark.parametrize("errno_name", ["EPERM", "ENOTSUP"])
    def test_a_file_system_without_hard_links_still_refuses(self, tmp_path, monkeypatch, errno_name):
        # FAT and some network shares refuse os.link; the create-only rule must hold there too
        import errno

        def no_links(*_args):
            raise OSError(getattr(errno, errno_name), "no hard links here")

        monkeypatch.setattr(os, "link", no_links)
        with atomic_path(tmp_path / "new.txt", replace=False) as temp:
            temp.write_text("new")
        target = tmp_path / "new.txt"
        with pytest.raises(FileExistsError):
            with atomic_path(target, replace=False) as temp:
                temp.write_text("second")
        assert target.read_text() == "new" and names(tmp_path) == ["new.txt"]

    def test_a_folder_is_not_put_over_a_non_empty_one(self, old_folder):
        with pytest.raises(FileExistsError):
            with atomic_path(old_folder, replace=False) as temp:
                temp.mkdir()
        assert names(old_folder) == ["old.md"] and names(old_folder.parent) == ["sheet"]


class TestErrorsNameTheTarget:
    def test_regression_sheet_errors_never_name_its_temporary_folder(self, tmp_path):
        target = tmp_path / "sheet"
        with pytest.raises(OSError) as caught:
            with atomic_path(target) as temp:
                temp.mkdir()
                open(temp / "missing" / "x.png", "rb")
        assert caught.value.filename == str(target / "missing" / "x.png")
        assert names(tmp_path) == []


def dead_pid() -> int:
    """The id of a process that has ended (a child that exited and was reaped)."""
    pid = os.fork()
    if pid == 0:
        os._exit(0)
    os.waitpid(pid, 0)
    return pid


class TestRemoveStale:
    def test_removes_what_a_dead_process_left(self, tmp_path):
        stale = tmp_path / f".out.wav.{dead_pid()}-0123456789ab.part"
        stale.write_text("half")
        assert files.remove_stale(tmp_path / "out.wav") == [stale]
        assert names(tmp_path) == []

    def test_keeps_what_a_live_process_writes(self, tmp_path):
        live = tmp_path / f".out.wav.{os.getppid()}-0123456789ab.part"
        live.write_text("in flight")
        assert files.remove_stale(tmp_path / "out.wav") == []
        assert live.exists()

    def test_keeps_other_targets_and_user_files(self, tmp_path):
        other = tmp_path / f".other.wav.{dead_pid()}-0123456789ab.part"
        mine = tmp_path / ".out.wav.part"
        other.write_text("x")
        mine.write_text("x")
        assert files.remove_stale(tmp_path / "out.wav") == []
        assert other.exists() and mine.exists()

    def test_a_stale_old_folder_is_put_back_when_the_target_is_gone(self, tmp_path):
        # killed between moving the old folder aside and renaming the new one in
        old = tmp_path / f".sheet.{dead_pid()}-0123456789ab.old"
        old.mkdir()
        (old / "keep.md").write_text("the user's")
        files.remove_stale(tmp_path / "sheet")
        assert (tmp_path / "sheet" / "keep.md").read_text() == "the user's"

    def test_the_next_writer_cleans_up(self, tmp_path):
        (tmp_path / f".a.txt.{dead_pid()}-0123456789ab.part").write_text("half")
        write_text(tmp_path / "a.txt", "whole")
        assert names(tmp_path) == ["a.txt"]


class TestCheckNewOutput:
    def test_a_new_file_is_fine(self, tmp_path):
        assert files.check_new_output(tmp_path / "o.wav", force=False) == tmp_path / "o.wav"

    @pytest.mark.parametrize("force", [False, True])
    def test_regression_never_writes_into_a_fifo(self, tmp_path, force):
        os.mkfifo(tmp_path / "p.wav")
        with pytest.raises(files.OutputRefusedError, match="FIFO"):
            files.check_new_output(tmp_path / "p.wav", force=force)

    def test_an_existing_file_needs_force(self, tmp_path):
        (tmp_path / "o.wav").write_text("x")
        with pytest.raises(files.OutputRefusedError, match="already exists.*--force"):
            files.check_new_output(tmp_path / "o.wav", force=False)
        files.check_new_output(tmp_path / "o.wav", force=True)

    def test_a_folder_is_refused(self, tmp_path):
        with pytest.raises(files.OutputRefusedError, match="a folder"):
            files.check_new_output(tmp_path, force=True)

    def test_a_path_under_a_file_is_refused(self, tmp_path):
        (tmp_path / "f").write_text("")
        with pytest.raises(files.OutputRefusedError, match="not a folder"):
            files.check_new_output(tmp_path / "f" / "o.wav", force=False)


class TestCheckNewFolder:
    def test_new_or_empty_is_fine(self, tmp_path):
        files.check_new_folder(tmp_path / "new", force=False)
        files.check_new_folder(tmp_path, force=False)

    def test_non_empty_needs_force(self, old_folder):
        with pytest.raises(files.OutputRefusedError, match="not empty.*--force"):
            files.check_new_folder(old_folder, force=False)
        files.check_new_folder(old_folder, force=True)

    def test_a_file_is_refused_even_with_force(self, tmp_path):
        (tmp_path / "f").write_text("x")
        with pytest.raises(files.OutputRefusedError, match="not a folder"):
            files.check_new_folder(tmp_path / "f", force=True)


class TestParentsMade:
    def test_removed_again_on_failure(self, tmp_path):
        with pytest.raises(Boom):
            with files.parents_made(tmp_path / "a" / "b" / "out"):
                raise Boom
        assert names(tmp_path) == []


class TestKeptFiles:
    def test_counts_completed_targets_and_discard_takes_one_back(self, tmp_path):
        mark = len(files.kept_files())
        write_text(tmp_path / "a.txt", "a")
        assert files.kept_files(mark) == [tmp_path / "a.txt"]
        files.discard(tmp_path / "a.txt")
        assert files.kept_files(mark) == [] and names(tmp_path) == []

    def test_files_inside_a_folder_being_written_are_not_counted(self, tmp_path):
        mark = len(files.kept_files())
        with atomic_path(tmp_path / "out") as temp:
            temp.mkdir()
            write_text(temp / "inner.txt", "x")
            assert files.kept_files(mark) == []
        assert files.kept_files(mark) == [tmp_path / "out"]


@pytest.mark.skipif(not Path("/proc/self/stat").exists(), reason="reads /proc")
def test_regression_a_zombie_owns_no_temporary(tmp_path):
    # a killed worker not yet reaped (a zombie) is dead: its .part is stale and goes
    import subprocess
    import sys
    import time

    child = subprocess.Popen([sys.executable, "-c", "pass"])
    deadline = time.monotonic() + 30
    while time.monotonic() < deadline and "Z" not in Path(f"/proc/{child.pid}/stat").read_text().rsplit(")", 1)[1][:3]:
        time.sleep(0.02)
    stale = tmp_path / f".out.wav.{child.pid}-0123456789ab.part"
    stale.write_bytes(b"half")
    try:
        assert files.remove_stale(tmp_path / "out.wav") == [stale] and not stale.exists()
    finally:
        child.wait()
