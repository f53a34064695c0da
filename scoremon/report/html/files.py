"""Writing a report file: whole or not at all, and never over an existing file unless asked.

:func:`check_target` runs before any work (so a long run does not end in a refusal) and
:func:`write_text_file` writes: the text goes to a temporary file in the same folder, then
takes the target's name in one step — ``os.link`` when the target must not exist (it fails,
atomically, if the file appeared meanwhile) or ``os.replace`` with ``replace``. A reader never
sees half a file; a failed write leaves no temporary file behind.

Kept to these two functions so that a shared atomic writer can take their place.
"""
from __future__ import annotations

import os
import uuid
from pathlib import Path

from ...errors import InputError


def check_target(path: str | Path, replace: bool, option: str = "--html") -> Path:
    """``path`` as a Path, or :class:`InputError` when its folder is missing or it exists
    (and ``replace`` is false)."""
    target = Path(path)
    if not target.parent.exists():
        raise InputError(f"{option} {target}: folder {target.parent} does not exist; create it or choose another path")
    if target.is_dir():
        raise InputError(f"{option} {target} is a folder; give a file name")
    if target.exists() and not replace:
        raise InputError(f"{option} {target} exists; give another name, or add --replace to overwrite it")
    return target


def write_text_file(path: str | Path, text: str, replace: bool, option: str = "--html") -> Path:
    """Write ``text`` (UTF-8) to ``path`` whole; see the module docstring. Returns the path."""
    target = check_target(path, replace, option)
    temporary = target.with_name(f".{target.name}.{uuid.uuid4().hex}.partial")
    try:
        temporary.write_text(text, encoding="utf-8")
        if replace:
            os.replace(temporary, target)
        else:
            try:
                os.link(temporary, target)
            except FileExistsError:
                raise InputError(f"{option} {target} appeared while the report was being written; give another "
                                 "name, or add --replace to overwrite it") from None
            except OSError:  # a file system without hard links: check, then rename (a narrow race)
                check_target(target, replace, option)
                os.replace(temporary, target)
    finally:
        if temporary.exists():
            temporary.unlink()
    return target
