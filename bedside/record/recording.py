"""The recording half of the setup session: every method that adds to the log.

:class:`Recording` holds the log, the change detector (:mod:`bedside.record.changes`)
and the one lock that guards both; any thread may call its methods. It knows nothing
of files: :class:`~bedside.record.session.SessionRecorder` adds opening, saving,
renaming and closing, and overrides :meth:`Recording._save_soon` to wake its autosave.
"""

from __future__ import annotations

import math
import threading
from collections.abc import Callable, Iterable, Sequence
from datetime import datetime
from pathlib import Path
from typing import TYPE_CHECKING, Protocol, cast

from bedside.errors import InputError, RecordError
from bedside.record.changes import ChangeDetector, plan_detail, plan_record, stream_detail
from bedside.record.ids import (
    validate_electrode,
    validate_impedance,
    validate_initials,
    validate_note,
)
from bedside.record.log import (
    AcceptedElectrode,
    Event,
    ImpedanceEntry,
    Note,
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
    dump_yaml,
    shallow_copy,
    stamp,
)
from bedside.record.time_to_good import same_section

if TYPE_CHECKING:
    from bedside.checks.settings import LongTermSettings
    from bedside.checks.types import QualityFrame
    from bedside.placement.types import PlacementPlan
    from bedside.stream.types import ChannelInfo, StreamIdentity


class Accepted(Protocol):
    """An electrode accepted as it is (the start gate's, a sign-off's exception)."""

    @property
    def electrode(self) -> str: ...

    @property
    def reason(self) -> str: ...


class TapWords(Protocol):
    """A problem a tap test found, in words (``checks.taptest.TapProblem``)."""

    @property
    def words(self) -> str: ...


class TapOutcome(Protocol):
    """One electrode's result of a tap test (``checks.taptest.TapResult``)."""

    @property
    def electrode(self) -> str: ...

    @property
    def outcome(self) -> str: ...

    @property
    def seen_on(self) -> Sequence[str]: ...

    @property
    def reason(self) -> str: ...


