"""What a new frame changes in the setup log: the change detector.

:class:`ChangeDetector` holds what the log last said (each electrode's level, the open
findings, the stream's health counters, the notes already written) and turns one
:class:`~bedside.checks.types.QualityFrame` into the entries it adds (:class:`FrameChanges`).
It is pure bookkeeping: no clock (the caller gives the frame's time), no lock, no
thread, no file; :class:`~bedside.record.session.SessionRecorder` applies its output
to the log under its own lock. The plan and the stream are typed
(:class:`~bedside.placement.types.PlacementPlan`, :class:`~bedside.stream.types.StreamIdentity`):
:func:`plan_record` and :func:`stream_detail` turn them into the log's records and words.
"""

from __future__ import annotations

import math
from collections.abc import Iterable, Mapping
from dataclasses import dataclass, field
from datetime import datetime
from typing import TYPE_CHECKING

from bedside.record.log import (
    ChannelFinal,
    Event,
    FindingChange,
    LevelChange,
    PlanRecord,
    SetupLog,
    TapedMeasurements,
)
from bedside.record.trends import AlertKeeper, SkinReminder, TrendBin, TrendKeeper

if TYPE_CHECKING:
    from bedside.checks.settings import LongTermSettings
    from bedside.checks.types import Finding, QualityFrame
    from bedside.placement.types import PlacementPlan
    from bedside.stream.types import StreamHealth, StreamIdentity

#: Stream notes remembered so each is written once (the oldest are forgotten first).
SEEN_NOTES_MAX = 500

FindingKey = tuple[str, tuple[str, ...]]


@dataclass
class FrameChanges:
    """The entries one frame adds, in the order they go into the log's lists.

    final: the electrodes' newest verdicts (replacing the ones before);
    power_line_hz: the mains frequency the frame names (None: it names none)."""

    timeline: list[LevelChange] = field(default_factory=list)
    final: dict[str, ChannelFinal] = field(default_factory=dict)
    trends: list[TrendBin] = field(default_factory=list)
    events: list[Event] = field(default_factory=list)
    findings: list[FindingChange] = field(default_factory=list)
    power_line_hz: float | None = None

    @property
    def any(self) -> bool:
        """True when the frame changes the log beyond the mains frequency."""
        return bool(self.timeline or self.final or self.trends or self.events or self.findings)


