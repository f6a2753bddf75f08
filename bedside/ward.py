"""A ward of beds: every visible EEG stream watched at once, in one process.

Each bed is one stream (told apart by source_id, host and, for equal copies, the outlet's
uid): its own :class:`~bedside.stream.reader.LslSource`, engine (built with
:func:`bedside.engine_setup.engine_options`, as ``check`` and the app build theirs) and
:class:`~bedside.checks.monitor.Monitor` thread. :meth:`Ward.poll` takes in streams that
have appeared (a continuous look: beds come and go live) and :meth:`Ward.summaries`
says, per bed, its state (live, stale, lost — or "refused" with the reason when its
channels cannot be judged), the number of scalp electrodes, how many are good, check
and bad, which are not good, and the findings. The summaries carry counts only from
the newest frame; the verdicts are the engine's, not re-judged here.
"""

from __future__ import annotations

import threading
from collections.abc import Callable
from dataclasses import dataclass, field
from typing import Any

from bedside.checks.types import QualityFrame
from bedside.errors import BedsideError
from bedside.stream.types import StreamIdentity


@dataclass(frozen=True)
class BedSummary:
    """One bed as the ward shows it (counts are integers; names in the stream's naming)."""

    name: str
    source_id: str
    hostname: str
    state: str
    n_scalp: int = 0
    good: int = 0
    check: int = 0
    bad: int = 0
    not_good: tuple[str, ...] = ()
    findings: tuple[str, ...] = ()
    note: str = ""

    def as_dict(self) -> dict[str, object]:
        return {"name": self.name, "source_id": self.source_id, "hostname": self.hostname,
                "state": self.state, "n_scalp": self.n_scalp, "good": self.good, "check": self.check,
                "bad": self.bad, "not_good": list(self.not_good), "findings": list(self.findings),
                "note": self.note, "worst": self.worst}

    @property
    def worst(self) -> str:
        """The worst finding in words (what the ward's list shows first)."""
        if self.note:
            return self.note
        if self.findings:
            return self.findings[0]
        if self.bad or self.check:
            return f"not good: {', '.join(self.not_good[:6])}" + (" …" if len(self.not_good) > 6 else "")
        return "all scalp electrodes good" if self.state == "live" and self.n_scalp else ""


def summarise(identity: StreamIdentity, frame: QualityFrame | None, state: str) -> BedSummary:
    """A bed's summary from its newest frame (None: no frame yet)."""
    if frame is None:
        return BedSummary(identity.name, identity.source_id, identity.hostname, state)
    scalp = [c for c in frame.channels if c.is_scalp]
    keys = [c.level_key for c in scalp]
    return BedSummary(
        identity.name, identity.source_id, identity.hostname, state, len(scalp),
        keys.count("good"), keys.count("check"), keys.count("bad"),
        tuple(c.name for c in scalp if c.level_key in ("check", "bad")),
        tuple(f.reason for f in frame.findings),
    )


@dataclass
class Bed:
    identity: StreamIdentity
    source: Any = None
    monitor: Any = None
    note: str = ""
    frame: QualityFrame | None = None
    lock: threading.Lock = field(default_factory=threading.Lock)

    def on_frame(self, frame: QualityFrame) -> None:  # the monitor's thread
        with self.lock:
            self.frame = frame

    def state(self) -> str:
        if self.note:
            return "refused"
        if self.monitor is not None and self.monitor.error is not None:
            return "lost"
        health = self.source.health() if self.source is not None else None
        return str(health.state) if health is not None else "connecting"

    def summary(self) -> BedSummary:
        with self.lock:
            frame = self.frame
        s = summarise(self.identity, frame, self.state())
        if self.note:
            return BedSummary(s.name, s.source_id, s.hostname, "refused", note=self.note)
        if self.monitor is not None and self.monitor.error is not None:
            return BedSummary(s.name, s.source_id, s.hostname, "lost", note=str(self.monitor.error))
        return s

    def close(self) -> None:
        if self.monitor is not None:
            self.monitor.stop()
        if self.source is not None:
            self.source.close()


def _key(identity: StreamIdentity) -> tuple[str, str, str, str]:
    return (identity.name, identity.source_id, identity.hostname, identity.uid)


class Ward:
    """Every visible EEG stream, each watched by its own engine and monitor thread.

    look: what lists the streams (default: a continuous :class:`StreamLook`); open_bed:
    identity → (source, engine) (default: LslSource with the channel choices saved for
    its source_id, and an engine from engine_options); match: which streams are beds
    (default: every EEG stream). A stream that cannot be judged
    (no scalp channel, counts without a scale, …) is listed as "refused" with the reason.
    """

    def __init__(self, look: Any = None, open_bed: Callable[[StreamIdentity], tuple[Any, Any]] | None = None,
                 update_hz: float | None = None, match: Callable[[StreamIdentity], bool] | None = None) -> None:
        from bedside.checks.settings import load_quality

        self.settings = load_quality()
        self.update_hz = update_hz or self.settings.update_hz
        if look is None:
            from bedside.stream.discovery import StreamLook

            look = StreamLook("EEG")
        self.look = look
        self._open = open_bed or self._open_lsl
        self._match = match or (lambda _identity: True)
        self.beds: dict[tuple[str, str, str, str], Bed] = {}

    def _open_lsl(self, identity: StreamIdentity) -> tuple[Any, Any]:
        from bedside.checks.engine import Engine
        from bedside.engine_setup import engine_options
        from bedside.stream.channel_map import saved_choices
        from bedside.stream.channels import ChannelOptions
        from bedside.stream.reader import LslSource

        saved = (saved_choices(identity.source_id) if identity.source_id else None) or {}
        opts = ChannelOptions(choices=saved, choices_from="the channel choices saved for this source_id",
                              choices_strict=False)
        source = LslSource(identity, options=opts)
        try:
            kwargs, _note = engine_options(source)
            engine = Engine(self.settings, source.channels, identity.nominal_rate_hz, **kwargs)
        except BaseException:
            source.close()
            raise
        return source, engine

    def poll(self) -> list[BedSummary]:
        """Take in the streams that appeared since the last poll; the ward's summaries."""
        from bedside.checks.monitor import Monitor

        for identity in self.look.visible():
            key = _key(identity)
            if key in self.beds or not self._match(identity):
                continue
            bed = Bed(identity)
            try:
                bed.source, engine = self._open(identity)
            except BedsideError as exc:
                bed.note = f"not watched: {exc}"
            else:
                bed.monitor = Monitor(bed.source, engine, bed.on_frame, self.update_hz).start()
            self.beds[key] = bed
        return self.summaries()

    def summaries(self) -> list[BedSummary]:
        return [b.summary() for _k, b in sorted(self.beds.items())]

    def close(self) -> None:
        for bed in self.beds.values():
            bed.close()
        if hasattr(self.look, "close"):
            self.look.close()
