"""The setup log's model: :class:`SetupLog` and the frozen records it holds.

All times are time-zone-aware datetimes, kept to the millisecond (:func:`stamp`) so a
save → load round trip is exact. Level keys are ``good``, ``check``, ``bad`` and
``no_data`` (no live data: the stream was stale or lost, or not enough samples yet); a
timeline entry's ``from_level`` is ``none`` for an electrode's first verdict.
:meth:`SetupLog.from_dict` is strict (bedside.config's reader with the log's error
type). The YAML form is :mod:`bedside.record.log`'s, the journal :mod:`bedside.record.journal`'s.

Why about 420 lines: it is the log's whole schema, one small frozen dataclass per entry
kind, read in one place.
"""

from __future__ import annotations

import dataclasses
import re
from dataclasses import dataclass, field
from datetime import UTC, datetime, timedelta
from typing import Any, Literal

from bedside import __version__
from bedside.config import StrictReader, describe
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

LevelKey = Literal["good", "check", "bad", "no_data"]
FromLevelKey = Literal["none", "good", "check", "bad", "no_data"]
LEVEL_KEYS: tuple[str, ...] = ("good", "check", "bad", "no_data")



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
            out[f.name] = log_plain(getattr(self, f.name))
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
APPEND_ONLY = ("timeline", "findings", "events", "impedances", "notes", "trends")
#: Characters YAML treats as line breaks or non-printable, escaped inside strings.
YAML_UNSAFE = re.compile("[\x7f-\x9f\u2028\u2029\ufeff\ufffe\uffff\ud800-\udfff]")


def yaml_safe(json_text: str) -> str:
    """JSON text with the characters YAML reads as line breaks or non-printable escaped."""
    return YAML_UNSAFE.sub(lambda m: f"\\u{ord(m.group()):04x}", json_text)


def log_plain(value: Any) -> Any:
    try:
        return plain(value)
    except TypeError as exc:
        raise RecordError(f"{exc} in the log") from None


def read_time(value: Any, where: str) -> datetime:
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
        source, error=RecordError, noun="key", converters={datetime: read_time},
        quote_choices=False, none_is_empty=False,
    )
