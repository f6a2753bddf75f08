"""The log's file on disk, apart from writing it: its name, a file that is not ours,
a damaged log kept aside, temp files left by a killed save, and a move to a new name
that never replaces a file.
"""

from __future__ import annotations

import contextlib
import errno
import logging
import os
import re
import time
from pathlib import Path

from bedside.errors import InputError, RecordError
from bedside.record.atomic import fsync_folder
from bedside.record.lockfile import drop_lock, lock_path, take_lock
from bedside.record.log import FORMAT_NAME, FORMAT_VERSION, journal_path

log = logging.getLogger("bedside")


def default_log_name(subject_id: str, when: float | None = None) -> str:
    """The name bedside gives a log when the technologist names none:
    ``<subject>-<YYYYmmdd-HHMMSS>.yaml`` (``setup-…`` before a subject is known)."""
    stamp_text = time.strftime("%Y%m%d-%H%M%S", time.localtime(when))
    return f"{subject_id or 'setup'}-{stamp_text}.yaml"


def name_for_subject(name: str, old_subject: str, new_subject: str) -> str:
    """The log's file name once its subject changes: the old subject (or ``setup``) at
    the start of the name is replaced by the new one; any other name gets the new
    subject in front."""
    for prefix in (f"{old_subject}-" if old_subject else "", "setup-"):
        if prefix and name.startswith(prefix):
            return f"{new_subject}-{name[len(prefix):]}"
    return f"{new_subject}-{name}"


def validate_log_name(name: str) -> None:
    if not name or name in (".", "..") or "/" in name or "\x00" in name or name.startswith("."):
        raise InputError(f"{name!r} cannot be a log's file name; accepted: a plain file name, e.g. W3-017.yaml")


def split_name(name: str) -> tuple[str, str]:
    dot = name.rfind(".")
    return (name[:dot], name[dot:]) if dot > 0 else (name, "")


def refuse_foreign_file(path: Path, raw: bytes) -> None:
    """A file that is not one of our logs (a config given by mistake, a newer bedside's
    log) is never moved or overwritten: RecordError. Only a damaged *setup log* — it
    names our format near the top, or is empty or all NUL bytes (what a failing disk
    leaves) — is kept aside and replaced by a new log."""
    head = raw[:2048]
    if not raw.strip(b"\x00 \t\r\n"):
        return
    if FORMAT_NAME.encode() not in head:
        raise RecordError(
            f"{path} exists and is not a bedside setup log; it is left untouched — "
            "choose another file for the log"
        )
    match = re.search(rb"format_version:\s*(\d+)", head)
    if match and int(match.group(1)) > FORMAT_VERSION:
        raise RecordError(
            f"{path} was written by a newer bedside (log format {int(match.group(1))}, this "
            f"one reads {FORMAT_VERSION}); it is left untouched — update bedside or choose another file"
        )


def move_aside(path: Path, when_s: float) -> Path:
    """Rename an unreadable log (and its journal) to ``<name>.corrupt-<time>`` (``-2``,
    … when taken); never overwrites. Returns the new name; OSError when it cannot move."""
    stem = time.strftime("%Y%m%dT%H%M%S", time.localtime(when_s))
    target = path.with_name(f"{path.name}.corrupt-{stem}")
    n = 1
    while target.exists():
        n += 1
        target = path.with_name(f"{path.name}.corrupt-{stem}-{n}")
    if path.exists():
        os.rename(path, target)
    if journal_path(path).exists():  # its journal goes with it
        os.rename(journal_path(path), journal_path(target))
    return target


def remove_stale_temp_files(path: Path) -> None:
    """Temp files of this log left by a process killed mid-save (call only while holding
    the log's lock, so no other writer of this log can own them)."""
    for stale in path.parent.glob(f".{path.name}.*.tmp"):
        with contextlib.suppress(OSError):
            stale.unlink()
            log.info("removed %s, left by a session killed while saving", stale)


def move_to_free_name(old: Path, target: Path) -> tuple[Path, int | None]:
    """Give the log file (if it is on disk yet) the first free name from ``target``
    on (``<stem>-2<suffix>``, -3, …), with that name's writer lock held; returns the
    name and the lock's fd. Raises OSError when no move is possible."""
    stem, suffix = split_name(target.name)
    for n in range(1, 1000):
        candidate = target if n == 1 else target.with_name(f"{stem}-{n}{suffix}")
        if candidate.exists() or candidate.is_symlink():
            continue
        lock_fd = take_lock(lock_path(candidate))
        if lock_fd is False:
            continue  # another session writes a log of that name
        assert not isinstance(lock_fd, bool)
        try:
            if old.exists() and not _link_or_reserve_and_rename(old, candidate):
                raise FileExistsError  # taken between the check and the move
        except FileExistsError:
            drop_lock(candidate, lock_fd)
            continue
        except OSError:
            drop_lock(candidate, lock_fd)
            raise
        fsync_folder(old.parent)
        return candidate, lock_fd
    raise OSError(errno.EEXIST, f"no free name like {target.name}")


def _link_or_reserve_and_rename(old: Path, new: Path) -> bool:
    """Move ``old`` to ``new`` without ever replacing a file at ``new``. False when
    ``new`` was taken meanwhile (``old`` is then untouched)."""
    try:
        os.link(old, new)  # fails with EEXIST rather than replace: the no-overwrite rename
    except FileExistsError:
        return False
    except OSError as exc:
        if exc.errno not in (errno.EPERM, errno.EOPNOTSUPP, errno.ENOTSUP, errno.EMLINK, errno.EXDEV):
            raise
        # No hard links here: reserve the name (exclusive create), then rename onto it.
        try:
            os.close(os.open(new, os.O_WRONLY | os.O_CREAT | os.O_EXCL, 0o600))
        except FileExistsError:
            return False
        try:
            os.replace(old, new)
        except OSError:
            with contextlib.suppress(OSError):
                new.unlink()
            raise
        return True
    try:
        old.unlink()
    except OSError as exc:  # both names hold the log; the new one is written from now on
        log.warning("setup log: the old name %s could not be removed (%s)", old, exc.strerror)
    return True
