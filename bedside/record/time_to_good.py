"""Time to good: the one definition, used by the setup log and by the app's Watch table."""

from __future__ import annotations

from collections.abc import Sequence
from typing import TYPE_CHECKING

from bedside.checks.types import NO_DATA_KEY

if TYPE_CHECKING:
    from bedside.stream.types import ChannelInfo, StreamIdentity


def same_section(before: tuple[StreamIdentity, Sequence[ChannelInfo]] | None,
                 identity: StreamIdentity, channels: Sequence[ChannelInfo]) -> bool:
    """The stream connected now continues the setup ``before`` (the same stream with the
    same channels): its times to good go on. Another stream, or other channels, starts a
    new section. The one rule, read by the setup log and by the app."""
    return before is not None and before[0] == identity and tuple(before[1]) == tuple(channels)


class TimeToGood:
    """Per electrode, the seconds from its first verdict to its first good verdict.

    The definition (for the technologist: how long this electrode took to come good):

    * **Start:** the electrode's own first verdict of the stream being watched. This is
      the first frame that judged it, with a level other than "no data". It is not the
      session's first frame, which would count the minutes spent measuring and
      preparing before any stream was watched, and it would make the last electrode
      applied look the slowest. It is not the electrode's first contact either: the
      checks cannot tell when an electrode first touched the skin, because an
      electrode still off the head is judged like a bad one (flat, noisy, at the
      rail). A start set at "first contact" would be a guess.
    * **End:** its first good verdict. Levels reach the log and the screen only after
      the checks' hold (``hold.hold_s`` and ``hold.confirm_updates`` in
      ``configs/quality.yaml``), so a good verdict here is one that held. A good that
      flickered for less than the hold never counts. A later relapse does not undo
      the time.
    * Times are the frames' own wall-clock stamps, taken to the millisecond (as the
      log stores them), so a replay gives the same figures. Results are rounded to
      1 ms. An electrode good from its first verdict has 0. One that has never been
      good has None.
    * A new stream section (another stream, or another channel set) starts afresh:
      use a new ``TimeToGood``.

    :meth:`update` is fed the electrodes' verdicts in time order: every frame (the
    app) or only the level changes (the log's timeline). Both give the same result,
    because only the first verdict and the first good count.
    """

    def __init__(self) -> None:
        self._first_verdict_ms: dict[str, int] = {}
        #: electrode → seconds to good (None: not good yet), in the order first seen.
        self.seconds: dict[str, float | None] = {}

    def update(self, electrode: str, level_key: str, t_s: float) -> float | None:
        """Take one verdict (``level_key``: good, check, bad or no_data) at ``t_s``
        (seconds since the epoch). Returns the electrode's time to good when this verdict
        is its first good, else None."""
        self.seconds.setdefault(electrode, None)
        if level_key == NO_DATA_KEY:
            return None
        t_ms = round(t_s * 1000.0)
        start = self._first_verdict_ms.setdefault(electrode, t_ms)
        if level_key != "good" or self.seconds[electrode] is not None:
            return None
        seconds = round(max(0, t_ms - start) / 1000.0, 3)
        self.seconds[electrode] = seconds
        return seconds

    def reached(self) -> dict[str, float]:
        """The electrodes that have been good, with their time to good."""
        return {name: s for name, s in self.seconds.items() if s is not None}
