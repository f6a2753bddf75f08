"""Atomic, owner-only file writes: temp file in the same folder, fsync, rename, fsync the folder.

The one atomic writer of bedside: the setup log, its journal head and rescue copy, the
BIDS electrode files (``bedside.placement.bids``) and the app's marking sheet
(``bedside.ui.export``) all write through :func:`atomic_write_text`.

A reader (or a crash at any instant) sees either the old file or the new one, never a
half-written one. Files are created with mode 0600 (owner read/write only): a setup log
is clinical documentation, even when it holds only a pseudonymous ID.

OS errors are translated here, once, into :class:`~bedside.errors.LogSaveError` (or the
``error`` class the caller names, e.g. :class:`~bedside.errors.RecordError` for a file
that is not the log) with a message that starts "cannot write <file>" and says what
happened in plain words (disk full, read-only, missing folder).
"""

from __future__ import annotations

import contextlib
import errno
import os
import tempfile
from collections.abc import Callable
from pathlib import Path
from typing import BinaryIO

from bedside.errors import LogSaveError, RecordError

#: Owner read/write only.
FILE_MODE = 0o600


def describe_os_error(exc: OSError, path: Path) -> str:
    """Plain words for the OS errors a save meets at a bedside (without the file's name;
    :func:`write_error` puts it in front)."""
    code = exc.errno
    if code == errno.ENOSPC:
        return f"the disk holding {path.parent} is full"
    if code == errno.EDQUOT:
        return f"the disk quota for {path.parent} is exhausted"
    if code == errno.EROFS:
        return f"{path.parent} is on a read-only file system"
    if code in (errno.EACCES, errno.EPERM):
        return f"no permission to write in {path.parent}"
    if code == errno.ENOENT:
        return f"the folder {path.parent} does not exist (create it or choose another path)"
    if code == errno.ENOTDIR:
        return f"{path.parent} is not a folder"
    if code == errno.EISDIR:
        return f"{path} is a folder, not a file"
    reason = exc.strerror or exc.__class__.__name__
    return f"cannot write {path} ({reason})"


def write_error(exc: OSError, path: Path) -> str:
    """"cannot write <name>: <plain words>" for an OS error met writing ``path``."""
    words = describe_os_error(exc, path)
    return words if words.startswith("cannot write") else f"cannot write {path.name}: {words}"


def fsync_folder(folder: Path) -> None:
    # Makes the rename itself durable. Some file systems refuse O_RDONLY on a folder
    # or fsync on it (EINVAL); the rename has still happened, so that is not an error.
    try:
        fd = os.open(folder, os.O_RDONLY)
    except OSError:
        return
    try:
        os.fsync(fd)
    except OSError:
        pass
    finally:
        os.close(fd)


def atomic_write(
    path: Path | str,
    writer: Callable[[BinaryIO], None],
    *,
    mode: int = FILE_MODE,
    error: type[RecordError] = LogSaveError,
    make_folder: bool = False,
) -> Path:
    """Write ``path`` atomically with ``writer(file)``; returns the path written.

    Raises ``error`` (:class:`LogSaveError` unless told; never a bare OSError) when the
    write fails; the old file, if any, is then untouched and the temp file is removed.
    make_folder: create the missing folders first (an export folder; never the log's).
    """
    path = Path(path)
    folder = path.parent if str(path.parent) else Path(".")
    try:
        if make_folder:
            folder.mkdir(parents=True, exist_ok=True)
        fd, tmp_name = tempfile.mkstemp(prefix=f".{path.name}.", suffix=".tmp", dir=folder)
    except OSError as exc:
        raise error(write_error(exc, path)) from exc
    tmp = Path(tmp_name)
    try:
        try:
            with os.fdopen(fd, "wb") as fh:
                os.fchmod(fh.fileno(), mode)
                writer(fh)
                fh.flush()
                os.fsync(fh.fileno())
            os.replace(tmp, path)
        except OSError as exc:
            raise error(write_error(exc, path)) from exc
    except BaseException:
        with contextlib.suppress(OSError):
            tmp.unlink()
        raise
    fsync_folder(folder)
    return path


def atomic_write_text(
    path: Path | str,
    text: str,
    *,
    mode: int = FILE_MODE,
    error: type[RecordError] = LogSaveError,
    make_folder: bool = False,
) -> Path:
    """Write UTF-8 text atomically, exactly as given (no newline translation; see
    :func:`atomic_write`)."""
    data = text.encode("utf-8")

    def write(fh: BinaryIO) -> None:
        fh.write(data)

    return atomic_write(path, write, mode=mode, error=error, make_folder=make_folder)


def append_durable(path: Path | str, data: bytes, at: int, *, mode: int = FILE_MODE) -> int:
    """Write ``data`` at byte ``at`` of ``path`` — the end of what is known to be good —
    cutting anything after it (what a failed earlier attempt left), and fsync: once this
    returns, the bytes survive a power cut. Returns the new good length. A failure raises
    :class:`LogSaveError` and cuts the file back to ``at`` where it can; a crash mid-write
    leaves a partial last line, which bedside's journal reader ignores."""
    path = Path(path)
    try:
        fd = os.open(path, os.O_WRONLY | os.O_CREAT, mode)
    except OSError as exc:
        raise LogSaveError(write_error(exc, path)) from exc
    try:
        os.ftruncate(fd, at)
        os.lseek(fd, at, os.SEEK_SET)
        view = memoryview(data)
        while view:
            written = os.write(fd, view)
            view = view[written:]
        os.fsync(fd)
    except OSError as exc:
        with contextlib.suppress(OSError):
            os.ftruncate(fd, at)
        raise LogSaveError(write_error(exc, path)) from exc
    finally:
        os.close(fd)
    return at + len(data)
