"""The journal beside an open session's log (``<log>.journal``): what changed since the
base file was written, one JSON record per line (see the comment below for the records).

:func:`journal_records` turns a log and a :class:`JournalCursor` (what the journal
already holds) into the records to append; :func:`read_journal` and :func:`apply_journal`
read them back onto the base's data (:func:`bedside.record.log.parse_with_journal`).
"""

from __future__ import annotations

import dataclasses
import json
from pathlib import Path
from typing import Any

from bedside.errors import RecordError
from bedside.record.schema import APPEND_ONLY, SetupLog, log_plain, yaml_safe

# -- the journal -----------------------------------------------------------------------
#
# While a session is open its log is a base file (the canonical YAML, written when the
# session starts, resumes, is renamed or closes) and, beside it, a journal of what
# changed since: one JSON record per line, appended and fsynced at each autosave, so an
# autosave costs what changed, not the whole log (hour 24 as hour 1). Its first line
# names the base it follows (a hash of the base file's bytes): a journal left beside a
# newer base (a crash between writing the new base and removing the old journal) is
# already in that base and is not applied twice. Records: {"add": list, "v": entry}
# (timeline, findings, events, impedances, notes, trends), {"set": field, "v": value} (any other
# field, or a list that was replaced), {"final": {electrode: state}} (the channels whose
# final level or reasons changed; a full "set" of final at most every FINAL_EVERY_S),
# {"saved": time} closing each autosave (how far a session that did not close was kept).
# A torn last line (a power cut during an append) is ignored, and the log says so.

JOURNAL_SUFFIX = ".journal"
#: The channels' final metrics are journaled in full at most this often (their levels
#: and reasons at every change): a crash keeps the last levels, metrics at most this old.
FINAL_EVERY_S = 300.0
_MISSING = object()


def journal_path(path: Path | str) -> Path:
    path = Path(path)
    return path.with_name(path.name + JOURNAL_SUFFIX)


def base_digest(data: bytes) -> str:
    import hashlib

    return hashlib.sha256(data).hexdigest()


class JournalCursor:
    """What of a log the journal (with its base) already holds: the length and first
    entry of each append-only list, the final levels and reasons, the last value of
    every other field."""

    def __init__(self) -> None:
        self.lengths: dict[str, int] = {}
        self.heads: dict[str, object] = {}
        self.values: dict[str, object] = {}
        self.final: dict[str, tuple[str, tuple[str, ...]]] = {}

    def copy(self) -> JournalCursor:
        c = JournalCursor()
        c.lengths, c.heads = dict(self.lengths), dict(self.heads)
        c.values, c.final = dict(self.values), dict(self.final)
        return c


def journal_records(log: SetupLog, cursor: JournalCursor, *, full_final: bool = False) -> list[dict[str, Any]]:
    """The records that bring a journal at ``cursor`` up to ``log`` (``cursor`` moves
    on). Costs what changed: new list entries, changed fields, changed finals."""
    out: list[dict[str, Any]] = []
    for f in dataclasses.fields(log):
        name = f.name
        value = getattr(log, name)
        if name in APPEND_ONLY:
            n = cursor.lengths.get(name, 0)
            head = value[0] if value else None
            if len(value) < n or (n and head is not cursor.heads.get(name)):
                out.append({"set": name, "v": log_plain(value)})  # replaced (a new stream section)
            else:
                out.extend({"add": name, "v": log_plain(e)} for e in value[n:])
            cursor.lengths[name], cursor.heads[name] = len(value), head
        elif name == "final":
            now = {k: (v.level, v.reasons) for k, v in value.items()}
            if full_final or any(k not in now for k in cursor.final):
                out.append({"set": "final", "v": log_plain(value)})
            else:
                changed = {k: log_plain(value[k]) for k, lv in now.items() if cursor.final.get(k) != lv}
                if changed:
                    out.append({"final": changed})
            cursor.final = now
        else:
            snap = tuple(value) if isinstance(value, list) else value
            last = cursor.values.get(name, _MISSING)
            if last is _MISSING or not (last is snap or last == snap):
                out.append({"set": name, "v": log_plain(value)})
                cursor.values[name] = snap
    return out


def journal_text(records: list[dict[str, Any]]) -> str:
    return "".join(yaml_safe(json.dumps(r, ensure_ascii=False, allow_nan=True)) + "\n" for r in records)


def read_journal(path: Path, base: bytes, *, source: str) -> tuple[list[dict[str, Any]], str]:
    """The records of the journal beside a base (none when there is no journal or it
    follows another base) and a note on anything ignored (a torn last line)."""
    try:
        raw = path.read_bytes()
    except FileNotFoundError:
        return [], ""
    except OSError as exc:
        raise RecordError(f"{path}: the log's journal cannot be read ({exc.strerror})") from exc
    lines = raw.split(b"\n")
    complete, tail = lines[:-1], lines[-1]  # the tail is what follows the last newline
    try:
        head = json.loads(complete[0]) if complete else None
    except ValueError:
        head = None
    if not isinstance(head, dict) or "base" not in head:
        if not complete and not tail:
            return [], ""
        raise RecordError(f"{path}: not a bedside journal (its first line names no base); "
                          f"move it aside to read {source} without it")
    if head["base"] != base_digest(base):
        return [], ""  # an older base's journal, already in this base
    records: list[dict[str, Any]] = []
    for i, line in enumerate(complete[1:], start=2):
        try:
            rec = json.loads(line)
        except ValueError:
            rec = None
        if not isinstance(rec, dict):
            dropped = len(complete) - i + (1 if tail else 0)
            return records, (f"the journal's line {i} could not be read: it and the {dropped} line(s) "
                             "after it were left out; the records before it are kept")
        records.append(rec)
    note = "the journal's last record was cut short (a power cut during a save?) and was left out" if tail else ""
    return records, note


def apply_journal(data: dict[str, Any], records: list[dict[str, Any]], *, source: str) -> None:
    """Apply journal records to a log's plain data (from its base YAML), in place."""
    for i, rec in enumerate(records, start=2):
        if "saved" in rec:
            continue  # when an autosave wrote (parse_with_journal reads it)
        if "add" in rec and isinstance(data.get(rec["add"]), list):
            data[rec["add"]].append(rec.get("v"))
        elif "set" in rec and isinstance(rec["set"], str):
            data[rec["set"]] = rec.get("v")
        elif "final" in rec and isinstance(rec["final"], dict) and isinstance(data.get("final"), dict):
            data["final"].update(rec["final"])
        else:
            raise RecordError(f"{source}: journal line {i} is not a record bedside writes ({str(rec)[:80]})")


