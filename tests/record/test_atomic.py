"""Atomic writes: a failure at any step leaves the old file whole and no temp file.
errno values: POSIX (ENOSPC "No space left on device", EROFS "Read-only file system")."""

from __future__ import annotations

import errno
import os
import stat
from pathlib import Path
from typing import BinaryIO

import pytest

from bedside.errors import LogSaveError
from bedside.record import atomic
from bedside.record.atomic import atomic_write, atomic_write_text


def test_disk_filling_up_mid_write_keeps_the_old_file(tmp_path: Path) -> None:
    path = tmp_path / "log.yaml"
    atomic_write_text(path, "old and complete\n")

    def half_then_full(fh: BinaryIO) -> None:
        fh.write(b"new but only ha")
        raise OSError(errno.ENOSPC, os.strerror(errno.ENOSPC))

    with pytest.raises(LogSaveError, match="is full"):
        atomic_write(path, half_then_full)
    assert path.read_text() == "old and complete\n"
    assert [p.name for p in tmp_path.iterdir()] == ["log.yaml"]


def test_fsync_failure_is_reported_too(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    path = tmp_path / "log.yaml"
    atomic_write_text(path, "old\n")

    def fsync(fd: int) -> None:
        raise OSError(errno.EIO, os.strerror(errno.EIO))

    monkeypatch.setattr(atomic.os, "fsync", fsync)
    with pytest.raises(LogSaveError, match="Input/output error"):
        atomic_write_text(path, "new\n")
    assert path.read_text() == "old\n"


@pytest.mark.parametrize(
    ("code", "words"),
    [(errno.EROFS, "read-only"), (errno.EACCES, "no permission"), (errno.ENOENT, "does not exist")],
)
def test_temp_file_creation_failures_are_in_plain_words(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch, code: int, words: str
) -> None:
    def mkstemp(**kwargs: object) -> tuple[int, str]:
        raise OSError(code, os.strerror(code))

    monkeypatch.setattr(atomic.tempfile, "mkstemp", mkstemp)
    with pytest.raises(LogSaveError, match=words):
        atomic_write_text(tmp_path / "x.yaml", "x")


def test_mode_is_owner_only_even_with_a_permissive_umask(tmp_path: Path) -> None:
    old = os.umask(0o000)
    try:
        path = atomic_write_text(tmp_path / "x.yaml", "x")
    finally:
        os.umask(old)
    assert stat.S_IMODE(path.stat().st_mode) == 0o600
