"""Bookkeeping for the count-down: which electrodes are not good yet, and time to good.

No signal is measured here: this only reads the levels the engine already gave.
"""

from __future__ import annotations

from dataclasses import dataclass

from bedside.checks.types import Level, QualityFrame
from bedside.record.time_to_good import TimeToGood


@dataclass(frozen=True)
class Progress:
    """not_good: scalp electrodes whose level is not GOOD (or has no data), in stream order.
    time_to_good_s: electrode → seconds from its own first verdict (not "no data") to its
    first GOOD — ``bedside.record.time_to_good.TimeToGood``, the one definition the setup
    log uses too (0 for an electrode good from its first verdict). The table shows it
    only beside an electrode that is good now. latest_good: the electrode that most
    recently became good after being not good, and its time."""

    total: int
    not_good: tuple[str, ...]
    time_to_good_s: dict[str, float]
    live: bool
    latest_good: tuple[str, float] | None = None


class GoodTracker:
    """Follows frames; times are the frames' own wall_time, so replays are exact."""

    def __init__(self) -> None:
        self._clock = TimeToGood()
        self._latest: tuple[str, float] | None = None

    def reset(self) -> None:
        self._clock = TimeToGood()
        self._latest = None

    def update(self, frame: QualityFrame) -> Progress:
        scalp = [ch for ch in frame.channels if ch.is_scalp]
        live = frame.live
        if live:
            for ch in scalp:
                if ch.level is None:
                    continue
                seconds = self._clock.update(ch.name, ch.level_key, frame.wall_time)
                if seconds is not None and seconds > 0:
                    self._latest = (ch.name, seconds)
        not_good = tuple(
            ch.name for ch in scalp if not live or ch.level is not Level.GOOD
        )
        return Progress(
            total=len(scalp),
            not_good=not_good,
            time_to_good_s=self._clock.reached(),
            live=live,
            latest_good=self._latest,
        )
