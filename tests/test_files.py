"""Safe output files: refuse to overwrite without force, and never leave half a file."""

from __future__ import annotations

import os
import stat

import pytest

from clockplan.errors import InputError
from clockplan.files import check_target, write_atomic


def leftovers(folder) -> list[str]:
    """Temporary files left in ``folder``."""
    return [path.name for path in folder.iterdir() if path.name.endswith(".tmp")]


def test_writes_a_new_file(tmp_path):
    target = tmp_path / "tree.dot"
    write_atomic(target, "digraph {}\n", force=False, option="--dot")
    assert target.read_text(encoding="utf-8") == "digraph {}\n"
    assert leftovers(tmp_path) == []


def test_new_file_follows_the_umask(tmp_path):
    umask = os.umask(0o022)
    try:
        write_atomic(tmp_path / "a.h", "x", force=False, option="--header")
    finally:
        os.umask(umask)
    assert (tmp_path / "a.h").stat().st_mode & 0o777 == 0o644  # not the 0600 of a temp file


def test_refuses_to_overwrite_without_force(tmp_path):
    target = tmp_path / "report.md"
    target.write_text("mine", encoding="utf-8")
    with pytest.raises(InputError, match="report.md already exists; add --force"):
        write_atomic(target, "new", force=False, option="--report")
    assert target.read_text(encoding="utf-8") == "mine"
    assert leftovers(tmp_path) == []


def test_force_replaces(tmp_path):
    target = tmp_path / "report.md"
    target.write_text("old", encoding="utf-8")
    write_atomic(target, "new", force=True, option="--report")
    assert target.read_text(encoding="utf-8") == "new"


@pytest.mark.parametrize("force", [False, True])
def test_failure_mid_write_keeps_the_old_file_and_leaves_no_temp(tmp_path, monkeypatch, force):
    target = tmp_path / "tree.svg"
    if force:
        target.write_text("old picture", encoding="utf-8")

    def disk_full(descriptor):
        raise OSError(28, "No space left on device")

    monkeypatch.setattr(os, "fsync", disk_full)  # after the text went in, before the rename
    with pytest.raises(InputError, match="cannot write .*tree.svg .*No space left"):
        write_atomic(target, "<svg/>" * 1000, force=force, option="--svg")
    assert (target.read_text(encoding="utf-8") == "old picture") if force else not target.exists()
    assert leftovers(tmp_path) == []


def test_failure_at_the_rename_keeps_the_old_file(tmp_path, monkeypatch):
    target = tmp_path / "tree.svg"
    target.write_text("old picture", encoding="utf-8")

    def refuse(source, destination):
        raise PermissionError(13, "Permission denied")

    monkeypatch.setattr(os, "replace", refuse)
    with pytest.raises(InputError, match="Permission denied"):
        write_atomic(target, "new", force=True, option="--svg")
    assert target.read_text(encoding="utf-8") == "old picture"
    assert leftovers(tmp_path) == []


def test_a_file_that_appears_during_the_write_is_not_replaced(tmp_path, monkeypatch):
    target = tmp_path / "clock.h"
    real_fsync = os.fsync

    def someone_else_writes(descriptor):
        real_fsync(descriptor)
        target.write_text("theirs", encoding="utf-8")

    monkeypatch.setattr(os, "fsync", someone_else_writes)
    with pytest.raises(InputError, match="already exists"):
        write_atomic(target, "ours", force=False, option="--header")
    assert target.read_text(encoding="utf-8") == "theirs"
    assert leftovers(tmp_path) == []


@pytest.mark.parametrize(
    ("make", "message"),
    [
        (lambda folder: folder / "missing" / "x.dot", "does not exist"),
        (lambda folder: folder, "is a folder"),
    ],
)
def test_bad_targets_are_refused(tmp_path, make, message):
    with pytest.raises(InputError, match=message):
        check_target(make(tmp_path), force=True, option="--dot")


def test_a_path_ending_in_a_separator_names_a_folder_not_a_file(tmp_path):
    target = f"{tmp_path / 'newdir'}{os.sep}"
    with pytest.raises(InputError, match="ends with a separator, so it names a folder"):
        write_atomic(target, "<svg/>", force=True, option="--svg")
    assert not (tmp_path / "newdir").exists()


