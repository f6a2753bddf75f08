"""What the app keeps from the stream being watched, in plain Python (UI thread only).

:class:`FrameVigil`: each frame's place in the whole run — time to good per
electrode, the start gate and the sound cue (bedside.checks.ready, as ``check
--until-good``), long-recording alerts and skin reminders (bedside.record.trends), and
whether frames stopped. :class:`ImpedanceBook`: impedances typed in the Log view and
the amplifier's, judged against the department profile's limit
(bedside.checks.impedance). Both are pure and cheap (no Textual); the app says what
they return.
"""

from __future__ import annotations

import time
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from typing import Any

from bedside.checks.impedance import ImpedanceLimits, Verdict, check_entry, judge, merge
from bedside.checks.ready import Cues, ReadyGate, ReadyState
from bedside.checks.types import QualityFrame
from bedside.record.time_to_good import same_section
from bedside.record.trends import AlertKeeper, SkinReminder
from bedside.stream.types import ChannelInfo, StreamIdentity
from bedside.ui.progress import GoodTracker, Progress


@dataclass
class FrameNews:
    """What one frame changed that the technologist is told: ``ready``: the start gate
    was reached for the first time (the log records it); ``ring``: the sound cue (ready,
    or a new fault); ``alerts``: electrodes good before and not for a while; ``reminder``:
    a skin check is due."""

    ready: ReadyState | None = None
    ring: bool = False
    alerts: list[str] = field(default_factory=list)
    reminder: str | None = None


class FrameVigil:
    """The frames of the connection being watched (``forget`` at each new one)."""

    def __init__(self, ready_hold_s: float, stale_after_s: float, alert_after_s: float,
                 skin_check_s: float) -> None:
        self.ready_hold_s, self.stale_after_s = ready_hold_s, stale_after_s
        self.tracker = GoodTracker()
        self.ready_gate = ReadyGate(ready_hold_s)
        self.ready_state: ReadyState | None = None
        self.cues = Cues()
        self.alert_keeper = AlertKeeper(alert_after_s)
        self.skin_reminder = SkinReminder(skin_check_s)
        self.latest: QualityFrame | None = None
        self.progress: Progress | None = None
        self.last_frame_at: float | None = None
        self.connected_at: float | None = None
        #: Watch was greyed out for this stall already.
        self.shown_stalled = False
        #: The stream (identity, channels) whose times to good the tracker holds.
        self.watched: tuple[StreamIdentity, tuple[ChannelInfo, ...]] | None = None

    def forget(self, blocked: Mapping[str, str]) -> None:
        """A new connection (or channel set): the old verdicts are void; the gate starts
        again, holding the electrodes whose impedance is over the limit (``blocked``).
        Times to good are kept until :meth:`watch` names another stream."""
        self.ready_gate, self.ready_state, self.cues = ReadyGate(self.ready_hold_s), None, Cues()
        self.alert_keeper = AlertKeeper(self.alert_keeper.after_s)
        self.ready_gate.set_blocked(blocked)
        self.latest, self.progress = None, None
        self.last_frame_at = None
        self.connected_at = time.monotonic()

    def watch(self, identity: StreamIdentity, channels: Sequence[ChannelInfo]) -> None:
        """The stream now connected. Another stream, or the same one with other channels,
        starts the times to good again; the same stream picked again keeps them — the
        setup log's rule for a new section (``record.time_to_good.same_section``, which
        ``Recording.set_stream`` reads too), so the app and the log give the same times."""
        if self.watched is not None and not same_section(self.watched, identity, channels):
            self.tracker.reset()
        self.watched = (identity, tuple(channels))

    def take(self, frame: QualityFrame) -> FrameNews:
        """A frame shown now; the gate runs on the frame's own clock."""
        self.latest = frame
        self.last_frame_at = time.monotonic()
        self.shown_stalled = False
        self.progress = self.tracker.update(frame)
        t = frame.wall_time if frame.wall_time > 0 else time.time()
        was = self.ready_gate.ready_at_s
        state = self.ready_state = self.ready_gate.update(frame, t)
        news = FrameNews(ready=state if was is None and state.ready else None,
                         ring=bool(self.cues.update(frame, state)))
        news.alerts = [alert.text() for alert in self.alert_keeper.feed(frame, t)]
        news.reminder = self.skin_reminder.feed(t)
        return news

    def stalled_for(self, connected: bool) -> float | None:
        """Seconds since the last frame (or the connection), when frames stopped."""
        if not connected:
            return None
        since = self.last_frame_at or self.connected_at
        if since is None:
            return None
        age = time.monotonic() - since
        return age if age > self.stale_after_s else None


class ImpedanceBook:
    """Impedances typed in the Log view (kΩ, by electrode name) and when the last value
    came (epoch seconds; the profile's re-check interval counts from it)."""

    def __init__(self) -> None:
        self.typed: dict[str, float] = {}
        self.at: float | None = None

    def type_in(self, electrode: str, kohm: float, known: set[str]) -> tuple[str, float]:
        """Checked (0 or less, over 1 000 kΩ, or an electrode not in ``known``: InputError
        with the reason) and kept."""
        name, value = check_entry(electrode, kohm, known)
        self.typed[name] = value
        self.at = time.time()
        return name, value

    def resume(self, typed: Mapping[str, float], at: float | None) -> int:
        """The values typed into a resumed log (the earlier session's), for electrodes not
        typed again in this one; returns how many were taken. Their time counts for the
        profile's re-check interval unless a newer value came since."""
        taken = {n: v for n, v in typed.items() if n not in self.typed}
        self.typed.update(taken)
        if at is not None and taken and (self.at is None or at > self.at):
            self.at = at
        return len(taken)

    def judge(self, channels: Sequence[ChannelInfo], profile: Any) -> dict[str, Verdict]:
        """Typed values (they win) and the amplifier's, for the scalp electrodes of
        ``channels`` (all typed ones when there are none), against the profile's limit."""
        scalp = [c for c in channels if c.is_scalp]
        names = {c.name for c in scalp}
        published = {c.name: c.impedance_kohm for c in scalp if c.impedance_kohm is not None}
        typed = {n: v for n, v in self.typed.items() if not names or n in names}
        limits = profile.impedance if profile is not None else ImpedanceLimits()
        return judge(merge(typed, published), limits)

    def due(self, recheck_h: float | None) -> float | None:
        """When the impedances are due to be checked again (epoch seconds; None: no
        interval, or no value yet)."""
        if recheck_h is None or self.at is None:
            return None
        return self.at + recheck_h * 3600.0
