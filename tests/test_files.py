"""Tests for emulate.files: atomic replacement of files and folders (POSIX rename semantics)."""

import os
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
