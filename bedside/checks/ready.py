"""The whole run and the start gate, read from the engine's frames (pure: no threads, no I/O).

:class:`RunHistory` remembers what each channel went through during a look, not only
where it ended: its worst level and why, the seconds it spent not good, and every change
of its level. :class:`ReadyGate` answers "may the recording start?": every scalp
electrode good for ``hold_s`` consecutive seconds, or accepted by the technologist with
a reason. :class:`Cues` says when a sound cue is due (ready reached, a new fault).
``bedside check`` and the app both use them, so they judge alike.

Time: every ``update`` is given ``t_s``, the caller's clock in seconds (the check's own
seconds, or the engine's sample clock in a simulation); nothing here reads a clock.

No data is not a fault. Before the checks have their first window (the warm-up,
``min_data_s`` in quality.yaml) and while the stream is stale or lost, a channel's level
is ``no_data``: that time is not counted as "not good" and is no worst level, but it is
not good either for the gate — an electrode must be *seen* good for ``hold_s`` seconds,
so the count starts only once there is data and starts again after an outage.
"""

from __future__ import annotations

import math
from collections.abc import Iterable, Mapping, Sequence
from dataclasses import dataclass, field

from bedside.checks.types import NO_DATA_KEY, ChannelQuality, Finding, QualityFrame
from bedside.errors import InputError

#: A channel the checks do not judge (not an electrode: trigger, sensor).
NOT_JUDGED_KEY = "not_judged"
_RANK = {"good": 0, "check": 1, "bad": 2}


def finding_key(f: Finding) -> tuple[str, tuple[str, ...]]:
    """:func:`bedside.checks.levels.finding_key` (imported when first needed: this module
    stays light for the command line)."""
    from bedside.checks.levels import finding_key as key

    return key(f)


def channel_key(channel: ChannelQuality, live: bool = True) -> str:
    """good / check / bad / no_data, or not_judged for a channel that is no electrode."""
    if channel.level is None and live and any(r.startswith("not judged") for r in channel.reasons):
        return NOT_JUDGED_KEY
    return channel.level_key


# ---------------------------------------------------------------------- the whole run


@dataclass(frozen=True)
class LevelEvent:
    """A change of a channel's level at ``t_s`` (its first verdict is the first event)."""

    t_s: float
    level: str
    reason: str = ""

    def as_dict(self) -> dict[str, object]:
        return {"t_s": round(self.t_s, 3), "level": self.level, "reason": self.reason}


@dataclass(frozen=True)
class ChannelRun:
    """One channel over the whole run. worst_level is ``no_data`` when it was never judged."""

    name: str
    level: str
    worst_level: str
    worst_reason: str
    not_good_s: float
    events: tuple[LevelEvent, ...]

    @property
    def went_not_good(self) -> bool:
        return self.worst_level in ("check", "bad")


@dataclass(frozen=True)
class FindingRun:
    """A finding seen during the run: its worst level, that level's reason, first and last seen."""

    kind: str
    electrodes: tuple[str, ...]
    level: str
    reason: str
    first_s: float
    last_s: float

    def as_dict(self) -> dict[str, object]:
        return {"kind": self.kind, "electrodes": list(self.electrodes), "level": self.level,
                "reason": self.reason, "first_s": round(self.first_s, 3), "last_s": round(self.last_s, 3)}


@dataclass
class _Track:
    level: str = NO_DATA_KEY
    since_s: float = 0.0
    worst: str = NO_DATA_KEY
    worst_reason: str = ""
    not_good_s: float = 0.0
    events: list[LevelEvent] = field(default_factory=list)


