"""The setup log's file form: YAML (:func:`dump_yaml`, :func:`parse_yaml`, :func:`load_log`).

The model is :mod:`bedside.record.schema` (:class:`SetupLog` and its records) and the
journal of an open session :mod:`bedside.record.journal`; their names are also here, so
``from bedside.record.log import SetupLog, load_log`` is the one import callers need.
YAML is the log's canonical, re-loadable form (``yaml.safe_load`` semantics only); in it
times are ISO 8601 strings with the UTC offset.

:func:`load_log` is strict: an unknown key, a missing key or a value of the wrong kind
raises :class:`~bedside.errors.RecordError` naming the file and the key path
(``timeline[3].to_level``) and what is accepted.
"""

from __future__ import annotations

import dataclasses
import json
from datetime import datetime
from pathlib import Path
from typing import Any

import yaml

from bedside.config import FileKind, describe, read_guarded, yaml_problem
from bedside.errors import RecordError
from bedside.record.journal import (
    FINAL_EVERY_S,
    JOURNAL_SUFFIX,
    JournalCursor,
    apply_journal,
    base_digest,
    journal_path,
    journal_records,
    journal_text,
    read_journal,
)
from bedside.record.schema import (
    APPEND_ONLY,
    FORMAT_NAME,
    FORMAT_VERSION,
    LEVEL_KEYS,
    AcceptedElectrode,
    ChannelFinal,
    Event,
    FindingChange,
    FromLevelKey,
    ImpedanceEntry,
    LevelChange,
    LevelKey,
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
    TapOutcomeKey,
    TapTestRecord,
    log_plain,
    read_time,
    stamp,
    yaml_safe,
    zone_name,
)

__all__ = [
    "AcceptedElectrode",
    "apply_journal",
    "base_digest",
    "ChannelFinal",
    "dump_yaml",
    "DumpCache",
    "Event",
    "FINAL_EVERY_S",
    "FindingChange",
    "FORMAT_NAME",
    "FORMAT_VERSION",
    "FromLevelKey",
    "ImpedanceEntry",
    "journal_path",
    "journal_records",
    "JOURNAL_SUFFIX",
    "journal_text",
    "JournalCursor",
    "LEVEL_KEYS",
    "LevelChange",
    "LevelKey",
    "load_log",
    "LOG_FILE",
    "MAX_LOG_BYTES",
    "Note",
    "parse_with_journal",
    "parse_yaml",
    "PlanRecord",
    "ProfileRecord",
    "read_journal",
    "ReadyRecord",
    "SetupLog",
    "shallow_copy",
    "SignOff",
    "stamp",
    "StreamRecord",
    "StreamSection",
    "TapCheck",
    "TapedMeasurements",
    "TapOutcomeKey",
    "TapTestRecord",
    "zone_name",
]

_SafeDumper: Any = getattr(yaml, "CSafeDumper", yaml.SafeDumper)
_SafeLoader: Any = getattr(yaml, "CSafeLoader", yaml.SafeLoader)

#: A day-long session with a flapping electrode stays far below this (common practice).
MAX_LOG_BYTES = 200 * 10**6

#: How the guarded read (bedside.config.read_guarded) names a setup log it refuses.
LOG_FILE = FileKind(
    error=RecordError,
    max_bytes=MAX_LOG_BYTES,
    missing="no such log file",
    folder="is a folder, not a log file",
    # A device or a pipe (e.g. /dev/zero) would be read without end.
    not_regular="is not a regular file (a device or a pipe?); not a setup log",
    too_large=lambda size: (
        f"{size / 1e6:.0f} MB is far larger than any setup log (limit {MAX_LOG_BYTES // 10**6} MB); not a setup log?"
    ),
)

class DumpCache:
    """Rendered lines of the append-only lists, reused by the next :func:`dump_yaml`.

    Only for one log whose lists grow by appending (as the SessionRecorder's do); a
    list that got shorter or whose first entry changed is rendered afresh."""

    def __init__(self) -> None:
        self.lines: dict[str, list[str]] = {}
        self.heads: dict[str, object] = {}


def _flow(value: Any) -> str:
    """One entry as a one-line YAML flow mapping (JSON syntax, which YAML reads)."""
    try:
        text = json.dumps(log_plain(value), ensure_ascii=False, allow_nan=False)
    except ValueError:  # a non-finite number: let YAML spell it (.nan, .inf)
        return str(yaml.dump(log_plain(value), Dumper=_SafeDumper, default_flow_style=True, width=10**9)).strip()
    return yaml_safe(text)


