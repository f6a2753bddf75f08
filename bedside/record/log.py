"""The setup log: what was measured, applied, checked, found wrong and when it was fixed.

:class:`SetupLog` is the model; YAML is its canonical, re-loadable form
(:func:`dump_yaml` / :func:`load_log`, ``yaml.safe_load`` semantics only). All times
are time-zone-aware datetimes, kept to the millisecond so a save → load round trip is
exact; in YAML they are ISO 8601 strings with the UTC offset.

Level keys in the log are ``good``, ``check``, ``bad`` and ``no_data`` (no live data:
the stream was stale or lost, or not enough samples yet); a timeline entry's
``from_level`` is ``none`` for an electrode's first verdict.

:func:`load_log` is strict: an unknown key, a missing key or a value of the wrong kind
raises :class:`~bedside.errors.RecordError` naming the file and the key path
(``timeline[3].to_level``) and what is accepted.
"""

from __future__ import annotations

import dataclasses
import json
import re
from dataclasses import dataclass, field
from datetime import UTC, datetime, timedelta
from pathlib import Path
from typing import Any, Literal

import yaml

from bedside import __version__
from bedside.config import FileKind, StrictReader, describe, read_guarded, yaml_problem
from bedside.errors import InputError, RecordError
from bedside.placement.types import HeadMeasurements, Mark
from bedside.record.ids import validate_subject_id
from bedside.record.plain import plain
from bedside.record.time_to_good import TimeToGood
from bedside.record.trends import TrendBin
from bedside.stream.types import ChannelInfo, StreamIdentity

#: Written as the first keys of every log, checked on load.
FORMAT_NAME = "bedside-setup-log"
FORMAT_VERSION = 1

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

LevelKey = Literal["good", "check", "bad", "no_data"]
FromLevelKey = Literal["none", "good", "check", "bad", "no_data"]
LEVEL_KEYS: tuple[str, ...] = ("good", "check", "bad", "no_data")

_SafeDumper: Any = getattr(yaml, "CSafeDumper", yaml.SafeDumper)
_SafeLoader: Any = getattr(yaml, "CSafeLoader", yaml.SafeLoader)


def stamp(epoch_s: float) -> datetime:
    """Seconds since the epoch → local aware datetime, rounded to the millisecond."""
    ms = round(float(epoch_s) * 1000.0)
    utc = datetime(1970, 1, 1, tzinfo=UTC) + timedelta(milliseconds=ms)
    return utc.astimezone()