class RunHistory:
    """Feed it every frame (``update(frame, t_s)``); ``channels(t_end)`` gives the run.

    not_good_s adds the time from each update to the next while the channel was
    ``check`` or ``bad`` (the last update counts until ``t_end``)."""

    def __init__(self) -> None:
        self._tracks: dict[str, _Track] = {}
        self._findings: dict[tuple[str, tuple[str, ...]], FindingRun] = {}
        self._last_t: float | None = None
        self.first_verdict_s: float | None = None  # the end of the warm-up

    def update(self, frame: QualityFrame, t_s: float) -> None:
        self._close_interval(t_s)
        live = frame.live
        judged = False
        for c in frame.channels:
            key = channel_key(c, live)
            tr = self._tracks.setdefault(c.name, _Track(since_s=t_s))
            reason = c.reasons[0] if c.reasons else ""
            if key in _RANK:
                judged = True
                if tr.worst not in _RANK or _RANK[key] > _RANK[tr.worst]:
                    tr.worst, tr.worst_reason = key, (reason if key != "good" else "")
            elif key == NOT_JUDGED_KEY:
                tr.worst = NOT_JUDGED_KEY
            if key != tr.level:
                # The warm-up's "collecting data" is not an event: the first verdict is.
                if tr.events or key != NO_DATA_KEY:
                    tr.events.append(LevelEvent(t_s, key, reason if key != "good" else ""))
                tr.level, tr.since_s = key, t_s
        if judged and self.first_verdict_s is None:
            self.first_verdict_s = t_s
        if live and judged:
            for f in frame.findings:
                k = finding_key(f)
                old = self._findings.get(k)
                if old is None:
                    self._findings[k] = FindingRun(f.kind, f.electrodes, f.level.key, f.reason, t_s, t_s)
                elif _RANK[f.level.key] > _RANK[old.level]:
                    self._findings[k] = FindingRun(f.kind, f.electrodes, f.level.key, f.reason, old.first_s, t_s)
                else:
                    self._findings[k] = FindingRun(old.kind, old.electrodes, old.level, old.reason, old.first_s, t_s)
        self._last_t = t_s

    def _close_interval(self, t_s: float) -> None:
        if self._last_t is None:
            return
        dt = max(0.0, t_s - self._last_t)
        for tr in self._tracks.values():
            if tr.level in ("check", "bad"):
                tr.not_good_s += dt

    def channels(self, t_end_s: float | None = None) -> tuple[ChannelRun, ...]:
        extra = 0.0 if t_end_s is None or self._last_t is None else max(0.0, t_end_s - self._last_t)
        return tuple(
            ChannelRun(name, tr.level, tr.worst, tr.worst_reason,
                       round(tr.not_good_s + (extra if tr.level in ("check", "bad") else 0.0), 3),
                       tuple(tr.events))
            for name, tr in self._tracks.items()
        )

    def findings(self) -> tuple[FindingRun, ...]:
        return tuple(self._findings.values())


# ------------------------------------------------------------------- the start gate


@dataclass(frozen=True)
class Accepted:
    """An electrode the technologist accepts as it is, with the reason typed for it."""

    electrode: str
    reason: str

    def as_dict(self) -> dict[str, str]:
        return {"electrode": self.electrode, "reason": self.reason}


def parse_accept(texts: Iterable[str]) -> dict[str, str]:
    """``["O2=old scar, cannot abrade"]`` → {"O2": "old scar, cannot abrade"}; InputError
    (saying what is accepted) for a missing '=', an empty name or reason, or a repeat."""
    out: dict[str, str] = {}
    for text in texts:
        name, sep, reason = text.partition("=")
        name, reason = name.strip(), " ".join(reason.split())
        if not sep or not name or not reason:
            raise InputError(
                f"--accept {text!r}: give ELECTRODE=REASON, e.g. --accept 'O2=scalp lesion, "
                "electrode left as is' (the reason goes into the report and the log)"
            )
        if name in out:
            raise InputError(f"--accept {name}: given twice; accept each electrode once")
        out[name] = reason
    return out