def dump_yaml(log: SetupLog, cache: DumpCache | None = None) -> str:
    """The canonical text of a log: block YAML for the header parts, one line per entry
    for the timeline, findings, events, impedances, notes and final states."""
    header = (
        "# bedside setup log (pseudonymous). Keep it with the recording as your local\n"
        "# policy says. Re-load with `bedside report`; times are local with UTC offset.\n"
    )
    parts = [header]
    small: dict[str, Any] = {"format": FORMAT_NAME, "format_version": FORMAT_VERSION}

    def flush_small() -> None:
        if small:
            parts.append(yaml.dump(small, Dumper=_SafeDumper, sort_keys=False, allow_unicode=True, width=100))
            small.clear()

    for f in dataclasses.fields(log):
        value = getattr(log, f.name)
        if f.name in APPEND_ONLY:
            flush_small()
            if not value:
                parts.append(f"{f.name}: []\n")
                continue
            lines = cache.lines.get(f.name) if cache is not None else None
            if lines is None or len(lines) > len(value) or (cache is not None and cache.heads.get(f.name) is not value[0]):
                lines = []
            lines.extend(f"- {_flow(entry)}\n" for entry in value[len(lines):])
            if cache is not None:
                cache.lines[f.name] = lines
                cache.heads[f.name] = value[0]
            parts.append(f"{f.name}:\n")
            parts.extend(lines)
        elif f.name == "final":
            flush_small()
            if not value:
                parts.append("final: {}\n")
                continue
            parts.append("final:\n")
            parts.extend(f"  {yaml_safe(json.dumps(str(k), ensure_ascii=False))}: {_flow(v)}\n" for k, v in value.items())
        elif dataclasses.is_dataclass(value) and not isinstance(value, type):
            # plan, stream: one line per mark, channel and position.
            flush_small()
            parts.append(f"{f.name}:\n")
            for sub in dataclasses.fields(value):
                item = getattr(value, sub.name)
                if isinstance(item, list | tuple) and item and dataclasses.is_dataclass(item[0]):
                    parts.append(f"  {sub.name}:\n")
                    parts.extend(f"  - {_flow(x)}\n" for x in item)
                elif isinstance(item, dict) and item:
                    parts.append(f"  {sub.name}:\n")
                    parts.extend(
                        f"    {yaml_safe(json.dumps(str(k), ensure_ascii=False))}: {_flow(v)}\n"
                        for k, v in item.items()
                    )
                else:
                    parts.append(f"  {sub.name}: {_flow(item)}\n")
        else:
            small[f.name] = log_plain(value)
    flush_small()
    # A convenience for readers of the file; recomputed from the timeline on load.
    ttg = log.time_to_good_s()
    parts.append("time_to_good_s:\n" if ttg else "time_to_good_s: {}\n")
    parts.extend(
        f"  {yaml_safe(json.dumps(k, ensure_ascii=False))}: {'null' if v is None else repr(v)}\n"
        for k, v in ttg.items()
    )
    return "".join(parts)


def shallow_copy(log: SetupLog) -> SetupLog:
    """A copy whose lists and mappings are new but whose (frozen) entries are shared:
    cheap, and safe to read while the original grows."""
    copied = dataclasses.replace(log)
    for name in (*APPEND_ONLY, "final", "earlier_streams", "tap_tests"):
        setattr(copied, name, type(getattr(log, name))(getattr(log, name)))
    return copied


def _yaml_data(text: str, source: str) -> Any:
    """A log's text as plain data (``yaml.safe_load`` semantics); RecordError names it."""
    if not text.strip():
        raise RecordError(f"{source}: the file is empty")
    try:
        return yaml.load(text, Loader=_SafeLoader)  # noqa: S506 - a SafeLoader
    except yaml.YAMLError as exc:
        raise RecordError(f"{source}: {yaml_problem(exc)}") from exc


def parse_yaml(text: str, *, source: str = "<log>") -> SetupLog:
    """Parse a log's text (``yaml.safe_load`` semantics)."""
    return SetupLog.from_dict(_yaml_data(text, source), source=source)


def parse_with_journal(raw: bytes, path: Path, *, source: str) -> tuple[SetupLog, str]:
    """A log from its base file's bytes and the journal beside it (if any); the note
    says what of the journal was left out."""
    try:
        text = raw.decode("utf-8")
    except UnicodeDecodeError as exc:
        raise RecordError(f"{source}: not UTF-8 text (byte {exc.start}); not a setup log") from exc
    records, note = read_journal(journal_path(path), raw, source=source)
    if not records:
        log = parse_yaml(text, source=source)
    else:
        data = _yaml_data(text, source)
        if not isinstance(data, dict):
            raise RecordError(f"{source}: not a setup log (expected a mapping of keys, got {describe(data)})")
        apply_journal(data, records, source=f"{journal_path(path)}")
        log = SetupLog.from_dict(data, source=f"{source} (with its journal)")
    saved = [r["saved"] for r in records if isinstance(r.get("saved"), str)]
    if saved and log.ended_at is None:
        log.events.append(Event(read_time(saved[-1], "journal saved"), "journal",
                                f"the session did not close; it was recorded until {saved[-1]}"))
    if note:
        when = log.events[-1].at if log.events else datetime.now().astimezone()
        log.events.append(Event(when, "journal", note))
    return log, note


def load_log(path: Path | str) -> SetupLog:
    """Read a setup log file (with its journal, while its session is open or after a
    crash); RecordError names the file and what is wrong with it."""
    path = Path(path)
    raw = read_guarded(path, LOG_FILE)
    return parse_with_journal(raw, path, source=str(path))[0]
