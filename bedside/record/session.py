"""A running setup session: records into a :class:`~bedside.record.log.SetupLog` and
autosaves it, so a crash loses at most the last autosave interval.

::

    with SessionRecorder.open("logs/W3-017.yaml", technologist="JMK", subject_id="W3-017",
                              config_paths=[CONFIG_DIR / "quality.yaml"]) as rec:
        rec.set_plan(plan)
        rec.set_stream(source.identity, source.channels)
        for frame in frames:           # from any thread
            rec.on_frame(frame)
        rec.sign_off("JMK")
    # close() (here by the with-block) stamps the end time and saves a last time.

Saving: a background thread (:mod:`bedside.record.autosave`) writes the log at least
every ``autosave_s`` seconds (2 s at most) whenever it changed (:mod:`bedside.record.saving`:
the base file, atomically and owner-only, then a journal of changes). If a save fails
(disk full, read-only, folder missing) the log stays in memory, :attr:`SessionRecorder.status`
says why (``status.error``), a warning goes to the ``bedside`` logger once per new
problem, the outage is written into the log's events, and the save is retried on every
tick until it works. Nothing is dropped.

Resuming (:mod:`bedside.record.resume`): opening a path that holds a valid log continues
that log (the same subject only). A file that cannot be parsed is never overwritten: it
is renamed aside to ``<name>.corrupt-<time>`` and a new log is started; ``status.notice``
says so.

One writer per file: an advisory lock (:mod:`bedside.record.lockfile`) refuses a second
session on the same file. What a frame changes is decided by
:class:`~bedside.record.changes.ChangeDetector` (no thread, no clock); this class applies
it under its lock. Threads: any thread may call the recording methods (one ``RLock``
guards the log); saves run one at a time (the autosave thread, ``save_now``, ``close``).
The app reaches the recorder through :class:`~bedside.record.worker.LogWorker`.

Why about 470 lines: what is left here is the file's life (open or resume, save, rename
with the subject ID, close) under the one lock; the pure parts (changes, files, resume,
saving, recording, lock file, autosave) are their own modules already.
"""

from __future__ import annotations

import contextlib
import logging
import threading
import time
from collections.abc import Callable, Iterable
from dataclasses import dataclass
from datetime import datetime
from pathlib import Path
from types import TracebackType
from typing import TYPE_CHECKING

from bedside.config import config_hash
from bedside.errors import ConfigError, InputError, LogSaveError, RecordError
from bedside.record import autosave
from bedside.record.atomic import describe_os_error
from bedside.record.autosave import AUTOSAVE_MAX_S, AUTOSAVE_MIN_S, Autosaver, write_rescue_copy
from bedside.record.files import (
    default_log_name,
    move_aside,
    move_to_free_name,
    name_for_subject,
    remove_stale_temp_files,
    validate_log_name,
)
from bedside.record.ids import (
    validate_initials,
    validate_subject_id,
)
from bedside.record.lockfile import WriterLock
from bedside.record.log import (
    Event,
    journal_path,
    shallow_copy,
)
from bedside.record.recording import Recording
from bedside.record.resume import open_log
from bedside.record.saving import LogFile

if TYPE_CHECKING:
    from bedside.checks.settings import LongTermSettings

__all__ = [
    "AUTOSAVE_MAX_S", "AUTOSAVE_MIN_S", "RecorderStatus", "SessionRecorder", "default_log_name",
    "name_for_subject", "optional_recorder", "validate_log_name",
]

log = logging.getLogger("bedside")


@dataclass(frozen=True)
class RecorderStatus:
    """How saving is going, for the status bar and the Log view.

    last_saved: when the log last reached the disk (None: not yet). error: why the
    last save failed, in plain words (None when the last save worked); the log is kept
    in memory and retried. unsaved_changes: the disk copy is behind. notice: something
    the technologist should know about the file (e.g. a corrupt log was kept aside).
    """

    path: Path
    last_saved: datetime | None
    error: str | None
    unsaved_changes: bool
    saves: int = 0
    failed_saves: int = 0
    notice: str | None = None
    closed: bool = False