class Recording:
    """The log and what adds to it (see the module docstring). Thread-safe."""

    def __init__(self, path: Path, clock: Callable[[], float], long_term: LongTermSettings) -> None:
        self._path = path
        self._clock = clock
        self._lock = threading.RLock()  # guards the log, the detector and the counters
        self._log = SetupLog()
        self._changes = ChangeDetector(long_term)
        self._generation = 0  # one more at every change; a save writes up to a generation
        self._closed = False

    def _now(self) -> datetime:
        return stamp(self._clock())

    def _save_soon(self) -> None:
        """Something worth saving at once happened (ready, a tap test, a sign-off). The
        recording alone keeps nothing on disk; SessionRecorder wakes its autosave here."""

    # -- recording -----------------------------------------------------------------

    def _touch(self) -> None:
        self._generation += 1

    def _check_open(self) -> None:
        if self._closed:
            raise RecordError(f"the session logged at {self._path} is closed; open it again to add to it")

    def _event(self, kind: str, detail: str, at: datetime | None = None) -> None:
        """One event, now (the caller holds the lock); the log changed."""
        self._log.events.append(Event(at or self._now(), kind, detail))
        self._touch()

    def set_plan(self, plan: PlacementPlan, taped: TapedMeasurements | None = None) -> None:
        """Store the head measurements and marks of a PlacementPlan (re-measuring replaces them).

        taped: the measurements as taped, in their unit, kept beside the cm (the cm
        alone would turn a taped 14.2 in into 36.068 cm in the log)."""
        record = plan_record(plan, taped)
        with self._lock:
            self._check_open()
            kind = "plan_replaced" if self._log.plan is not None else "plan"
            self._log.plan = record
            self._event(kind, plan_detail(record))

    def set_stream(self, identity: StreamIdentity, channels: Sequence[ChannelInfo]) -> None:
        """Store the stream being checked and its channels (a new source is an event)."""
        with self._lock:
            self._check_open()
            old = self._log.stream
            record = StreamRecord(self._now(), identity, tuple(channels))
            if old is not None and same_section((old.identity, old.channels), identity, record.channels):
                return
            if old is not None:
                # Another stream: the old one's verdicts go under its own section, so the
                # final table, time to good and findings are the new stream's only.
                lg = self._log
                lg.earlier_streams.append(StreamSection(old, record.at, tuple(lg.timeline), tuple(lg.findings),
                                                        dict(lg.final)))
                lg.timeline, lg.findings, lg.final = [], [], {}
                self._changes.new_section()
            self._log.stream = record
            self._event("stream" if old is None else "stream_changed", stream_detail(identity), record.at)

    def on_frame(self, frame: QualityFrame) -> None:
        """Record one QualityFrame: level changes, findings, stream state (any thread)."""
        wall = frame.wall_time
        at = stamp(wall) if wall and math.isfinite(wall) and wall > 0 else self._now()
        with self._lock:
            self._check_open()
            changes = self._changes.frame(frame, at)
            lg = self._log
            lg.timeline.extend(changes.timeline)
            lg.final.update(changes.final)
            lg.trends.extend(changes.trends)
            lg.events.extend(changes.events)
            lg.findings.extend(changes.findings)
            changed = changes.any
            if changes.power_line_hz is not None and lg.power_line_hz != changes.power_line_hz:
                lg.power_line_hz = changes.power_line_hz
                changed = True
            if changed:
                self._touch()
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

    def typed_impedances(self) -> tuple[dict[str, float], float | None]:
        """The impedances typed into this log (a resumed one holds the earlier session's):
        the last per electrode in kΩ, and when the newest was typed (epoch seconds; None
        when none was). The amplifier's are not here: the stream publishes them again."""
        with self._lock:
            typed = [e for e in self._log.impedances if e.source == "typed"]
        latest = {e.electrode: e.kohm for e in typed}
        return latest, (max(e.at for e in typed).timestamp() if typed else None)

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

    def set_reference(self, reference: str = "", ground: str = "") -> None:
        """Where the reference and ground electrodes are (for the BIDS sidecar)."""
        ref = validate_electrode(reference) if reference else ""
        gnd = validate_electrode(ground) if ground else ""
        with self._lock:
            self._check_open()
            self._log.reference, self._log.ground = ref, gnd
            self._touch()

    def set_ready(self, held_s: float, accepted: Iterable[Accepted] = (), how: str = "") -> None:
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
        self._save_soon()

    def record_tap_test(self, results: Iterable[TapOutcome], problems: Iterable[TapWords | str] = (), how: str = "",
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
        words = tuple(p if isinstance(p, str) else str(p.words) for p in problems)
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
        self._save_soon()

    def sign_off(self, initials: str, exceptions: Iterable[Accepted] = ()) -> None:
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
        self._save_soon()

    def snapshot(self) -> SetupLog:
        """A copy of the log as it is now, safe to read from another thread while the
        session goes on (its lists are copies; the entries are frozen and shared —
        treat them, and their metric mappings, as read-only)."""
        with self._lock:
            return shallow_copy(self._log)

    def last_levels(self) -> dict[str, str]:
        """Each electrode's current level key (good/check/bad/no_data)."""
        with self._lock:
            return dict(self._changes.last_level)

    def dump_text(self) -> str:
        """The log's YAML text now (e.g. to show it when no disk will take it)."""
        with self._lock:
            view = shallow_copy(self._log)
        return dump_yaml(view)

def _tap_outcome(value: str) -> TapOutcomeKey:
    if value not in ("confirmed", "elsewhere", "shared", "everywhere", "not_found"):
        raise InputError(f"tap test outcome {value!r} is not known; accepted: confirmed, elsewhere, "
                         "shared, everywhere, not_found")
    return cast(TapOutcomeKey, value)


def _accepted(items: Iterable[Accepted]) -> tuple[AcceptedElectrode, ...]:
    out = []
    for item in items:
        electrode, reason = str(item.electrode).strip(), " ".join(str(item.reason).split())
        if not reason:
            raise InputError(f"{electrode}: give a reason for accepting it as it is (e.g. 'scalp lesion')")
        out.append(AcceptedElectrode(validate_electrode(electrode), reason))
    return tuple(out)

