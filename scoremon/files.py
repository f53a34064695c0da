"""Writing output files atomically: a file appears whole, or the old one stays as it was.

Every file scoremon writes (scored Parquet or CSV, a spec with its baseline, JSON, Markdown,
compiled SQL, the JSON Schema) goes through :func:`atomic_output`: the content is written to a
*partial file* in the same folder, flushed to disk (fsync), then renamed over the target with
:func:`os.replace`, which is atomic on one file system. Any failure — a full disk, an engine
error, Ctrl-C — removes the partial file and leaves the previous output untouched.

A partial file is named ``.<target name>.scoremon-partial-<host>-<pid>-<random>``. A run killed
outright (kill -9, a power cut) cannot remove its own, so every later write into the same
folder removes the partial files of this host whose process id no longer runs
(:func:`remove_stale_partials`); on a folder shared between machines, another host's partial
files are left alone, since a process id means nothing here.

Refusing to replace: an existing output is replaced only when the caller says so
(``replace=True``; the command line's ``--replace``). :func:`check_output` is that check, run
before any work starts.
"""
from __future__ import annotations

import os
import re
import socket
import uuid
from contextlib import contextmanager
from pathlib import Path
from typing import Iterator

from .errors import InputError

PARTIAL_MARK = ".scoremon-partial-"
_PARTIAL = re.compile(r"^\..+" + re.escape(PARTIAL_MARK) + r"(.+)-(\d+)-[0-9a-f]+$")


def is_same_file(a: str | Path, b: str | Path) -> bool:
    """True when ``a`` and ``b`` name one file: equal resolved paths, or the same file on disk."""
    a, b = Path(a), Path(b)
    if a.resolve() == b.resolve():
        return True
    try:
        return os.path.samefile(a, b)
    except OSError:
        return False  # one of them does not exist yet: they cannot be one file


def check_output(path: str | Path, option: str, replace: bool) -> Path:
    """``path`` as a :class:`Path`, once it is known that writing there is allowed.

    Raises :class:`InputError` (naming ``option``) when its folder does not exist, when it is a
    folder, or when it exists and ``replace`` is false.
    """
    target = Path(path)
    if target.is_dir():
        raise InputError(f"{option} {target} is a folder; give a file name")
    if not target.parent.exists():
        raise InputError(f"{option} {target}: folder {target.parent} does not exist; create it or choose another path")
    if target.exists() and not replace:
        raise InputError(f"{option} {target} exists; give --replace to replace it, or choose another name")
    return target


def partial_name(path: Path) -> Path:
    """The partial file a write to ``path`` goes through (see the module docstring)."""
    return path.with_name(f".{path.name}{PARTIAL_MARK}{socket.gethostname()}-{os.getpid()}-{uuid.uuid4().hex[:12]}")


def remove_stale_partials(folder: Path) -> list[Path]:
    """Remove the partial files in ``folder`` left by processes of this host that no longer run; return them."""
    host = socket.gethostname()
    removed = []
    try:
        names = [entry.name for entry in os.scandir(folder)]
    except OSError:
        return removed
    for name in names:
        match = _PARTIAL.match(name)
        if match is None or match.group(1) != host or _is_running(int(match.group(2))):
            continue
        try:
            (folder / name).unlink()
            removed.append(folder / name)
        except OSError:
            pass  # another process removed it first, or it is not ours to remove
    return removed


def _is_running(pid: int) -> bool:
    if pid == os.getpid():
        return True
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return False
    except PermissionError:
        return True  # it runs, under another user
    return True


@contextmanager
def atomic_output(path: str | Path) -> Iterator[Path]:
    """Yield a partial file to write; on success it replaces ``path`` whole, on failure it is removed.

    An :class:`OSError` on the way (a full disk) becomes an :class:`InputError` naming ``path``.

    >>> import tempfile
    >>> target = Path(tempfile.mkdtemp()) / "out.txt"
    >>> with atomic_output(target) as partial:
    ...     _ = partial.write_text("whole")
    >>> target.read_text()
    'whole'
    """
    target = Path(path)
    remove_stale_partials(target.parent)
    partial = partial_name(target)
    try:
        yield partial
        _sync(partial)
        os.replace(partial, target)
        _sync_folder(target.parent)
    except OSError as error:
        # a full disk, a lost permission: the user can act on it, and nothing was written
        raise InputError(f"cannot write {target}: {error.strerror or error}; nothing was written (an earlier "
                         f"{target.name} is unchanged)") from error
    finally:
        if partial.exists():
            partial.unlink()


def write_text(path: str | Path, text: str) -> Path:
    """Write ``text`` (UTF-8) to ``path`` atomically; return the path."""
    target = Path(path)
    with atomic_output(target) as partial:
        with open(partial, "w", encoding="utf-8") as handle:
            handle.write(text)
    return target


def _sync(path: Path) -> None:
    descriptor = os.open(path, os.O_RDONLY)
    try:
        os.fsync(descriptor)
    finally:
        os.close(descriptor)


def _sync_folder(folder: Path) -> None:
    # the rename itself reaches the disk only when the folder is synced (POSIX); not possible on Windows
    try:
        descriptor = os.open(folder, os.O_RDONLY)
    except OSError:
        return
    try:
        os.fsync(descriptor)
    except OSError:
        pass
    finally:
        os.close(descriptor)