class SessionRecorder(Recording):
    """Records one setup session into a log and keeps the file up to date. Thread-safe.

    The methods that add to the log are :class:`~bedside.record.recording.Recording`'s;
    this class opens, saves, renames and closes the file."""

    # -- opening -------------------------------------------------------------------

    @classmethod
    def open(
        cls,
        path: Path | str,
        *,
        technologist: str = "",
        subject_id: str = "",
        config_paths: Iterable[Path | str] = (),
        autosave_s: float = AUTOSAVE_MAX_S,
        clock: Callable[[], float] | None = None,
        allow_letters_only_id: bool = False,
        long_term: LongTermSettings | None = None,
    ) -> SessionRecorder:
        """Start (or resume) the session logged at ``path`` and its autosave thread.

        long_term: the checks' long_term settings (a profile may set them; None: the
        defaults). Raises InputError for bad initials, ID or autosave interval;
        RecordError when an existing file cannot be read, belongs to another subject,
        or another session writes it. A full/read-only disk or missing folder does not
        raise: it shows in :attr:`status` and saving is retried.
        """
        path = Path(path)
        if isinstance(autosave_s, bool) or not (
            isinstance(autosave_s, int | float) and AUTOSAVE_MIN_S <= autosave_s <= AUTOSAVE_MAX_S
        ):
            raise InputError(
                f"autosave interval is {autosave_s!r} s; accepted: {AUTOSAVE_MIN_S} to "
                f"{AUTOSAVE_MAX_S} s (a crash may lose at most this much)"
            )
        initials = validate_initials(technologist)
        subject = validate_subject_id(subject_id, allow_letters_only=allow_letters_only_id)
        paths = [Path(p) for p in config_paths]
        try:
            digest = config_hash(*paths) if paths else ""
        except ConfigError as exc:  # the guarded read names the file and what it found
            raise RecordError(f"a config file cannot be read for the log's config hash: {exc}") from exc
        if path.is_dir():
            raise RecordError(f"{path} is a folder; give a file name for the log, e.g. {path / 'W3-017.yaml'}")
        if long_term is None:
            from bedside.checks.settings import LongTermSettings

            long_term = LongTermSettings()
        rec = cls(path, clock or time.time, float(autosave_s), allow_letters_only_id, long_term)
        rec._start(initials, subject, digest, tuple(p.name for p in paths))
        return rec

    def __init__(self, path: Path, clock: Callable[[], float], autosave_s: float, allow_letters_only_id: bool,
                 long_term: LongTermSettings) -> None:
        # Use SessionRecorder.open(); the constructor only sets fields.
        super().__init__(path, clock, long_term)
        self._allow_letters_only_id = allow_letters_only_id
        self._io_lock = threading.Lock()  # one save at a time
        self._file = LogFile(path, clock)
        self._writer_lock = WriterLock(path)
        self._saved_generation = -1
        self._last_saved: datetime | None = None
        self._error: str | None = None
        self._saves = 0
        self._failed = 0
        self._notice: str | None = None
        self._aside_pending: str | None = None  # a corrupt file not yet moved aside
        self._resumed = False
        self._discarded = False
        self._autosave = Autosaver(autosave_s, self._needs_save, self._try_save)

    def _save_soon(self) -> None:
        self._autosave.wake()

    def _start(self, initials: str, subject: str, digest: str, config_files: tuple[str, ...]) -> None:
        self._writer_lock.acquire(strict=True)
        if self._writer_lock.held:
            remove_stale_temp_files(self._path)
        now = self._now()
        try:
            opened = open_log(self._path, now, initials, subject, digest, config_files)
        except BaseException:
            self._writer_lock.release()
            raise
        self._log, self._resumed, self._aside_pending = opened.log, opened.resumed, opened.unreadable
        if self._resumed:
            self._changes.resume(self._log)
            log.info("setup log %s resumed (%d timeline entries)", self._path, len(self._log.timeline))
        if self._aside_pending is not None:
            self._log.events.append(
                Event(now, "corrupt_log", f"the file at this path was unreadable: {self._aside_pending}")
            )
            try:
                self._move_corrupt_aside()
            except LogSaveError as exc:
                # Not moved: no save may replace it; every save retries the move.
                self._save_failed(str(exc))
        self._touch()
        self._try_save()
        self._autosave.start()
        autosave.close_at_exit(self)

    def _move_corrupt_aside(self) -> None:
        """Rename the unreadable file aside (never overwrite it). Leaves _aside_pending set
        on failure so no save can replace it."""
        if self._aside_pending is None:
            return
        try:
            target = move_aside(self._path, self._clock())
        except OSError as exc:
            raise LogSaveError(
                f"{self._path} is unreadable and could not be moved aside "
                f"({describe_os_error(exc, self._path)}); it is not overwritten"
            ) from exc
        reason = self._aside_pending
        self._aside_pending = None
        self._notice = (
            f"the existing log could not be read ({reason}); it was kept as {target} "
            "and a new log was started"
        )
        log.warning("setup log: %s", self._notice)
        with self._lock:
            self._log.events.append(Event(self._now(), "corrupt_log_kept_aside", str(target)))
            self._touch()

    # -- recording that moves the file --------------------------------------------

    def set_subject(self, subject_id: str, rename_file: bool = False) -> None:
        """Set the subject ID. rename_file: the log's name was made by bedside from the
        subject (:func:`default_log_name`), so it follows the new ID: ``DEMO-001-<time>``
        becomes ``W3-017-<time>`` (see :meth:`rename`); a name the technologist chose
        is never changed."""
        subject = validate_subject_id(subject_id, allow_letters_only=self._allow_letters_only_id)
        with self._lock:
            self._check_open()
            before = self._log.subject_id
            if subject != before:
                if before:
                    self._log.events.append(Event(self._now(), "subject", f"{before} → {subject}"))
                self._log.subject_id = subject
                self._touch()
        if rename_file and subject and subject != before:
            self.rename(self._path.with_name(name_for_subject(self._path.name, before, subject)))

    def rename(self, target: Path | str) -> Path:
        """Move the log to ``target`` in the same folder, atomically, never replacing a
        file: if ``target`` exists, ``<stem>-2<suffix>`` (then -3, …) is taken. Returns
        the path the log now has (also :attr:`path` and ``status.path``).

        The file is hard-linked under the new name, then the old name is removed, so at
        every instant the log is on disk under one name or both, never neither; where
        the file system has no hard links the new name is first reserved (created
        empty, exclusively) and the log renamed onto it. A failure keeps the old name,
        says why in ``status.notice`` and the log's events, and raises nothing: the
        session goes on under its old name."""
        self._check_open()
        target = Path(target)
        if target.parent != self._path.parent:
            raise RecordError(f"the log can only be renamed within its folder {self._path.parent}")
        validate_log_name(target.name)
        with self._io_lock:
            old = self._path
            if target.name == old.name:
                return old
            try:
                # The whole log into the one file first (its journal folded in and
                # removed), so the file that moves holds everything.
                self._save_locked(compact=True)
                new, lock_fd = move_to_free_name(old, target)
            except LogSaveError as exc:
                with self._lock:
                    self._notice = f"the log keeps its name {old.name}: it could not be saved before renaming ({exc})"
                    self._log.events.append(Event(self._now(), "log_rename_failed", self._notice))
                    self._touch()
                log.warning("setup log: %s", self._notice)
                return old
            except OSError as exc:
                with self._lock:
                    self._notice = (
                        f"the log keeps its name {old.name}: it could not be renamed to "
                        f"{target.name} ({describe_os_error(exc, target)})"
                    )
                    self._log.events.append(Event(self._now(), "log_rename_failed", self._notice))
                    self._touch()
                log.warning("setup log: %s", self._notice)
                return old
            with self._lock:
                self._path = self._file.path = new
                self._writer_lock.move(new, lock_fd)
                self._event("log_renamed", f"{old.name} → {new.name}")
        log.info("setup log renamed: %s → %s", old, new)
        self._autosave.wake()  # the rename event goes out with the next autosave
        return new

    # -- reading -------------------------------------------------------------------

    @property
    def path(self) -> Path:
        return self._path

    @property
    def status(self) -> RecorderStatus:
        with self._lock:
            return RecorderStatus(
                path=self._path,
                last_saved=self._last_saved,
                error=self._error,
                unsaved_changes=self._generation != self._saved_generation,
                saves=self._saves,
                failed_saves=self._failed,
                notice=self._notice,
                closed=self._closed,
            )

    # -- saving --------------------------------------------------------------------

    def save_now(self) -> None:
        """Save at once; raises LogSaveError if it fails (the log stays in memory)."""
        self._save()

    def _save(self, compact: bool = False) -> None:
        with self._io_lock:
            self._save_locked(compact)

    def _save_locked(self, compact: bool = False) -> None:
        """One save (the caller holds _io_lock): the changes since the last save appended
        to the journal (fsynced), or — at the first save, and with ``compact`` (close,
        rename) — the whole log written as the base file, atomically, and the journal
        started afresh (``compact``: removed)."""
        try:
            self._writer_lock.acquire(strict=False)
            if self._aside_pending is not None:
                self._move_corrupt_aside()
            if not self._file.has_base or compact:
                with self._lock:
                    generation = self._generation
                    view = shallow_copy(self._log)
                self._file.write_base(view, keep_journal=not compact)
            else:
                # Under the lock only what changed is looked at; written outside it, so
                # on_frame never waits for the disk.
                with self._lock:
                    generation = self._generation
                    step = self._file.journal_step(self._log, generation != self._saved_generation, self._now())
                self._file.append(step)
        except LogSaveError as exc:
            self._save_failed(str(exc))
            raise
        with self._lock:
            self._saved_generation = max(self._saved_generation, generation)
            self._last_saved = self._now()
            self._saves += 1
            if self._error is not None:
                log.warning("setup log saved again to %s after %d failed attempt(s)", self._path, self._failed)
                # The recovery event itself goes out on the next tick.
                self._event("save_recovered", f"after: {self._error}", self._last_saved)
                self._error = None

    def _save_failed(self, message: str) -> None:
        with self._lock:
            self._failed += 1
            if message != self._error:
                log.warning(
                    "setup log NOT saved to %s: %s. It is kept in memory; retrying every %g s",
                    self._path,
                    message,
                    self._autosave.interval_s,
                )
                self._event("save_failed", message)
            self._error = message

    def _needs_save(self) -> bool:
        with self._lock:
            return self._generation != self._saved_generation or self._error is not None

    def _try_save(self) -> bool:
        try:
            self._save()
        except LogSaveError:
            return False
        return True

    # -- closing -------------------------------------------------------------------

    def close(self, discard_if_empty: bool = False) -> None:
        """Stamp the end time, stop autosaving and save a last time.

        discard_if_empty: a new log that recorded nothing (no measurements, stream,
        verdicts, impedances, notes or sign-off) is removed instead (see :attr:`discarded`).

        If that save fails, a copy is written to a rescue folder and LogSaveError
        names both places; the log also stays readable via :meth:`dump_text`.
        Idempotent."""
        with self._lock:
            if self._closed:
                return
            self._closed = True
            now = self._now()
            self._log.trends.extend(self._changes.close())  # the bin the recording ended in
            self._log.ended_at = now
            self._event("closed", "", now)
            empty = discard_if_empty and not self._resumed and self._records_nothing()
        self._autosave.stop()
        autosave.closed(self)
        if empty:
            # Opened and left before anything was measured, watched or written: a file
            # holding only its own opening would be mistaken for a setup that happened.
            with contextlib.suppress(FileNotFoundError):
                self._path.unlink()
            with contextlib.suppress(FileNotFoundError):
                journal_path(self._path).unlink()
            self._discarded = True
            self._writer_lock.release()
            log.info("setup log %s: nothing was recorded, no file kept", self._path)
            return
        try:
            self._save(compact=True)  # the whole log in one file again; no journal left
        except LogSaveError as exc:
            rescue = write_rescue_copy(self._path.stem, self.dump_text(), self._clock())
            where = f"a copy was written to {rescue}" if rescue else "no rescue copy could be written either"
            raise LogSaveError(f"the setup log could not be saved to {self._path}: {exc}; {where}") from exc
        finally:
            self._writer_lock.release()

    def _records_nothing(self) -> bool:
        lg = self._log
        return not (lg.plan or lg.stream or lg.timeline or lg.findings or lg.impedances
                    or lg.notes or lg.sign_off or lg.earlier_streams or lg.tap_tests)

    @property
    def discarded(self) -> bool:
        """True when the session closed with nothing recorded and its file was removed."""
        return self._discarded

    def __enter__(self) -> SessionRecorder:
        return self

    def __exit__(
        self, exc_type: type[BaseException] | None, exc: BaseException | None, tb: TracebackType | None
    ) -> None:
        self.close()


def optional_recorder(
    path: Path | str | None,
    *,
    technologist: str = "",
    subject_id: str = "",
    config_paths: Iterable[Path | str] = (),
    long_term: LongTermSettings | None = None,
) -> contextlib.AbstractContextManager[SessionRecorder | None]:
    """For commands with an optional ``--log PATH``: a SessionRecorder (closed, i.e. saved,
    when the with-block ends) or ``None`` when no path was given. Validation errors
    (initials, ID, an unreadable or foreign log) raise at once."""
    if path is None or str(path) == "":
        return contextlib.nullcontext(None)
    return SessionRecorder.open(path, technologist=technologist, subject_id=subject_id, config_paths=config_paths,
                                long_term=long_term)