def match_accepted(accepted: Mapping[str, str], electrodes: Sequence[str]) -> tuple[Accepted, ...]:
    """The accepted electrodes under the stream's names (case not minded); InputError
    naming the scalp electrodes when one is not among them."""
    by_fold = {e.casefold(): e for e in electrodes}
    out = []
    for name, reason in accepted.items():
        real = by_fold.get(name.casefold())
        if real is None:
            raise InputError(
                f"--accept {name}: the stream has no scalp electrode of that name; its scalp "
                f"electrodes: {', '.join(electrodes) or 'none'}"
            )
        out.append(Accepted(real, reason))
    return tuple(out)


@dataclass(frozen=True)
class ReadyState:
    """The gate after an update.

    ready_at_s: when the gate was first reached (None: not yet; it stays once reached).
    waiting: electrodes not good now (and not accepted); remaining_s: seconds still to
    hold while all are good (None while one is waiting or there is no data yet);
    blocked: those of ``waiting`` held by an impedance over the limit (whatever their
    signal)."""

    t_s: float
    hold_s: float
    ready_at_s: float | None
    waiting: tuple[str, ...]
    remaining_s: float | None
    accepted: tuple[Accepted, ...]
    judged: bool
    blocked: tuple[str, ...] = ()

    @property
    def ready(self) -> bool:
        return self.ready_at_s is not None

    @property
    def good_now(self) -> bool:
        """Every electrode good (or accepted) and held for hold_s at this update."""
        return self.remaining_s is not None and self.remaining_s <= 0

    def as_dict(self) -> dict[str, object] | None:
        """The report's ``ready`` object, or None while not ready."""
        if self.ready_at_s is None:
            return None
        return {"at_s": round(self.ready_at_s, 3), "held_s": self.hold_s,
                "accepted": [a.as_dict() for a in self.accepted]}

    def text(self) -> str:
        """In words, for the Watch view (no clock times: the caller adds them)."""
        accepted = ("; accepted as they are: " + ", ".join(a.electrode for a in self.accepted)
                    if self.accepted else "")
        if self.good_now:
            return f"ready to record: every scalp electrode good for {self.hold_s:g} s{accepted}"
        if not self.judged:
            return f"ready count ({self.hold_s:g} s) starts with the first verdicts"
        if self.waiting:
            shown = ", ".join(f"{n} (impedance)" if n in self.blocked else n for n in self.waiting[:6]) + (
                f" +{len(self.waiting) - 6}" if len(self.waiting) > 6 else "")
            if self.ready_at_s is not None:
                return f"was ready; not good now: {shown} (the count starts again once good)"
            return f"not ready: waiting for {shown} (each good for {self.hold_s:g} s)"
        assert self.remaining_s is not None
        return f"ready in {math.ceil(max(0.0, self.remaining_s)):.0f} s (all good; holding {self.hold_s:g} s){accepted}"