def zone_name(when: datetime) -> str:
    """e.g. ``CET (UTC+01:00)``: the zone the log's times were written in."""
    offset = when.utcoffset() or timedelta(0)
    total_min = int(offset.total_seconds() // 60)
    sign = "+" if total_min >= 0 else "-"
    hh, mm = divmod(abs(total_min), 60)
    name = when.tzname() or ""
    utc = f"UTC{sign}{hh:02d}:{mm:02d}"
    return f"{name} ({utc})" if name and name != utc else utc


@dataclass(frozen=True)
class LevelChange:
    """One electrode's level changed (from_level ``none`` for its first verdict)."""

    at: datetime
    electrode: str
    from_level: FromLevelKey
    to_level: LevelKey
    reasons: tuple[str, ...] = ()


@dataclass(frozen=True)
class FindingChange:
    """A finding about several electrodes or the setup (bridge, reference, ground …).

    change: ``appeared``, ``changed`` (same kind and electrodes, new level) or ``cleared``.
    """

    at: datetime
    change: Literal["appeared", "changed", "cleared"]
    kind: str
    electrodes: tuple[str, ...]
    level: Literal["good", "check", "bad"]
    reason: str = ""


@dataclass(frozen=True)
class Event:
    """Something about the session or the stream: opened, resumed, closed, stream state
    changes (live/stale/lost), gaps, reconnects, a new stream, save problems."""

    at: datetime
    kind: str
    detail: str = ""


@dataclass(frozen=True)
class ChannelFinal:
    """The last live verdict for a channel, with its metrics (units in the names)."""

    at: datetime
    level: LevelKey
    metrics: dict[str, float | None] = field(default_factory=dict)
    reasons: tuple[str, ...] = ()


@dataclass(frozen=True)
class ImpedanceEntry:
    """An impedance in kΩ: typed by the technologist (source "typed"), or published by
    the amplifier in the stream's metadata ("amplifier"). Logs before the source was
    kept hold typed values only."""

    at: datetime
    electrode: str
    kohm: float
    source: str = "typed"


@dataclass(frozen=True)
class ProfileRecord:
    """The department profile the session judged with (configs/profiles/<name>.yaml):
    its name and the SHA-256 of its file, and when it was chosen."""

    name: str
    sha256: str
    at: datetime


@dataclass(frozen=True)
class Note:
    at: datetime
    text: str


@dataclass(frozen=True)
class AcceptedElectrode:
    """An electrode accepted as it is (not good), with the technologist's typed reason."""

    electrode: str
    reason: str


@dataclass(frozen=True)
class SignOff:
    """The sign-off. exceptions: the scalp electrodes that were not good at that moment,
    each with its reason (logs written before it was kept have none)."""

    at: datetime
    initials: str
    exceptions: tuple[AcceptedElectrode, ...] = ()


@dataclass(frozen=True)
class ReadyRecord:
    """When the start gate was first reached: every scalp electrode good for ``held_s``
    consecutive seconds, except those accepted with a reason. how: who judged it
    ("bedside check", "app")."""

    at: datetime
    held_s: float
    accepted: tuple[AcceptedElectrode, ...] = ()
    how: str = ""


TapOutcomeKey = Literal["confirmed", "elsewhere", "shared", "everywhere", "not_found"]


@dataclass(frozen=True)
class TapCheck:
    """One electrode of a tap test (``bedside.checks.taptest``): its outcome, the
    channel(s) its touch showed on (strongest first) and the words said."""

    electrode: str
    outcome: TapOutcomeKey
    seen_on: tuple[str, ...] = ()
    reason: str = ""


@dataclass(frozen=True)
class TapTestRecord:
    """A guided tap test: when it ended, who ran it ("bedside taptest", "app"), the wait
    per electrode, each electrode's result in walk order and the problems in words
    (swapped pairs named). Passed when every electrode walked was confirmed."""

    at: datetime
    how: str
    timeout_s: float
    results: tuple[TapCheck, ...] = ()
    problems: tuple[str, ...] = ()

    @property
    def passed(self) -> bool:
        return bool(self.results) and all(r.outcome == "confirmed" for r in self.results)


@dataclass(frozen=True)
class TapedMeasurements:
    """The three measurements as taped, in the unit they were taped in ("cm", "mm" or
    "in"); the plan's ``measurements`` hold the same in cm."""

    unit: str
    nasion_inion: float
    preauricular: float
    circumference: float

    def text(self) -> str:
        """E.g. "360 / 350 / 560 mm"."""
        return f"{self.nasion_inion:g} / {self.preauricular:g} / {self.circumference:g} {self.unit}"


@dataclass(frozen=True)
class PlanRecord:
    """The head measurements and the computed marks (see ``bedside.placement``).

    taped: the measurements in the unit they were taped in, when that is known (logs
    written before it was kept, and plans made in cm, may have none)."""

    measurements: HeadMeasurements
    system: str
    names: str
    marks: tuple[Mark, ...]
    positions_mm: dict[str, tuple[float, float, float]] = field(default_factory=dict)
    taped: TapedMeasurements | None = None


@dataclass(frozen=True)
class StreamRecord:
    """The stream being checked and its channels (in stream order), and when it was set."""

    at: datetime
    identity: StreamIdentity
    channels: tuple[ChannelInfo, ...]


@dataclass(frozen=True)
class StreamSection:
    """What was recorded for a stream the session left for another (``p`` in the app):
    its stream, when it was left, and its own timeline, findings and final state, kept
    apart so two streams' verdicts never mix (a switch starts a new section)."""

    stream: StreamRecord
    ended_at: datetime
    timeline: tuple[LevelChange, ...] = ()
    findings: tuple[FindingChange, ...] = ()
    final: dict[str, ChannelFinal] = field(default_factory=dict)


@dataclass
class SetupLog:
    """The whole setup log. Mutable: the :class:`~bedside.record.session.SessionRecorder`
    owns one and changes it under its lock; everyone else reads copies or loaded files.

    time_to_good_s is derived from the timeline (see :meth:`time_to_good_s`)."""

    technologist: str = ""
    subject_id: str = ""
    started_at: datetime | None = None
    ended_at: datetime | None = None
    time_zone: str = ""
    software_version: str = __version__
    config_hash: str = ""
    config_files: tuple[str, ...] = ()
    #: The department profile (None: logs written before profiles, or none chosen).
    profile: ProfileRecord | None = None
    reference: str = ""
    ground: str = ""
    power_line_hz: float | None = None
    plan: PlanRecord | None = None
    stream: StreamRecord | None = None
    timeline: list[LevelChange] = field(default_factory=list)
    findings: list[FindingChange] = field(default_factory=list)
    events: list[Event] = field(default_factory=list)
    final: dict[str, ChannelFinal] = field(default_factory=dict)
    impedances: list[ImpedanceEntry] = field(default_factory=list)
    notes: list[Note] = field(default_factory=list)
    #: The first time the start gate was reached (None: never; logs before it had none).
    ready: ReadyRecord | None = None
    #: Guided tap tests, oldest first (logs written before them have none).
    tap_tests: list[TapTestRecord] = field(default_factory=list)
    sign_off: SignOff | None = None
    #: Streams checked before the current one, oldest first; ``stream``, ``timeline``,
    #: ``findings`` and ``final`` always belong to the current stream alone.
    earlier_streams: list[StreamSection] = field(default_factory=list)
    #: Long recordings: per electrode and 10-min bin, the share of the time it was good,
    #: its mean mains and drift (bedside.record.trends; logs before it have none).
    trends: list[TrendBin] = field(default_factory=list)

    # -- derived views ------------------------------------------------------------

    def time_to_good_s(self) -> dict[str, float | None]:
        """Per electrode: seconds from its first verdict to its first ``good`` (None if it
        has never been good), by :class:`~bedside.record.time_to_good.TimeToGood` (the
        definition, which the app's table uses too). Electrodes in timeline order."""
        clock = TimeToGood()
        for change in self.timeline:
            clock.update(change.electrode, change.to_level, change.at.timestamp())
        return clock.seconds

    def time_to_all_good_s(self) -> float | None:
        """Seconds from the first live verdict until every scalp electrode was good at
        the same time (None if that never happened). Non-scalp channels (ECG …) and
        electrodes never seen do not count."""
        scalp = {c.name for c in self.stream.channels if c.is_scalp} if self.stream else None
        current: dict[str, str] = {}
        first: datetime | None = None
        changes = [c for c in self.timeline if scalp is None or c.electrode in scalp]
        for k, change in enumerate(changes):
            current[change.electrode] = change.to_level
            if first is None and change.to_level != "no_data":
                first = change.at
            # Judge a moment only once all of its changes are in (one frame's changes share
            # a time), and only when every scalp electrode of the stream has a verdict.
            if k + 1 < len(changes) and changes[k + 1].at == change.at:
                continue
            if scalp is not None and not scalp <= current.keys():
                continue
            if first is not None and all(level == "good" for level in current.values()):
                return round((change.at - first).total_seconds(), 3)
        return None

    def plan_positions_mm(self) -> dict[str, tuple[float, float, float]]:
        """The plan's positions keyed by the names this log's electrodes go by: a plan
        made with classic names (T3) places the stream's or the impedance list's T7 (the
        same site, Jasper 1958 / ACNS 2016 renaming), so no export loses it."""
        if self.plan is None:
            return {}
        from bedside.placement.systems import canonical_name

        used: list[str] = [c.name for c in self.stream.channels] if self.stream is not None else []
        used += [e.electrode for e in self.impedances] + list(self.final)
        used_set = set(used)
        planned = {canonical_name(k) or k: k for k in self.plan.positions_mm}
        rename: dict[str, str] = {}
        for name in used:
            key = planned.get(canonical_name(name) or name)
            if key is not None and key != name and key not in used_set and key not in rename:
                rename[key] = name
        return {rename.get(k, k): v for k, v in self.plan.positions_mm.items()}

    def latest_impedances_kohm(self) -> dict[str, float]:
        """The last impedance per electrode (kΩ): the last typed one where there is one
        (the technologist measured at the bedside), else the amplifier's last."""
        latest: dict[str, float] = {}
        typed: set[str] = set()
        for entry in self.impedances:
            if entry.source == "typed":
                typed.add(entry.electrode)
                latest[entry.electrode] = entry.kohm
            elif entry.electrode not in typed:
                latest[entry.electrode] = entry.kohm
        return latest

    # -- conversion -----------------------------------------------------------------

    def to_dict(self) -> dict[str, Any]:
        """Plain YAML/JSON-able data (times as ISO 8601 strings with their UTC offset)."""
        out: dict[str, Any] = {"format": FORMAT_NAME, "format_version": FORMAT_VERSION}
        for f in dataclasses.fields(self):
            out[f.name] = _plain(getattr(self, f.name))
        # A convenience for readers of the file; recomputed from the timeline on load.
        out["time_to_good_s"] = self.time_to_good_s()
        return out

    @classmethod
    def from_dict(cls, data: Any, *, source: str = "<log>") -> SetupLog:
        """Build a log from :meth:`to_dict` output, strictly (RecordError names the key)."""
        if not isinstance(data, dict):
            raise RecordError(f"{source}: not a setup log (expected a mapping of keys, got {describe(data)})")
        if data.get("format") != FORMAT_NAME:
            raise RecordError(
                f"{source}: not a bedside setup log ('format' is {data.get('format')!r}, "
                f"expected {FORMAT_NAME!r})"
            )
        version = data.get("format_version")
        if version != FORMAT_VERSION:
            raise RecordError(
                f"{source}: log format version {version!r} is not supported; "
                f"accepted: {FORMAT_VERSION}"
            )
        body = {k: v for k, v in data.items() if k not in ("format", "format_version", "time_to_good_s")}
        log = _reader(source).read(body, cls)
        # The ID may become part of file names (BIDS, reports): never trust the file.
        try:
            validate_subject_id(log.subject_id, allow_letters_only=True)
        except InputError as exc:
            raise RecordError(f"{source}: 'subject_id': {exc}") from exc
        return log


#: Lists that only ever grow (entries are frozen): their lines are rendered once.
_APPEND_ONLY = ("timeline", "findings", "events", "impedances", "notes", "trends")
#: Characters YAML treats as line breaks or non-printable, escaped inside strings.
_YAML_UNSAFE = re.compile("[\x7f-\x9f\u2028\u2029\ufeff\ufffe\uffff\ud800-\udfff]")


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
        text = json.dumps(_plain(value), ensure_ascii=False, allow_nan=False)
    except ValueError:  # a non-finite number: let YAML spell it (.nan, .inf)
        return str(yaml.dump(_plain(value), Dumper=_SafeDumper, default_flow_style=True, width=10**9)).strip()
    return _yaml_safe(text)


def _yaml_safe(json_text: str) -> str:
    return _YAML_UNSAFE.sub(lambda m: f"\\u{ord(m.group()):04x}", json_text)


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
        if f.name in _APPEND_ONLY:
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
            parts.extend(f"  {_yaml_safe(json.dumps(str(k), ensure_ascii=False))}: {_flow(v)}\n" for k, v in value.items())
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
                        f"    {_yaml_safe(json.dumps(str(k), ensure_ascii=False))}: {_flow(v)}\n"
                        for k, v in item.items()
                    )
                else:
                    parts.append(f"  {sub.name}: {_flow(item)}\n")
        else:
            small[f.name] = _plain(value)
    flush_small()
    # A convenience for readers of the file; recomputed from the timeline on load.
    ttg = log.time_to_good_s()
    parts.append("time_to_good_s:\n" if ttg else "time_to_good_s: {}\n")
    parts.extend(
        f"  {_yaml_safe(json.dumps(k, ensure_ascii=False))}: {'null' if v is None else repr(v)}\n"
        for k, v in ttg.items()
    )
    return "".join(parts)


