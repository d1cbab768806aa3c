"""Safe output files: refuse to overwrite without force, and never leave half a file."""

from __future__ import annotations

import os

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
