"""Safe output files: never replace a user's file unless told to, never leave half a file.

Text goes to a temporary file in the target's own folder, is flushed to disk, and
only then takes the target's name in one step (``os.replace``, or a hard link when
replacing is not allowed), so a crash leaves either the old file or the new one.
"""

from __future__ import annotations

import os
import secrets
from pathlib import Path

from clockplan.errors import InputError

__all__ = ["check_target", "write_atomic"]


def check_target(path: str | Path, *, force: bool, option: str) -> Path:
    """Refuse an output path that exists (without ``force``), is a folder, or has no folder."""
    target = Path(path)
    if target.is_dir():
        raise InputError(option, f"{target} is a folder; give a file name")
    if not target.parent.is_dir():
        raise InputError(option, f"{target}: the folder {target.parent} does not exist")
    if not force and (target.exists() or target.is_symlink()):
        raise _exists(target, option)
    return target


def write_atomic(path: str | Path, text: str, *, force: bool, option: str) -> Path:
    """Write ``text`` (UTF-8) to ``path`` through a temporary file in the same folder."""
    target = check_target(path, force=force, option=option)
    temporary = target.with_name(f".{target.name}.{secrets.token_hex(4)}.tmp")
    try:
        descriptor = os.open(temporary, os.O_WRONLY | os.O_CREAT | os.O_EXCL, 0o666)
        with os.fdopen(descriptor, "w", encoding="utf-8", newline="\n") as stream:
            stream.write(text)
            stream.flush()
            os.fsync(stream.fileno())
        _move_into_place(temporary, target, force=force, option=option)
    except OSError as error:
        raise InputError(option, f"cannot write {target} ({error.strerror or error})") from None
    finally:
        temporary.unlink(missing_ok=True)
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
        if target.exists():
            raise _exists(target, option) from None
        os.replace(temporary, target)


def _exists(target: Path, option: str) -> InputError:
    return InputError(option, f"{target} already exists; add --force to replace it")