class ReadyGate:
    """Every scalp electrode good for ``hold_s`` consecutive seconds, or accepted.

    An electrode counts as good at an update when its channel's level is ``good`` and no
    non-good finding names it; any other state (check, bad, no data) starts its count
    again. Electrodes are the frame's scalp channels (``is_scalp``) unless given.

    blocked (:meth:`set_blocked`): electrodes whose impedance is over the department's
    limit (:func:`bedside.checks.impedance.over_limit`), electrode → reason. They keep
    the gate shut unless accepted, whatever their signal; their signal's count runs on
    (a value typed again under the limit opens the gate once the signal has held)."""

    def __init__(self, hold_s: float, accepted: Sequence[Accepted] = (),
                 electrodes: Sequence[str] | None = None,
                 blocked: Mapping[str, str] | None = None) -> None:
        if not hold_s > 0:
            raise InputError(f"the ready hold must be more than 0 s, got {hold_s:g}")
        self.hold_s = float(hold_s)
        self.accepted = tuple(accepted)
        self._accepted_names = {a.electrode for a in self.accepted}
        self._electrodes = tuple(electrodes) if electrodes is not None else None
        self._good_since: dict[str, float | None] = {}
        self.ready_at_s: float | None = None
        self.state: ReadyState | None = None
        self.blocked: dict[str, str] = dict(blocked or {})

    def set_blocked(self, blocked: Mapping[str, str]) -> None:
        """Electrodes held by their impedance (electrode → reason); replaces the last set."""
        self.blocked = dict(blocked)

    def electrodes(self, frame: QualityFrame) -> tuple[str, ...]:
        if self._electrodes is not None:
            return self._electrodes
        return tuple(c.name for c in frame.channels if c.is_scalp and channel_key(c, frame.live) != NOT_JUDGED_KEY)

    def update(self, frame: QualityFrame, t_s: float) -> ReadyState:
        named_bad = {e for f in frame.findings if f.level.key != "good" for e in f.electrodes}
        levels = {c.name: channel_key(c, frame.live) for c in frame.channels}
        judged = frame.live and any(v in _RANK for v in levels.values())
        waiting = []
        starts = []
        held = []
        for name in self.electrodes(frame):
            good = frame.live and levels.get(name) == "good" and name not in named_bad
            since = self._good_since.get(name)
            if good and since is None:
                since = t_s
            elif not good:
                since = None
            self._good_since[name] = since
            if name in self._accepted_names:
                continue
            if name in self.blocked:
                held.append(name)
                waiting.append(name)
            elif since is None:
                waiting.append(name)
            else:
                starts.append(since)
        remaining = None
        if judged and not waiting:
            remaining = self.hold_s - (t_s - max(starts, default=t_s))
            if not starts:  # every electrode accepted: nothing to hold
                remaining = 0.0
            if remaining <= 1e-9 and self.ready_at_s is None:
                self.ready_at_s = t_s
        self.state = ReadyState(t_s, self.hold_s, self.ready_at_s, tuple(waiting), remaining,
                                self.accepted, judged, tuple(held))
        return self.state


def not_good_electrodes(frame: QualityFrame, blocked: Iterable[str] = ()) -> tuple[str, ...]:
    """Scalp electrodes that are not good in ``frame`` (check, bad, no data, named by a
    non-good finding, or in ``blocked``: an impedance over the limit): those a sign-off
    must give a reason for."""
    named_bad = {e for f in frame.findings if f.level.key != "good" for e in f.electrodes}
    named_bad |= set(blocked)
    return tuple(
        c.name for c in frame.channels
        if c.is_scalp and channel_key(c, frame.live) != NOT_JUDGED_KEY
        and (not frame.live or c.level_key != "good" or c.name in named_bad)
    )


# ------------------------------------------------------------------------ sound cue


class Cues:
    """When a sound cue is due: the gate is reached, or a new fault appears (an electrode
    goes from good or no data to check/bad, or a finding not shown at the last update
    appears). A fault that only gets worse (check → bad) is no new fault."""

    def __init__(self) -> None:
        self._faulty: set[str] = set()
        self._findings: set[tuple[str, tuple[str, ...]]] = set()
        self._was_ready = False

    def update(self, frame: QualityFrame, ready: ReadyState | None = None) -> tuple[str, ...]:
        """The reasons to ring at this update (empty: stay quiet)."""
        why: list[str] = []
        if frame.live:
            faulty = {c.name for c in frame.channels if c.level_key in ("check", "bad")}
            new = sorted(faulty - self._faulty)
            if new:
                why.append(f"new fault on {', '.join(new)}")
            self._faulty = faulty
            judged = any(c.level is not None for c in frame.channels)
            if judged:
                keys = {finding_key(f) for f in frame.findings if f.level.key != "good"}
                for f in frame.findings:
                    if finding_key(f) in keys - self._findings:
                        why.append(f"new finding: {f.kind} {'-'.join(f.electrodes)}")
                self._findings = keys
        if ready is not None and ready.ready and not self._was_ready:
            why.append("ready")
        self._was_ready = ready is not None and ready.ready
        return tuple(why)