def shallow_copy(log: SetupLog) -> SetupLog:
    """A copy whose lists and mappings are new but whose (frozen) entries are shared:
    cheap, and safe to read while the original grows."""
    copied = dataclasses.replace(log)
    for name in (*_APPEND_ONLY, "final", "earlier_streams", "tap_tests"):
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
        if name in _APPEND_ONLY:
            n = cursor.lengths.get(name, 0)
            head = value[0] if value else None
            if len(value) < n or (n and head is not cursor.heads.get(name)):
                out.append({"set": name, "v": _plain(value)})  # replaced (a new stream section)
            else:
                out.extend({"add": name, "v": _plain(e)} for e in value[n:])
            cursor.lengths[name], cursor.heads[name] = len(value), head
        elif name == "final":
            now = {k: (v.level, v.reasons) for k, v in value.items()}
            if full_final or any(k not in now for k in cursor.final):
                out.append({"set": "final", "v": _plain(value)})
            else:
                changed = {k: _plain(value[k]) for k, lv in now.items() if cursor.final.get(k) != lv}
                if changed:
                    out.append({"final": changed})
            cursor.final = now
        else:
            snap = tuple(value) if isinstance(value, list) else value
            last = cursor.values.get(name, _MISSING)
            if last is _MISSING or not (last is snap or last == snap):
                out.append({"set": name, "v": _plain(value)})
                cursor.values[name] = snap
    return out