class ChangeDetector:
    """Previous state + frame → the log's new entries (see the module docstring)."""

    def __init__(self, long_term: LongTermSettings) -> None:
        self.last_level: dict[str, str] = {}
        self.findings: dict[FindingKey, tuple[str, str, tuple[str, ...]]] = {}
        self._seen_notes: dict[str, None] = {}
        self._seen_untrusted: set[str] = set()
        self.new_section()
        self.trend = TrendKeeper(long_term.trend_bin_s)
        self.alerts = AlertKeeper(long_term.alert_after_s)
        self.skin = SkinReminder(long_term.skin_check_s)

    def new_section(self) -> None:
        """Another stream: its electrodes, findings and health start afresh (the notes
        and other streams already named stay remembered)."""
        self.last_level = {}
        self.findings = {}
        self.health_state: str | None = None
        self.gaps = self.reconnects = self.clock_jumps = 0

    def resume(self, log: SetupLog) -> None:
        """Continue from a log read back: its electrodes' last levels and open findings."""
        from bedside.checks.levels import finding_key

        for change in log.timeline:
            self.last_level[change.electrode] = change.to_level
        for f in log.findings:  # the findings still open when the log was last saved
            key = finding_key(f)  # type: ignore[arg-type]  # kind, electrodes, reason: all it reads
            if f.change == "cleared":
                self.findings.pop(key, None)
            else:
                self.findings[key] = (f.level, f.reason, f.electrodes)

    def close(self) -> list[TrendBin]:
        """The trend bin the recording ended in."""
        return self.trend.close()

    def frame(self, frame: QualityFrame, at: datetime) -> FrameChanges:
        """The entries ``frame`` adds, all stamped ``at`` (the frame's own time)."""
        out = FrameChanges()
        for ch in frame.channels:
            key = ch.level_key
            previous = self.last_level.get(ch.name)
            if key != previous:
                out.timeline.append(
                    LevelChange(at, ch.name, previous or "none", key, tuple(map(str, ch.reasons)))  # type: ignore[arg-type]
                )
                self.last_level[ch.name] = key
            if ch.level is not None:
                out.final[ch.name] = ChannelFinal(at, key, clean_metrics(ch.metrics), tuple(map(str, ch.reasons)))  # type: ignore[arg-type]
        t_s = at.timestamp()
        out.trends.extend(self.trend.feed(frame, t_s))
        out.events.extend(Event(at, "alert", alert.text()) for alert in self.alerts.feed(frame, t_s))
        reminder = self.skin.feed(t_s)
        if reminder is not None:
            out.events.append(Event(at, "skin_check", reminder))
        if frame.stream_health is not None:
            out.events.extend(self._health(at, frame.stream_health))
        # No channel judged (the checks are starting, e.g. after re-picking the same
        # stream or looking again): no verdict is not a finding that cleared.
        if frame.live and any(ch.level is not None for ch in frame.channels):
            out.findings.extend(self._findings(at, frame.findings))
        mains = mains_hz(frame.mains_hz)
        if mains is not None:
            out.power_line_hz = mains
        return out

    def _health(self, at: datetime, health: StreamHealth) -> list[Event]:
        out: list[Event] = []
        state = str(health.state)
        if state != self.health_state:
            out.append(Event(at, "stream_state", f"{self.health_state or 'start'} → {state}"))
            self.health_state = state
        for note in map(str, health.notes):
            if note not in self._seen_notes:
                self._seen_notes[note] = None
                out.append(Event(at, "stream_note", note))
        while len(self._seen_notes) > SEEN_NOTES_MAX:
            self._seen_notes.pop(next(iter(self._seen_notes)))
        for source_id in map(str, health.untrusted_sources):
            if source_id not in self._seen_untrusted:
                self._seen_untrusted.add(source_id)
                out.append(Event(at, "stream_untrusted",
                                 f"another stream of the same name, source_id {source_id!r}, seen and not used"))
        jumps = int(health.clock_jumps)
        if jumps > self.clock_jumps:
            out.append(Event(at, "stream_clock_jump", f"{jumps - self.clock_jumps} new; {jumps} so far"))
        self.clock_jumps = max(self.clock_jumps, jumps)
        gaps = int(health.gaps)
        if gaps > self.gaps:
            out.append(Event(at, "stream_gap", f"{gaps - self.gaps} new gap(s); {gaps} so far, "
                                               f"{int(health.dropped_samples)} samples dropped so far"))
        self.gaps = max(self.gaps, gaps)
        reconnects = int(health.reconnects)
        if reconnects > self.reconnects:
            out.append(Event(at, "stream_reconnect", f"reconnect #{reconnects}"))
        self.reconnects = max(self.reconnects, reconnects)
        return out

    def _findings(self, at: datetime, findings: Iterable[Finding]) -> list[FindingChange]:
        from bedside.checks.levels import finding_key

        # One entry per finding while it lasts: a whole-head finding whose channel count
        # moves (14 of 19, then 15) is the same finding, not one cleared and one appeared.
        current: dict[FindingKey, tuple[str, str, tuple[str, ...]]] = {}
        for f in findings:
            current[finding_key(f)] = (f.level.key, str(f.reason), tuple(map(str, f.electrodes)))
        out: list[FindingChange] = []
        for key, (level, reason, names) in current.items():
            before = self.findings.get(key)
            if before is None or before[0] != level:
                change = "appeared" if before is None else "changed"
                out.append(FindingChange(at, change, key[0], names, level, reason))  # type: ignore[arg-type]
        for key, (level, reason, names) in self.findings.items():
            if key not in current:
                out.append(FindingChange(at, "cleared", key[0], names, level, reason))  # type: ignore[arg-type]
        self.findings = current
        return out


def plan_record(plan: PlacementPlan, taped: TapedMeasurements | None = None) -> PlanRecord:
    """The log's record of a placement plan (positions as plain float triples)."""
    return PlanRecord(
        measurements=plan.measurements,
        system=str(plan.system),
        names=str(plan.names),
        marks=tuple(plan.marks),
        positions_mm={str(k): (float(v[0]), float(v[1]), float(v[2])) for k, v in plan.positions_mm.items()},
        taped=taped,
    )


def plan_detail(record: PlanRecord) -> str:
    """The plan's event words: the system and the three measurements (as taped too)."""
    m, taped = record.measurements, record.taped
    as_taped = f" (taped {taped.text()})" if taped is not None and taped.unit != "cm" else ""
    return (f"{record.system}: nasion-inion {m.nasion_inion_cm:g} cm, preauricular "
            f"{m.preauricular_cm:g} cm, circumference {m.circumference_cm:g} cm{as_taped}")


def stream_detail(identity: StreamIdentity) -> str:
    """The stream's event words: name, type, host, source_id, channels and rate."""
    return (f"{identity.name} ({identity.type}) from {identity.hostname}, source_id "
            f"{identity.source_id!r}, {identity.n_channels} channels at {identity.nominal_rate_hz:g} Hz")


def mains_hz(value: object) -> float | None:
    """50.0 or 60.0 from a frame's mains_hz (numpy numbers too), else None."""
    if value is None or isinstance(value, bool):
        return None
    try:
        number = float(value)  # type: ignore[arg-type]
    except (TypeError, ValueError):
        return None
    return number if number in (50.0, 60.0) else None


def clean_metrics(metrics: Mapping[str, float] | None) -> dict[str, float | None]:
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
