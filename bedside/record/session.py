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

Saving: a background thread writes the log at least every ``autosave_s`` seconds (2 s
at most) whenever it changed, atomically (temp file in the same folder, fsync,
rename, fsync the folder), owner-only (0600). If a save fails (disk full, read-only,
folder missing) the log stays in memory, :attr:`SessionRecorder.status` says why
(``status.error``), a warning goes to the ``bedside`` logger once per new problem, the
outage is written into the log's events, and the save is retried on every tick until
it works. Nothing is dropped.

Resuming: opening a path that holds a valid log continues that log (the same subject
only). A file that cannot be parsed is never overwritten: it is renamed aside to
``<name>.corrupt-<time>`` and a new log is started; ``status.notice`` says so.

One writer per file: an advisory lock (``.<name>.lock`` beside the log) refuses a
second session on the same file.
"""

from __future__ import annotations

import atexit
import contextlib
import errno
import fcntl
import logging
import math
import os
import re
import tempfile
import threading
import time
import weakref
from collections.abc import Callable, Iterable, Sequence
from dataclasses import dataclass
from datetime import datetime
from pathlib import Path
from types import TracebackType
from typing import Any

from bedside import __version__
from bedside.config import config_hash
from bedside.errors import InputError, LogSaveError, RecordError
from bedside.record.atomic import append_durable, atomic_write_text, describe_os_error, fsync_folder
from bedside.record.ids import (
    validate_electrode,
    validate_impedance,
    validate_initials,
    validate_note,
    validate_subject_id,
)
from bedside.record.log import (
    FINAL_EVERY_S,
    FORMAT_NAME,
    FORMAT_VERSION,
    AcceptedElectrode,
    ChannelFinal,
    DumpCache,
    Event,
    FindingChange,
    ImpedanceEntry,
    JournalCursor,
    LevelChange,
    Note,
    PlanRecord,
    ProfileRecord,
    ReadyRecord,
    SetupLog,
    SignOff,
    StreamRecord,
    StreamSection,
    TapCheck,
    TapedMeasurements,
    TapTestRecord,
    base_digest,
    dump_yaml,
    journal_path,
    journal_records,
    journal_text,
    parse_with_journal,
    shallow_copy,
    stamp,
    zone_name,
)
from bedside.record.trends import AlertKeeper, SkinReminder, TrendKeeper

log = logging.getLogger("bedside")

#: The longest autosave interval allowed: a crash may lose at most this much.
AUTOSAVE_MAX_S = 2.0
AUTOSAVE_MIN_S = 0.05


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


class SessionRecorder:
    """Records one setup session into a log and keeps the file up to date. Thread-safe."""

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
        long_term: Any = None,
    ) -> SessionRecorder:
        """Start (or resume) the session logged at ``path`` and its autosave thread.

        Raises InputError for bad initials, ID or autosave interval; RecordError when an
        existing file cannot be read, belongs to another subject, or another session
        writes it. A full/read-only disk or missing folder does not raise: it shows in
        :attr:`status` and saving is retried.
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
        except OSError as exc:
            raise RecordError(
                f"config file {exc.filename or '?'} cannot be read for the log's config hash "
                f"({exc.strerror})"
            ) from exc
        if path.is_dir():
            raise RecordError(f"{path} is a folder; give a file name for the log, e.g. {path / 'W3-017.yaml'}")
        rec = cls(path, clock or time.time, float(autosave_s), allow_letters_only_id)
        if long_term is not None:  # the checks' long_term settings (a profile may set them)
            rec._keepers(long_term)
        rec._start(initials, subject, digest, tuple(p.name for p in paths))
        return rec

    def __init__(
        self, path: Path, clock: Callable[[], float], autosave_s: float, allow_letters_only_id: bool
    ) -> None:
        # Use SessionRecorder.open(); the constructor only sets fields.
        self._path = path
        self._clock = clock
        self._autosave_s = autosave_s
        self._allow_letters_only_id = allow_letters_only_id
        self._lock = threading.RLock()  # guards the log and the counters
        self._io_lock = threading.Lock()  # one save at a time
        self._log = SetupLog()
        self._dump_cache = DumpCache()
        # The journal beside the base file (bedside.record.log): None until a base has
        # been written this session (the next save writes one).
        self._cursor: JournalCursor | None = None
        self._final_full_at = 0.0
        self._journal_records = 0  # appended since the base
        self._journal_size = 0  # bytes of the journal known to be on disk
        self._generation = 0
        self._saved_generation = -1
        self._last_saved: datetime | None = None
        self._error: str | None = None
        self._saves = 0
        self._failed = 0
        self._notice: str | None = None
        self._aside_pending: str | None = None  # a corrupt file not yet moved aside
        self._last_level: dict[str, str] = {}
        self._findings: dict[tuple[str, tuple[str, ...]], tuple[str, str, tuple[str, ...]]] = {}
        self._health_state: str | None = None
        self._health_gaps = 0
        self._health_reconnects = 0
        self._health_jumps = 0
        self._seen_notes: dict[str, None] = {}
        self._seen_untrusted: set[str] = set()
        self._lock_fd: int | None = None
        self._closed = False
        self._resumed = False
        self._discarded = False
        self._stop = threading.Event()
        self._wake = threading.Event()
        self._thread: threading.Thread | None = None
        from bedside.checks.settings import LongTermSettings

        self._keepers(LongTermSettings())

    def _keepers(self, long_term: Any) -> None:
        """Trends, re-check alerts and skin-check reminders for long recordings."""
        self._trend = TrendKeeper(long_term.trend_bin_s)
        self._alerts = AlertKeeper(long_term.alert_after_s)
        self._skin = SkinReminder(long_term.skin_check_s)

    def _now(self) -> datetime:
        return stamp(self._clock())

    def _start(self, initials: str, subject: str, digest: str, config_files: tuple[str, ...]) -> None:
        self._acquire_file_lock(strict=True)
        self._remove_stale_temp_files()
        try:
            self._load_or_create(initials, subject, digest, config_files)
        except BaseException:
            self._release_file_lock()
            raise
        self._try_save()
        self._thread = threading.Thread(target=self._autosave_loop, name="bedside-log-autosave", daemon=True)
        self._thread.start()
        _OPEN.add(self)

    def _load_or_create(self, initials: str, subject: str, digest: str, config_files: tuple[str, ...]) -> None:
        now = self._now()
        existing = None
        if self._path.exists():
            try:
                raw = self._path.read_bytes()
            except OSError as exc:
                raise RecordError(
                    f"{self._path}: exists but cannot be read ({exc.strerror}); it is not "
                    "overwritten — fix its permissions or choose another log file"
                ) from exc
            _refuse_foreign_file(self._path, raw)
            try:
                existing, _note = parse_with_journal(raw, self._path, source=str(self._path))
            except RecordError as exc:
                self._aside_pending = str(exc)
                existing = None
        if existing is not None:
            self._resumed = True
            if subject and existing.subject_id and subject != existing.subject_id:
                raise RecordError(
                    f"{self._path} is the log of subject {existing.subject_id}, not {subject}; "
                    "choose another log file"
                )
            self._log = existing
            self._log.ended_at = None
            detail = f"resumed by bedside {__version__}"
            if initials and initials != existing.technologist:
                detail += f"; technologist {existing.technologist or '(none)'} → {initials}"
                self._log.technologist = initials
            if subject and not existing.subject_id:
                self._log.subject_id = subject
            if digest and digest != existing.config_hash:
                detail += f"; config changed (hash {existing.config_hash[:12] or '(none)'} → {digest[:12]})"
                self._log.config_hash = digest
                self._log.config_files = config_files
            self._log.software_version = __version__
            self._log.events.append(Event(now, "resumed", detail))
            for change in self._log.timeline:
                self._last_level[change.electrode] = change.to_level
            from bedside.checks.levels import finding_key

            for f in self._log.findings:  # the findings still open when the log was last saved
                key = finding_key(f)  # type: ignore[arg-type]
                if f.change == "cleared":
                    self._findings.pop(key, None)
                else:
                    self._findings[key] = (f.level, f.reason, f.electrodes)
            log.info("setup log %s resumed (%d timeline entries)", self._path, len(self._log.timeline))
        else:
            self._log = SetupLog(
                technologist=initials,
                subject_id=subject,
                started_at=now,
                time_zone=zone_name(now),
                software_version=__version__,
                config_hash=digest,
                config_files=config_files,
            )
            self._log.events.append(Event(now, "opened", f"bedside {__version__}"))
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

    def _move_corrupt_aside(self) -> None:
        """Rename the unreadable file aside (never overwrite it). Leaves _aside_pending set
        on failure so no save can replace it."""
        if self._aside_pending is None:
            return
        stem = time.strftime("%Y%m%dT%H%M%S", time.localtime(self._clock()))
        target = self._path.with_name(f"{self._path.name}.corrupt-{stem}")
        n = 1
        while target.exists():
            n += 1
            target = self._path.with_name(f"{self._path.name}.corrupt-{stem}-{n}")
        try:
            if self._path.exists():
                os.rename(self._path, target)
            if journal_path(self._path).exists():  # its journal goes with it
                os.rename(journal_path(self._path), journal_path(target))
        except OSError as exc:
            raise LogSaveError(
                f"{self._path} is unreadable and could not be moved aside "
                f"({describe_os_error(exc, target)}); it is not overwritten"
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

    def _remove_stale_temp_files(self) -> None:
        """Temp files of this log left by a process killed mid-save (only while we hold
        the lock, so no other writer of this log can own them)."""
        if self._lock_fd is None:
            return
        for stale in self._path.parent.glob(f".{self._path.name}.*.tmp"):
            with contextlib.suppress(OSError):
                stale.unlink()
                log.info("removed %s, left by a session killed while saving", stale)

    # -- the file lock -------------------------------------------------------------

    @property
    def _lock_path(self) -> Path:
        return self._path.with_name(f".{self._path.name}.lock")

    def _acquire_file_lock(self, *, strict: bool) -> None:
        if self._lock_fd is not None:
            return
        try:
            fd = os.open(self._lock_path, os.O_RDWR | os.O_CREAT, 0o600)
        except OSError:
            return  # folder missing or read-only: saving will report it; retried later
        try:
            fcntl.flock(fd, fcntl.LOCK_EX | fcntl.LOCK_NB)
        except OSError:
            try:
                other = os.read(fd, 32).decode("ascii", "replace").strip()
            except OSError:
                other = ""
            os.close(fd)
            message = (
                f"{self._path} is being written by another bedside session"
                + (f" (process {other})" if other else "")
                + "; close it first or choose another log file"
            )
            if strict:
                raise RecordError(message) from None
            raise LogSaveError(message) from None
        with contextlib.suppress(OSError):
            os.ftruncate(fd, 0)
            os.write(fd, str(os.getpid()).encode())
        self._lock_fd = fd

    def _release_file_lock(self) -> None:
        if self._lock_fd is None:
            return
        with contextlib.suppress(OSError):
            self._lock_path.unlink()
        with contextlib.suppress(OSError):
            os.close(self._lock_fd)
        self._lock_fd = None

    # -- recording -----------------------------------------------------------------

    def _touch(self) -> None:
        self._generation += 1

    def _check_open(self) -> None:
        if self._closed:
            raise RecordError(f"the session logged at {self._path} is closed; open it again to add to it")

    def set_plan(self, plan: Any, taped: TapedMeasurements | None = None) -> None:
        """Store the head measurements and marks of a PlacementPlan (re-measuring replaces them).

        taped: the measurements as taped, in their unit, kept beside the cm (the cm
        alone would turn a taped 14.2 in into 36.068 cm in the log)."""
        record = PlanRecord(
            measurements=plan.measurements,
            system=str(plan.system),
            names=str(plan.names),
            marks=tuple(plan.marks),
            positions_mm={
                str(k): (float(v[0]), float(v[1]), float(v[2]))
                for k, v in dict(getattr(plan, "positions_mm", {}) or {}).items()
            },
            taped=taped,
        )
        m = record.measurements
        as_taped = f" (taped {taped.text()})" if taped is not None and taped.unit != "cm" else ""
        with self._lock:
            self._check_open()
            kind = "plan_replaced" if self._log.plan is not None else "plan"
            self._log.plan = record
            self._log.events.append(
                Event(
                    self._now(),
                    kind,
                    f"{record.system}: nasion-inion {m.nasion_inion_cm:g} cm, preauricular "
                    f"{m.preauricular_cm:g} cm, circumference {m.circumference_cm:g} cm{as_taped}",
                )
            )
            self._touch()

    def set_stream(self, identity: Any, channels: Sequence[Any]) -> None:
        """Store the stream being checked and its channels (a new source is an event)."""
        with self._lock:
            self._check_open()
            old = self._log.stream
            record = StreamRecord(self._now(), identity, tuple(channels))
            if old is not None and old.identity == identity and old.channels == record.channels:
                return
            detail = (
                f"{identity.name} ({identity.type}) from {identity.hostname}, source_id "
                f"{identity.source_id!r}, {identity.n_channels} channels at {identity.nominal_rate_hz:g} Hz"
            )
            kind = "stream" if old is None else "stream_changed"
            if old is not None:
                self._start_section(old, record.at)
            self._log.stream = record
            self._log.events.append(Event(record.at, kind, detail))
            self._touch()

    def _start_section(self, old: StreamRecord, at: datetime) -> None:
        """Another stream: file the old one's verdicts under its own section and start
        afresh, so the final table, time to good and findings are the new stream's only."""
        self._log.earlier_streams.append(
            StreamSection(old, at, tuple(self._log.timeline), tuple(self._log.findings), dict(self._log.final))
        )
        self._log.timeline = []
        self._log.findings = []
        self._log.final = {}
        self._last_level = {}
        self._findings = {}
        self._health_state = None
        self._health_gaps = self._health_reconnects = self._health_jumps = 0

    def on_frame(self, frame: Any) -> None:
        """Record one QualityFrame: level changes, findings, stream state (any thread)."""
        wall = getattr(frame, "wall_time", 0.0)
        at = stamp(wall) if wall and math.isfinite(wall) and wall > 0 else self._now()
        with self._lock:
            self._check_open()
            changed = False
            for ch in frame.channels:
                key = ch.level_key
                previous = self._last_level.get(ch.name)
                if key != previous:
                    self._log.timeline.append(
                        LevelChange(at, ch.name, previous or "none", key, tuple(map(str, ch.reasons)))  # type: ignore[arg-type]
                    )
                    self._last_level[ch.name] = key
                    changed = True
                if ch.level is not None:
                    self._log.final[ch.name] = ChannelFinal(
                        at, key, _clean_metrics(ch.metrics), tuple(map(str, ch.reasons))
                    )
                    changed = True
            t_s = at.timestamp()
            for b in self._trend.feed(frame, t_s):
                self._log.trends.append(b)
                changed = True
            for alert in self._alerts.feed(frame, t_s):
                self._log.events.append(Event(at, "alert", alert.text()))
                changed = True
            reminder = self._skin.feed(t_s)
            if reminder is not None:
                self._log.events.append(Event(at, "skin_check", reminder))
                changed = True
            health = getattr(frame, "stream_health", None)
            if health is not None:
                changed |= self._record_health(at, health)
            # No channel judged (the checks are starting, e.g. after re-picking the same
            # stream or looking again): no verdict is not a finding that cleared.
            judged = any(ch.level is not None for ch in frame.channels)
            if getattr(frame, "live", True) and judged:
                changed |= self._record_findings(at, frame.findings)
            mains = _mains_hz(getattr(frame, "mains_hz", None))
            if mains is not None and self._log.power_line_hz != mains:
                self._log.power_line_hz = mains
                changed = True
            if changed:
                self._touch()

    def _record_health(self, at: datetime, health: Any) -> bool:
        changed = False
        state = str(health.state)
        if state != self._health_state:
            detail = f"{self._health_state or 'start'} → {state}"
            self._log.events.append(Event(at, "stream_state", detail))
            self._health_state = state
            changed = True
        for note in map(str, getattr(health, "notes", ()) or ()):
            if note not in self._seen_notes:
                self._seen_notes[note] = None
                self._log.events.append(Event(at, "stream_note", note))
                changed = True
        while len(self._seen_notes) > 500:
            self._seen_notes.pop(next(iter(self._seen_notes)))
        for source_id in map(str, getattr(health, "untrusted_sources", ()) or ()):
            if source_id not in self._seen_untrusted:
                self._seen_untrusted.add(source_id)
                self._log.events.append(
                    Event(at, "stream_untrusted", f"another stream of the same name, source_id {source_id!r}, seen and not used")
                )
                changed = True
        jumps = int(getattr(health, "clock_jumps", 0) or 0)
        if jumps > self._health_jumps:
            self._log.events.append(Event(at, "stream_clock_jump", f"{jumps - self._health_jumps} new; {jumps} so far"))
            changed = True
        self._health_jumps = max(self._health_jumps, jumps)
        gaps = int(getattr(health, "gaps", 0) or 0)
        if gaps > self._health_gaps:
            self._log.events.append(
                Event(
                    at,
                    "stream_gap",
                    f"{gaps - self._health_gaps} new gap(s); {gaps} so far, "
                    f"{int(getattr(health, 'dropped_samples', 0) or 0)} samples dropped so far",
                )
            )
            changed = True
        self._health_gaps = max(self._health_gaps, gaps)
        reconnects = int(getattr(health, "reconnects", 0) or 0)
        if reconnects > self._health_reconnects:
            self._log.events.append(Event(at, "stream_reconnect", f"reconnect #{reconnects}"))
            changed = True
        self._health_reconnects = max(self._health_reconnects, reconnects)
        return changed

    def _record_findings(self, at: datetime, findings: Iterable[Any]) -> bool:
        from bedside.checks.levels import finding_key

        # One entry per finding while it lasts: a whole-head finding whose channel count
        # moves (14 of 19, then 15) is the same finding, not one cleared and one appeared.
        current: dict[tuple[str, tuple[str, ...]], tuple[str, str, tuple[str, ...]]] = {}
        for f in findings:
            current[finding_key(f)] = (f.level.key, str(f.reason), tuple(map(str, f.electrodes)))
        changed = False
        for key, (level, reason, names) in current.items():
            before = self._findings.get(key)
            if before is None or before[0] != level:
                self._log.findings.append(
                    FindingChange(at, "appeared" if before is None else "changed", key[0], names, level, reason)  # type: ignore[arg-type]
                )
                changed = True
        for key, (level, reason, names) in self._findings.items():
            if key not in current:
                self._log.findings.append(FindingChange(at, "cleared", key[0], names, level, reason))  # type: ignore[arg-type]
                changed = True
        self._findings = current
        return changed

    def set_impedance(self, electrode: str, kohm: float, source: str = "typed") -> None:
        """Record an impedance in kΩ (more than 0, at most 1 000: anything else is refused
        with the reason), typed by the technologist or published by the amplifier."""
        name = validate_electrode(electrode)
        value = validate_impedance(name, kohm)
        if source not in ("typed", "amplifier"):
            raise InputError(f"impedance source {source!r}; accepted: typed, amplifier")
        with self._lock:
            self._check_open()
            self._log.impedances.append(ImpedanceEntry(self._now(), name, value, source))
            self._touch()

    def set_profile(self, name: str, sha256: str) -> None:
        """The department profile judged with (its name and the SHA-256 of its file); a
        change of profile is an event."""
        with self._lock:
            self._check_open()
            before = self._log.profile
            if before is not None and (before.name, before.sha256) == (name, sha256):
                return
            if before is not None:
                detail = (f"{before.name} → {name}" if before.name != name
                          else f"{name} changed (hash {before.sha256[:12]} → {sha256[:12]})")
                self._log.events.append(Event(self._now(), "profile", detail))
            self._log.profile = ProfileRecord(name, sha256, self._now())
            self._touch()

    def add_note(self, text: str) -> None:
        """Add a timestamped note (free text: never the patient's name)."""
        text = validate_note(text)
        with self._lock:
            self._check_open()
            self._log.notes.append(Note(self._now(), text))
            self._touch()

    def set_technologist(self, initials: str) -> None:
        initials = validate_initials(initials)
        with self._lock:
            self._check_open()
            if initials != self._log.technologist:
                if self._log.technologist:
                    self._log.events.append(
                        Event(self._now(), "technologist", f"{self._log.technologist} → {initials}")
                    )
                self._log.technologist = initials
                self._touch()

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
                new, lock_fd = self._move_to_free_name(old, target)
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
            old_lock, old_lock_fd = self._lock_path, self._lock_fd
            with self._lock:
                self._path = new
                self._lock_fd = lock_fd
                self._log.events.append(Event(self._now(), "log_renamed", f"{old.name} → {new.name}"))
                self._touch()
            if old_lock_fd is not None:
                with contextlib.suppress(OSError):
                    old_lock.unlink()
                with contextlib.suppress(OSError):
                    os.close(old_lock_fd)
        log.info("setup log renamed: %s → %s", old, new)
        self._wake.set()  # the rename event goes out with the next autosave
        return new

    def _move_to_free_name(self, old: Path, target: Path) -> tuple[Path, int | None]:
        """Give the log file (if it is on disk yet) the first free name from ``target``
        on, with that name's writer lock held; raises OSError when no move is possible."""
        stem, suffix = _split_name(target.name)
        for n in range(1, 1000):
            candidate = target if n == 1 else target.with_name(f"{stem}-{n}{suffix}")
            if candidate.exists() or candidate.is_symlink():
                continue
            lock_fd = _take_lock(candidate.with_name(f".{candidate.name}.lock"))
            if lock_fd is False:
                continue  # another session writes a log of that name
            try:
                if old.exists() and not _link_or_reserve_and_rename(old, candidate):
                    raise FileExistsError  # taken between the check and the move
            except FileExistsError:
                _drop_lock(candidate, lock_fd)
                continue
            except OSError:
                _drop_lock(candidate, lock_fd)
                raise
            fsync_folder(old.parent)
            return candidate, lock_fd
        raise OSError(errno.EEXIST, f"no free name like {target.name}")

    def set_reference(self, reference: str = "", ground: str = "") -> None:
        """Where the reference and ground electrodes are (for the BIDS sidecar)."""
        ref = validate_electrode(reference) if reference else ""
        gnd = validate_electrode(ground) if ground else ""
        with self._lock:
            self._check_open()
            self._log.reference, self._log.ground = ref, gnd
            self._touch()

    def set_ready(self, held_s: float, accepted: Iterable[Any] = (), how: str = "") -> None:
        """The start gate was reached (``accepted``: objects with ``electrode`` and
        ``reason``); the first time is kept as ``ready``, every time is an event."""
        kept = _accepted(accepted)
        with self._lock:
            self._check_open()
            at = self._now()
            if self._log.ready is None:
                self._log.ready = ReadyRecord(at, float(held_s), kept, how)
            detail = f"every scalp electrode good for {held_s:g} s"
            if kept:
                detail += "; accepted: " + "; ".join(f"{a.electrode} ({a.reason})" for a in kept)
            self._log.events.append(Event(at, "ready", detail))
            self._touch()
        self._wake.set()

    def record_tap_test(self, results: Iterable[Any], problems: Iterable[Any] = (), how: str = "",
                        timeout_s: float = 0.0) -> None:
        """A guided tap test ended: ``results`` are objects with ``electrode``,
        ``outcome``, ``seen_on`` and ``reason`` (``checks.taptest.TapResult``),
        ``problems`` objects with ``words`` (``TapProblem``) or plain text. Kept in
        ``tap_tests`` and said as an event."""
        checks = tuple(
            TapCheck(validate_electrode(str(r.electrode)), _tap_outcome(r.outcome),
                     tuple(str(x) for x in r.seen_on), str(r.reason))
            for r in results
        )
        if not checks:
            raise InputError("a tap test with no electrode walked has nothing to record")
        words = tuple(str(getattr(p, "words", p)) for p in problems)
        with self._lock:
            self._check_open()
            at = self._now()
            record = TapTestRecord(at, how, float(timeout_s), checks, words)
            self._log.tap_tests.append(record)
            confirmed = sum(c.outcome == "confirmed" for c in checks)
            detail = f"tap test: {confirmed} of {len(checks)} electrodes confirmed"
            if words:
                detail += "; " + "; ".join(words)
            self._log.events.append(Event(at, "tap_test", detail))
            self._touch()
        self._wake.set()

    def sign_off(self, initials: str, exceptions: Iterable[Any] = ()) -> None:
        """The technologist signs the setup off; saved at once (best effort).
        ``exceptions``: the electrodes not good at this moment, each with a typed reason
        (objects with ``electrode`` and ``reason``); a blank reason is refused."""
        initials = validate_initials(initials)
        if not initials:
            raise InputError("sign-off needs the technologist's initials, e.g. JMK")
        kept = _accepted(exceptions)
        with self._lock:
            self._check_open()
            self._log.sign_off = SignOff(self._now(), initials, kept)
            if not self._log.technologist:
                self._log.technologist = initials
            self._touch()
        self._wake.set()

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

    def snapshot(self) -> SetupLog:
        """A copy of the log as it is now, safe to read from another thread while the
        session goes on (its lists are copies; the entries are frozen and shared —
        treat them, and their metric mappings, as read-only)."""
        with self._lock:
            return shallow_copy(self._log)

    def last_levels(self) -> dict[str, str]:
        """Each electrode's current level key (good/check/bad/no_data)."""
        with self._lock:
            return dict(self._last_level)

    def dump_text(self) -> str:
        """The log's YAML text now (e.g. to show it when no disk will take it)."""
        with self._lock:
            view = shallow_copy(self._log)
        return dump_yaml(view)

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
            self._acquire_file_lock(strict=False)
            if self._aside_pending is not None:
                self._move_corrupt_aside()
            if self._cursor is None or compact:
                generation = self._write_base(keep_journal=not compact)
            else:
                # Under the lock only what changed is looked at; written outside it, so
                # on_frame never waits for the disk.
                with self._lock:
                    generation = self._generation
                    cursor = self._cursor.copy()
                    full = self._clock() - self._final_full_at >= FINAL_EVERY_S
                    records = journal_records(self._log, cursor, full_final=full)
                    if records or self._generation != self._saved_generation:
                        records.append({"saved": self._now().isoformat(timespec="milliseconds")})
                if records:
                    self._journal_size = append_durable(
                        journal_path(self._path), journal_text(records).encode("utf-8"), self._journal_size
                    )
                self._cursor = cursor
                self._journal_records += len(records)
                if full:
                    self._final_full_at = self._clock()
        except LogSaveError as exc:
            self._save_failed(str(exc))
            raise
        with self._lock:
            self._saved_generation = max(self._saved_generation, generation)
            self._last_saved = self._now()
            self._saves += 1
            if self._error is not None:
                log.warning(
                    "setup log saved again to %s after %d failed attempt(s)", self._path, self._failed
                )
                self._log.events.append(
                    Event(self._last_saved, "save_recovered", f"after: {self._error}")
                )
                self._error = None
                self._touch()  # the recovery event itself goes out on the next tick

    def _write_base(self, keep_journal: bool) -> int:
        """The whole log as the base file; then a fresh journal naming it (or, at close,
        none). A crash between the two leaves the old journal beside a base that already
        holds it: it names the old base, so it is never applied twice."""
        with self._lock:
            generation = self._generation
            view = shallow_copy(self._log)
        cursor = JournalCursor()
        journal_records(view, cursor, full_final=True)  # what the base holds
        text = dump_yaml(view, self._dump_cache)
        data = text.encode("utf-8")
        atomic_write_text(self._path, text)
        journal = journal_path(self._path)
        if keep_journal:
            head = journal_text([{"base": base_digest(data), "log": self._path.name}])
            atomic_write_text(journal, head)
            self._journal_size = len(head.encode("utf-8"))
        else:
            with contextlib.suppress(FileNotFoundError):
                journal.unlink()
        self._cursor = cursor if keep_journal else None
        self._final_full_at = self._clock()
        self._journal_records = 0
        return generation

    def _save_failed(self, message: str) -> None:
        with self._lock:
            self._failed += 1
            if message != self._error:
                log.warning(
                    "setup log NOT saved to %s: %s. It is kept in memory; retrying every %g s",
                    self._path,
                    message,
                    self._autosave_s,
                )
                self._log.events.append(Event(self._now(), "save_failed", message))
                self._touch()
            self._error = message

    def _try_save(self) -> bool:
        try:
            self._save()
        except LogSaveError:
            return False
        return True

    def _autosave_loop(self) -> None:
        while not self._stop.is_set():
            self._wake.wait(self._autosave_s)
            self._wake.clear()
            if self._stop.is_set():
                break
            with self._lock:
                dirty = self._generation != self._saved_generation
            if dirty or self._error is not None:
                try:
                    self._try_save()
                except Exception:  # a bug must not silently end autosaving: log it, go on
                    log.exception("setup log autosave failed unexpectedly; retrying")

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
            self._log.trends.extend(self._trend.close())  # the bin the recording ended in
            self._log.ended_at = now
            self._log.events.append(Event(now, "closed", ""))
            self._touch()
            empty = discard_if_empty and not self._resumed and self._records_nothing()
        self._stop.set()
        self._wake.set()
        if self._thread is not None and self._thread is not threading.current_thread():
            self._thread.join(timeout=10.0)
        _OPEN.discard(self)
        if empty:
            # Opened and left before anything was measured, watched or written: a file
            # holding only its own opening would be mistaken for a setup that happened.
            with contextlib.suppress(FileNotFoundError):
                self._path.unlink()
            with contextlib.suppress(FileNotFoundError):
                journal_path(self._path).unlink()
            self._discarded = True
            self._release_file_lock()
            log.info("setup log %s: nothing was recorded, no file kept", self._path)
            return
        try:
            self._save(compact=True)  # the whole log in one file again; no journal left
        except LogSaveError as exc:
            rescue = self._write_rescue_copy()
            where = f"a copy was written to {rescue}" if rescue else "no rescue copy could be written either"
            raise LogSaveError(f"the setup log could not be saved to {self._path}: {exc}; {where}") from exc
        finally:
            self._release_file_lock()

    def _records_nothing(self) -> bool:
        lg = self._log
        return not (lg.plan or lg.stream or lg.timeline or lg.findings or lg.impedances
                    or lg.notes or lg.sign_off or lg.earlier_streams or lg.tap_tests)

    @property
    def discarded(self) -> bool:
        """True when the session closed with nothing recorded and its file was removed."""
        return self._discarded

    def _write_rescue_copy(self) -> Path | None:
        text = self.dump_text()
        state = os.environ.get("XDG_STATE_HOME") or str(Path.home() / ".local" / "state")
        name = f"{self._path.stem}-{time.strftime('%Y%m%dT%H%M%S', time.localtime(self._clock()))}.yaml"
        for folder in (Path(state) / "bedside" / "unsaved", Path(tempfile.gettempdir()) / "bedside-unsaved"):
            try:
                folder.mkdir(parents=True, exist_ok=True, mode=0o700)
                target = atomic_write_text(folder / name, text)
            except (OSError, LogSaveError):
                continue
            log.warning("setup log: rescue copy written to %s", target)
            return target
        return None

    def __enter__(self) -> SessionRecorder:
        return self

    def __exit__(
        self, exc_type: type[BaseException] | None, exc: BaseException | None, tb: TracebackType | None
    ) -> None:
        self.close()


def _refuse_foreign_file(path: Path, raw: bytes) -> None:
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


def _split_name(name: str) -> tuple[str, str]:
    dot = name.rfind(".")
    return (name[:dot], name[dot:]) if dot > 0 else (name, "")


def _take_lock(lock_path: Path) -> int | None | bool:
    """The writer lock of a log name: its fd; None when no lock file can be made there
    (the move will tell why); False when another session holds it."""
    try:
        fd = os.open(lock_path, os.O_RDWR | os.O_CREAT, 0o600)
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


def _drop_lock(log_path: Path, fd: int | None | bool) -> None:
    if isinstance(fd, bool) or fd is None:
        return
    with contextlib.suppress(OSError):
        log_path.with_name(f".{log_path.name}.lock").unlink()
    with contextlib.suppress(OSError):
        os.close(fd)


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


def _tap_outcome(value: Any) -> Any:
    if value not in ("confirmed", "elsewhere", "shared", "everywhere", "not_found"):
        raise InputError(f"tap test outcome {value!r} is not known; accepted: confirmed, elsewhere, "
                         "shared, everywhere, not_found")
    return value


def _accepted(items: Iterable[Any]) -> tuple[AcceptedElectrode, ...]:
    out = []
    for item in items:
        electrode, reason = str(item.electrode).strip(), " ".join(str(item.reason).split())
        if not reason:
            raise InputError(f"{electrode}: give a reason for accepting it as it is (e.g. 'scalp lesion')")
        out.append(AcceptedElectrode(validate_electrode(electrode), reason))
    return tuple(out)


def _mains_hz(value: Any) -> float | None:
    """50.0 or 60.0 from a frame's mains_hz (numpy numbers too), else None."""
    if value is None or isinstance(value, bool):
        return None
    try:
        number = float(value)
    except (TypeError, ValueError):
        return None
    return number if number in (50.0, 60.0) else None


def _clean_metrics(metrics: Any) -> dict[str, float | None]:
    """Plain floats (6 significant digits) for the YAML; NaN/±Inf (not computable) → None."""
    out: dict[str, float | None] = {}
    for key, value in dict(metrics or {}).items():
        try:
            number = float(value)
        except (TypeError, ValueError):
            continue
        # Six significant digits: more than any check resolves, and a readable file.
        out[str(key)] = float(f"{number:.6g}") if math.isfinite(number) else None
    return out


_OPEN: weakref.WeakSet[SessionRecorder] = weakref.WeakSet()


@atexit.register
def _close_open_recorders() -> None:
    # An interpreter ending without close() (an unhandled error in a script) still
    # writes the last changes. SIGKILL skips this; the autosave covers that case.
    for rec in list(_OPEN):
        try:
            rec.close()
        except LogSaveError as exc:
            log.error("%s", exc)


def optional_recorder(
    path: Path | str | None,
    *,
    technologist: str = "",
    subject_id: str = "",
    config_paths: Iterable[Path | str] = (),
    long_term: Any = None,
) -> contextlib.AbstractContextManager[SessionRecorder | None]:
    """For commands with an optional ``--log PATH``: a SessionRecorder (closed, i.e. saved,
    when the with-block ends) or ``None`` when no path was given. Validation errors
    (initials, ID, an unreadable or foreign log) raise at once."""
    if path is None or str(path) == "":
        return contextlib.nullcontext(None)
    return SessionRecorder.open(path, technologist=technologist, subject_id=subject_id, config_paths=config_paths,
                                long_term=long_term)