def test_an_empty_path_is_refused(tmp_path):
    with pytest.raises(InputError, match="the file name is empty"):
        check_target("", force=True, option="--svg")


@pytest.mark.skipif(not hasattr(os, "mkfifo"), reason="needs named pipes")
def test_force_never_replaces_a_fifo(tmp_path):
    fifo = tmp_path / "pipe"
    os.mkfifo(fifo)
    with pytest.raises(InputError, match=r"is a FIFO \(named pipe\); only a regular file is ever"):
        write_atomic(fifo, "x", force=True, option="--dot")
    assert stat.S_ISFIFO(os.lstat(fifo).st_mode)
    assert leftovers(tmp_path) == []


@pytest.mark.skipif(not os.path.exists("/dev/null"), reason="needs /dev/null")
def test_force_never_replaces_a_device():
    with pytest.raises(InputError, match="is a character device; only a regular file"):
        write_atomic("/dev/null", "x", force=True, option="--header")
    assert stat.S_ISCHR(os.lstat("/dev/null").st_mode)


def test_force_never_replaces_a_symbolic_link_or_what_it_points_to(tmp_path):
    mine = tmp_path / "mine.md"
    mine.write_text("mine", encoding="utf-8")
    link = tmp_path / "link.md"
    link.symlink_to(mine)
    with pytest.raises(InputError, match="is a symbolic link"):
        write_atomic(link, "new", force=True, option="--report")
    assert link.is_symlink() and mine.read_text(encoding="utf-8") == "mine"


def test_force_never_replaces_an_input_even_under_another_name(tmp_path):
    board = tmp_path / "board.toml"
    board.write_text("title = 'x'\n", encoding="utf-8")
    alias = tmp_path / "alias.toml"
    os.link(board, alias)
    for target in (board, alias):
        with pytest.raises(InputError, match="is the scenario being read"):
            write_atomic(target, "# report", force=True, option="--report", inputs=[board])
    assert board.read_text(encoding="utf-8") == "title = 'x'\n"


def test_a_name_near_the_system_limit_still_gets_its_temporary(tmp_path):
    longest = os.pathconf(tmp_path, "PC_NAME_MAX") if hasattr(os, "pathconf") else 255
    target = tmp_path / ("n" * (longest - 4) + ".svg")
    write_atomic(target, "<svg/>", force=False, option="--svg")
    assert target.read_text(encoding="utf-8") == "<svg/>"
    assert leftovers(tmp_path) == []


def test_a_name_past_the_system_limit_is_one_error(tmp_path):
    longest = os.pathconf(tmp_path, "PC_NAME_MAX") if hasattr(os, "pathconf") else 255
    target = tmp_path / ("n" * (longest + 10))
    with pytest.raises(InputError) as raised:
        write_atomic(target, "x", force=True, option="--svg")
    assert "name too long" in str(raised.value).lower()
    assert len(str(raised.value)) < 400  # the name is shortened in the message
    assert leftovers(tmp_path) == []


def test_a_folder_that_refuses_new_files_is_one_error_and_no_cleanup_error(tmp_path, monkeypatch):
    # Root writes into read-only folders, so the refusal is simulated where it happens:
    # creating the temporary fails, and so would removing it.
    def refuse(*args, **kwargs):
        raise PermissionError(13, "Permission denied")

    monkeypatch.setattr(os, "open", refuse)
    monkeypatch.setattr(os, "unlink", refuse)
    with pytest.raises(InputError, match="cannot write .*Permission denied"):
        write_atomic(tmp_path / "tree.svg", "<svg/>", force=True, option="--svg")


@pytest.mark.skipif(not hasattr(os, "geteuid") or os.geteuid() == 0, reason="root writes anywhere")
def test_a_read_only_folder_is_one_error(tmp_path):
    folder = tmp_path / "locked"
    folder.mkdir()
    folder.chmod(0o555)
    try:
        with pytest.raises(InputError, match="cannot write .*Permission denied"):
            write_atomic(folder / "tree.svg", "<svg/>", force=True, option="--svg")
        assert list(folder.iterdir()) == []
    finally:
        folder.chmod(0o755)
