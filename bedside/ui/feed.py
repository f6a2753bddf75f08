"""From the monitor's thread to the screen: frames by message, raw samples for display.

:class:`TeeSource` wraps the real :class:`~bedside.stream.source.Source`; everything
the monitor pulls passes through unchanged, and a copy of the last few seconds is kept
in the stream package's one ring buffer (``bedside.stream.ring``) so the selected
channel's trace and spectrum can be drawn (display only, in a worker thread) without a
second reader on the stream.

:class:`FrameArrived` is posted from the monitor's thread (``post_message`` is
thread-safe) and is *replaceable*: if the screen is slow, an older frame still in
the queue is dropped in favour of the newer one.
"""

from __future__ import annotations

import logging
from collections.abc import Callable
from typing import Any

from textual.message import Message

from bedside.checks.types import QualityFrame
from bedside.errors import BedsideError
from bedside.stream.ring import RingBuffer
from bedside.stream.tee import KeepRecent

log = logging.getLogger("bedside")


class FrameArrived(Message):
    """A new QualityFrame from the monitor (replaces an older one still queued).

    generation: the connection that sent it (the app drops frames of a connection it
    has replaced, e.g. after the channels were changed); None: shown whatever the
    connection (frames handed in by tests and replays)."""

    def __init__(self, frame: QualityFrame, generation: int | None = None) -> None:
        super().__init__()
        self.frame = frame
        self.generation = generation

    def can_replace(self, message: Message) -> bool:
        # Only a queued frame of the same connection: a late frame of a replaced one must
        # never push out a newer connection's frame (the app would then drop both).
        return isinstance(message, FrameArrived) and message.generation == self.generation


class FeedProblem(Message):
    """Something went wrong off the UI thread; ``text`` is for the technologist."""

    def __init__(self, text: str, *, severity: str = "error") -> None:
        super().__init__()
        self.text = text
        self.severity = severity


class TeeSource(KeepRecent):
    """A Source that passes everything through and keeps a display copy of the samples:
    the stream package's :class:`~bedside.stream.tee.KeepRecent`, its ring named
    :attr:`buffer` for the display (``window``, ``since``, ``rate_hz``)."""

    @property
    def buffer(self) -> RingBuffer:
        return self.ring


class FrameFeed:
    """The monitor's ``on_frame``: log the frame (off the UI thread), then post it.

    ``post`` is the app's thread-safe ``post_message``; ``recorder`` gives the log's
    ``on_frame`` (or None; the recorder takes its own lock, so the monitor's thread calls
    it directly); ``generation`` tags every frame with its connection. A failing log write never stops the frames: it is
    reported once per distinct message.
    """

    def __init__(
        self,
        post: Callable[[Message], Any],
        recorder: Callable[[], Callable[[QualityFrame], None] | None],
        generation: int | None = None,
    ) -> None:
        self._post = post
        self._recorder = recorder
        self._generation = generation
        self._last_problem = ""

    def __call__(self, frame: QualityFrame) -> None:
        record = self._recorder()
        if record is not None:
            try:
                record(frame)
            except BedsideError as exc:
                text = f"setup log: {exc}"
                if text != self._last_problem:
                    self._last_problem = text
                    self._post(FeedProblem(text))
        self._post(FrameArrived(frame, self._generation))
