"""Writing one session's log to disk: the base file and its journal.

While a session is open the log is a *base* file (the whole log as YAML, written
atomically when the session starts, resumes, is renamed or closes) and a journal
beside it (``<log>.journal``): each save after the first appends only what changed
(:func:`~bedside.record.log.journal_records`) and fsyncs, so a save in hour 24 costs
what it cost in hour 1. :class:`LogFile` keeps the journal's cursor and sizes; the
recorder calls it under its one-save-at-a-time lock and gives it the log (or a copy).
Failures raise :class:`~bedside.errors.LogSaveError` (from :mod:`bedside.record.atomic`).
"""

from __future__ import annotations

import contextlib
from collections.abc import Callable
from dataclasses import dataclass
from datetime import datetime
from pathlib import Path
from typing import Any

from bedside.record.atomic import append_durable, atomic_write_text
from bedside.record.log import (
    FINAL_EVERY_S,
    DumpCache,
    JournalCursor,
    SetupLog,
    base_digest,
    dump_yaml,
    journal_path,
    journal_records,
    journal_text,
)


@dataclass
class JournalStep:
    """What one journal save appends, taken from the log under the recorder's lock and
    written outside it (so frames never wait for the disk)."""

    records: list[dict[str, Any]]
    cursor: JournalCursor
    full_final: bool


class LogFile:
    """The base file and journal of the log at ``path`` (see the module docstring)."""

    def __init__(self, path: Path, clock: Callable[[], float]) -> None:
        self.path = path
        self._clock = clock
        self._cache = DumpCache()
        # None until a base has been written this session (the next save writes one).
        self._cursor: JournalCursor | None = None
        self._final_full_at = 0.0
        self._journal_size = 0  # bytes of the journal known to be on disk

    @property
    def has_base(self) -> bool:
        """A base was written this session: the next save may append to its journal."""
        return self._cursor is not None

    def write_base(self, view: SetupLog, keep_journal: bool) -> None:
        """The whole log as the base file; then a fresh journal naming it (or, at close,
        none). A crash between the two leaves the old journal beside a base that already
        holds it: it names the old base, so it is never applied twice."""
        cursor = JournalCursor()
        journal_records(view, cursor, full_final=True)  # what the base holds
        text = dump_yaml(view, self._cache)
        data = text.encode("utf-8")
        atomic_write_text(self.path, text)
        journal = journal_path(self.path)
        if keep_journal:
            head = journal_text([{"base": base_digest(data), "log": self.path.name}])
            atomic_write_text(journal, head)
            self._journal_size = len(head.encode("utf-8"))
        else:
            with contextlib.suppress(FileNotFoundError):
                journal.unlink()
        self._cursor = cursor if keep_journal else None
        self._final_full_at = self._clock()

    def journal_step(self, log: SetupLog, dirty: bool, now: datetime) -> JournalStep:
        """What changed in ``log`` since the last save (call under the recorder's lock,
        and only once :attr:`has_base`); ``dirty``: the log changed, so a ``saved``
        record marks the moment even when no list grew."""
        assert self._cursor is not None
        cursor = self._cursor.copy()
        full = self._clock() - self._final_full_at >= FINAL_EVERY_S
        records = journal_records(log, cursor, full_final=full)
        if records or dirty:
            records.append({"saved": now.isoformat(timespec="milliseconds")})
        return JournalStep(records, cursor, full)

    def append(self, step: JournalStep) -> None:
        """Append ``step`` to the journal and fsync (outside the recorder's lock)."""
        if step.records:
            self._journal_size = append_durable(
                journal_path(self.path), journal_text(step.records).encode("utf-8"), self._journal_size
            )
        self._cursor = step.cursor
        if step.full_final:
            self._final_full_at = self._clock()