def journal_text(records: list[dict[str, Any]]) -> str:
    return "".join(_yaml_safe(json.dumps(r, ensure_ascii=False, allow_nan=True)) + "\n" for r in records)


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
        log.events.append(Event(_read_time(saved[-1], "journal saved"), "journal",
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


# -- plain data <-> dataclasses --------------------------------------------------------


def _plain(value: Any) -> Any:
    try:
        return plain(value)
    except TypeError as exc:
        raise RecordError(f"{exc} in the log") from None


def _read_time(value: Any, where: str) -> datetime:
    """A zone-aware ISO 8601 time, as the log writes them."""
    if not isinstance(value, str):
        raise RecordError(f"{where} must be an ISO 8601 time, got {describe(value)}")
    try:
        when = datetime.fromisoformat(value)
    except ValueError:
        raise RecordError(
            f"{where} is {value!r}, not an ISO 8601 time (e.g. 2026-12-01T19:30:00.000+01:00)"
        ) from None
    if when.tzinfo is None:
        raise RecordError(f"{where} is {value!r}: it has no UTC offset")
    return when


def _reader(source: str) -> StrictReader:
    """The strict reader of bedside.config, with the log's error type and its times."""
    return StrictReader(
        source, error=RecordError, noun="key", converters={datetime: _read_time},
        quote_choices=False, none_is_empty=False,
    )
