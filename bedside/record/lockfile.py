"""One writer per log file: an advisory lock (``.<name>.lock`` beside the log, holding
the writer's process id) that a second session on the same file is refused by.

``flock`` is released by the kernel when the process dies, so a session killed with
SIGKILL never leaves its log locked; the lock file itself may stay and is reused.
"""

from __future__ import annotations

import contextlib
import fcntl
import os
from pathlib import Path

from bedside.errors import LogSaveError, RecordError


def lock_path(log_path: Path) -> Path:
    """The lock file of the log at ``log_path``."""
    return log_path.with_name(f".{log_path.name}.lock")


def take_lock(path: Path) -> int | None | bool:
    """The lock at ``path``: its fd; None when no lock file can be made there (the
    folder is missing or read-only: saving will say why); False when another session
    holds it."""
    try:
        fd = os.open(path, os.O_RDWR | os.O_CREAT, 0o600)
    except OSError:
        return None
    try:
        fcntl.flock(fd, fcntl.LOCK_EX | fcntl.LOCK_NB)
    except OSError:
        os.close(fd)
        return False
    with contextlib.suppress(OSError):
        os.ftruncate(fd, 0)
        os.write(fd, str(os.getpid()).encode())
    return fd


def drop_lock(log_path: Path, fd: int | None | bool) -> None:
    """Remove the lock file of ``log_path`` and close ``fd`` (a result of :func:`take_lock`)."""
    if isinstance(fd, bool) or fd is None:
        return
    with contextlib.suppress(OSError):
        lock_path(log_path).unlink()
    with contextlib.suppress(OSError):
        os.close(fd)


def holder(path: Path) -> str:
    """The process id written in the lock file at ``path`` ("" when it cannot be read)."""
    try:
        return path.read_bytes()[:32].decode("ascii", "replace").strip()
    except OSError:
        return ""


class WriterLock:
    """The writer lock of one log; :meth:`move` follows the log to a new name."""

    def __init__(self, log_path: Path) -> None:
        self.log_path = log_path
        self.fd: int | None = None

    @property
    def held(self) -> bool:
        return self.fd is not None

    def acquire(self, *, strict: bool) -> None:
        """Take the lock if not held yet. Another session holding it: RecordError
        (``strict``, when the session opens) or LogSaveError (a later save). No lock
        file possible here (folder missing or read-only): nothing, saving reports it
        and the lock is tried again at the next save."""
        if self.fd is not None:
            return
        path = lock_path(self.log_path)
        fd = take_lock(path)
        if fd is None:
            return
        if fd is False:
            other = holder(path)
            message = (
                f"{self.log_path} is being written by another bedside session"
                + (f" (process {other})" if other else "")
                + "; close it first or choose another log file"
            )
            if strict:
                raise RecordError(message)
            raise LogSaveError(message)
        assert not isinstance(fd, bool)
        self.fd = fd

    def release(self) -> None:
        drop_lock(self.log_path, self.fd)
        self.fd = None

    def move(self, new_log_path: Path, new_fd: int | None) -> None:
        """The log now has ``new_log_path`` and ``new_fd`` is its lock (taken by the
        caller with :func:`take_lock`): the old lock file goes."""
        drop_lock(self.log_path, self.fd)
        self.log_path, self.fd = new_log_path, new_fd
