"""Bookkeeping for the count-down: which electrodes are not good yet, and time to good.

No signal is measured here: this only reads the levels the engine already gave.
"""

from __future__ import annotations

from dataclasses import dataclass

from bedside.checks.types import Level, QualityFrame


@dataclass(frozen=True)
class Progress:
    """not_good: scalp electrodes whose level is not GOOD (or has no data), in stream order.
    time_to_good_s: electrode → seconds from the first live frame to its first GOOD."""

    total: int
    not_good: tuple[str, ...]
    time_to_good_s: dict[str, float]
    live: bool


class GoodTracker:
    """Follows frames; times are the frames' own wall_time, so replays are exact."""

    def __init__(self) -> None:
        self._start: float | None = None
        self._first_good: dict[str, float] = {}

    def reset(self) -> None:
        self._start = None
        self._first_good.clear()

    def update(self, frame: QualityFrame) -> Progress:
        scalp = [ch for ch in frame.channels if ch.is_scalp]
        live = frame.live
        if live and self._start is None:
            self._start = frame.wall_time
        if live and self._start is not None:
            for ch in scalp:
                if ch.level is Level.GOOD and ch.name not in self._first_good:
                    self._first_good[ch.name] = max(0.0, frame.wall_time - self._start)
        not_good = tuple(
            ch.name for ch in scalp if not live or ch.level is not Level.GOOD
        )
        return Progress(
            total=len(scalp),
            not_good=not_good,
            time_to_good_s=dict(self._first_good),
            live=live,
        )
