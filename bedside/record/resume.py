"""Opening a log file: a new log, or the one already at the path resumed.

:func:`open_log` reads what is at the path: nothing (a new log), a valid log (resumed:
the same subject only; a new technologist, subject or config is written as part of the
``resumed`` event), a file that is not ours (refused, left untouched) or a damaged log
(``Opened.unreadable`` says why; the recorder then moves it aside and starts anew).
"""

from __future__ import annotations

from dataclasses import dataclass
from datetime import datetime
from pathlib import Path

from bedside import __version__
from bedside.errors import RecordError
from bedside.record.files import refuse_foreign_file
from bedside.record.log import Event, SetupLog, parse_with_journal, zone_name


@dataclass
class Opened:
    """The log to record into; resumed: it was read from the file; unreadable: why the
    file at the path could not be read (None: it could, or there was none)."""

    log: SetupLog
    resumed: bool
    unreadable: str | None = None


def open_log(path: Path, now: datetime, initials: str, subject: str, digest: str,
             config_files: tuple[str, ...]) -> Opened:
    """The log at ``path`` resumed, or a new one (see the module docstring). Raises
    RecordError for a file that cannot be read, is not ours, or is another subject's."""
    existing = None
    unreadable = None
    if path.exists():
        try:
            raw = path.read_bytes()
        except OSError as exc:
            raise RecordError(
                f"{path}: exists but cannot be read ({exc.strerror}); it is not "
                "overwritten — fix its permissions or choose another log file"
            ) from exc
        refuse_foreign_file(path, raw)
        try:
            existing, _note = parse_with_journal(raw, path, source=str(path))
        except RecordError as exc:
            unreadable = str(exc)
    if existing is None:
        log = SetupLog(technologist=initials, subject_id=subject, started_at=now, time_zone=zone_name(now),
                       software_version=__version__, config_hash=digest, config_files=config_files)
        log.events.append(Event(now, "opened", f"bedside {__version__}"))
        return Opened(log, False, unreadable)
    if subject and existing.subject_id and subject != existing.subject_id:
        raise RecordError(f"{path} is the log of subject {existing.subject_id}, not {subject}; "
                          "choose another log file")
    log = existing
    log.ended_at = None
    detail = f"resumed by bedside {__version__}"
    if initials and initials != existing.technologist:
        detail += f"; technologist {existing.technologist or '(none)'} → {initials}"
        log.technologist = initials
    if subject and not existing.subject_id:
        log.subject_id = subject
    if digest and digest != existing.config_hash:
        detail += f"; config changed (hash {existing.config_hash[:12] or '(none)'} → {digest[:12]})"
        log.config_hash = digest
        log.config_files = config_files
    log.software_version = __version__
    log.events.append(Event(now, "resumed", detail))
    return Opened(log, True)
