"""Safe output files: never replace a user's file unless told to, never leave half a file.

Text goes to a temporary file in the target's own folder, is flushed to disk, and
only then takes the target's name in one step (``os.replace``, or a hard link when
replacing is not allowed), so a crash leaves either the old file or the new one.

Only a regular file is ever replaced, and only with ``force``: a folder, a FIFO, a
device, a socket or a symbolic link is refused, and so is the scenario being read. A
path that ends in a separator names a folder, never a file.
"""

from __future__ import annotations

import contextlib
import os
import secrets
import stat
from collections.abc import Iterable
from pathlib import Path

from clockplan.errors import InputError
from clockplan.text_safety import printable, shorten

__all__ = ["check_target", "write_atomic"]

_SEPARATORS = tuple(separator for separator in (os.sep, os.altsep) if separator)


def _shown(path: str | Path) -> str:
    """A path as messages show it: escaped, and cut when absurdly long."""
    return printable(shorten(str(path), 200))


def _status(path: Path, option: str) -> os.stat_result | None:
    """``lstat`` of ``path``, None when nothing is there; any other failure is one line."""
    try:
        return os.lstat(path)
    except (FileNotFoundError, NotADirectoryError):
        return None
    except OSError as error:
        raise InputError(option, f"cannot use {_shown(path)} ({error.strerror or error})") from None
    except ValueError as error:  # a NUL character in the path
        raise InputError(option, f"cannot use {_shown(path)} ({error})") from None


def _kind(mode: int) -> str:
    """What a non-regular file is, for the message that refuses to replace it."""
    kinds = (
        (stat.S_ISDIR, "a folder"),
        (stat.S_ISLNK, "a symbolic link"),
        (stat.S_ISFIFO, "a FIFO (named pipe)"),
        (stat.S_ISCHR, "a character device"),
        (stat.S_ISBLK, "a block device"),
        (stat.S_ISSOCK, "a socket"),
    )
    return next((name for test, name in kinds if test(mode)), "a special file")


def _identity(path: str | Path) -> tuple[int, int] | None:
    """The device and inode ``path`` leads to, to recognise one file under two names."""
    try:
        info = os.stat(path)
    except (OSError, ValueError):
        return None
    return info.st_dev, info.st_ino


def check_target(
    path: str | Path, *, force: bool, option: str, inputs: Iterable[str | Path] = ()
) -> Path:
    """Refuse an output path that would lose something: an existing file (without
    ``force``), anything but a regular file, one of ``inputs``, a folder, a missing folder."""
    text = os.fspath(path)
    if not text:
        raise InputError(option, "the file name is empty; give a file to write")
    if text.endswith(_SEPARATORS):
        problem = f"{_shown(text)} ends with a separator, so it names a folder; give a file name"
        raise InputError(option, problem)
    target = Path(text)
    info = _status(target, option)
    if info is not None:
        if stat.S_ISDIR(info.st_mode):
            raise InputError(option, f"{_shown(target)} is a folder; give a file name")
        if not stat.S_ISREG(info.st_mode):
            kind = _kind(info.st_mode)
            problem = f"{_shown(target)} is {kind}; only a regular file is ever replaced"
            raise InputError(option, problem)
        here = (info.st_dev, info.st_ino)
        if any(_identity(source) == here for source in inputs):
            problem = f"{_shown(target)} is the scenario being read; write elsewhere"
            raise InputError(option, problem)
        if not force:
            raise _exists(target, option)
    folder = _status(target.parent, option)
    if folder is None or not (stat.S_ISDIR(folder.st_mode) or target.parent.is_dir()):
        raise InputError(
            option, f"{_shown(target)}: the folder {_shown(target.parent)} does not exist"
        )
    return target


def write_atomic(
    path: str | Path, text: str, *, force: bool, option: str, inputs: Iterable[str | Path] = ()
) -> Path:
    """Write ``text`` (UTF-8) to ``path`` through a temporary file in the same folder."""
    inputs = tuple(inputs)
    target = check_target(path, force=force, option=option, inputs=inputs)
    # A short name of its own, so a target name near the system's limit still has a temporary.
    temporary = target.parent / f".clockplan-{secrets.token_hex(4)}.tmp"
    created = False
    try:
        descriptor = os.open(temporary, os.O_WRONLY | os.O_CREAT | os.O_EXCL, 0o666)
        created = True
        with os.fdopen(descriptor, "w", encoding="utf-8", newline="\n") as stream:
            stream.write(text)
            stream.flush()
            os.fsync(stream.fileno())
        check_target(target, force=force, option=option, inputs=inputs)  # nothing swapped in
        _move_into_place(temporary, target, force=force, option=option)
    except OSError as error:
        problem = f"cannot write {_shown(target)} ({error.strerror or error})"
        raise InputError(option, problem) from None
    finally:
        if created:  # after a hard link or a failure; never raise over the first error
            with contextlib.suppress(OSError):
                os.unlink(temporary)
    return target


def _move_into_place(temporary: Path, target: Path, *, force: bool, option: str) -> None:
    """Give the finished file its name; without ``force``, never over an existing file."""
    if force:
        os.replace(temporary, target)
        return
    try:
        os.link(temporary, target)  # fails if the target appeared meanwhile
    except FileExistsError:
        raise _exists(target, option) from None
    except OSError:  # no hard links on this file system: check, then rename
        if _status(target, option) is not None:
            raise _exists(target, option) from None
        os.replace(temporary, target)


def _exists(target: Path, option: str) -> InputError:
    return InputError(option, f"{_shown(target)} already exists; add --force to replace it")
