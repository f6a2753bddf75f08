"""From the monitor's thread to the screen: frames by message, raw samples for display.

:class:`TeeSource` wraps the real :class:`~bedside.stream.source.Source`; everything
the monitor pulls passes through unchanged, and a copy of the last few seconds is kept
in a :class:`DisplayBuffer` so the selected channel's trace and spectrum can be drawn
(display only, in a worker thread) without a second reader on the stream.

:class:`FrameArrived` is posted from the monitor's thread (``post_message`` is
thread-safe) and is *replaceable*: if the screen is slow, an older frame still in
the queue is dropped in favour of the newer one.
"""

from __future__ import annotations

import logging
import threading
from collections.abc import Callable
from contextlib import AbstractContextManager
from typing import Any

import numpy as np
from textual.message import Message

from bedside.checks.types import QualityFrame
from bedside.errors import BedsideError
from bedside.stream.source import Source
from bedside.stream.tee import PassThrough
from bedside.stream.types import Chunk

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
        return isinstance(message, FrameArrived)


class FeedProblem(Message):
    """Something went wrong off the UI thread; ``text`` is for the technologist."""

    def __init__(self, text: str, *, severity: str = "error") -> None:
        super().__init__()
        self.text = text
        self.severity = severity


class DisplayBuffer:
    """The last ``seconds`` of samples, (n_samples, n_channels) in µV, for display only.

    Written by the monitor's thread, read by the trace worker; a lock guards both.
    """

    def __init__(self, n_channels: int, rate_hz: float, seconds: float) -> None:
        self.rate_hz = float(rate_hz)
        self.capacity = max(8, int(round(seconds * rate_hz)))
        self._data = np.zeros((self.capacity, n_channels), dtype=np.float64)
        self._filled = 0
        self._head = 0  # next write position
        #: Samples appended since creation (the tap test reads what is new by it).
        self.total = 0
        self._lock = threading.Lock()

    def append(self, samples_uv: np.ndarray) -> None:
        """Add samples, shape (n_samples, n_channels) in µV (extra columns ignored)."""
        block = np.asarray(samples_uv, dtype=np.float64)
        if block.ndim != 2 or block.shape[0] == 0:
            return
        n_ch = self._data.shape[1]
        if block.shape[1] != n_ch:
            return  # a stream that changed shape: the stream package reports it
        given = block.shape[0]
        if block.shape[0] >= self.capacity:
            block = block[-self.capacity :]
        n = block.shape[0]
        with self._lock:
            self.total += given
            end = self._head + n
            if end <= self.capacity:
                self._data[self._head : end] = block
            else:
                first = self.capacity - self._head
                self._data[self._head :] = block[:first]
                self._data[: n - first] = block[first:]
            self._head = end % self.capacity
            self._filled = min(self.capacity, self._filled + n)

    def window(self, last_n: int | None = None) -> np.ndarray:
        """A copy of what is held (the newest ``last_n`` samples when given), oldest first,
        shape (n_samples, n_channels) in µV."""
        with self._lock:
            whole = self._held()
        if last_n is None:
            return whole
        return whole[-last_n:] if last_n > 0 else whole[:0]

    def _held(self) -> np.ndarray:
        if self._filled < self.capacity:
            return self._data[: self._filled].copy()
        return np.concatenate([self._data[self._head :], self._data[: self._head]])

    def since(self, total: int) -> tuple[np.ndarray, int]:
        """The samples appended after the first ``total`` (at most what is held), oldest
        first, and the count to ask from next time."""
        with self._lock:
            new = max(0, min(self.total - int(total), self._filled))
            held = self._held()
            return held[held.shape[0] - new:], self.total


class TeeSource(PassThrough):
    """A Source that passes everything through and keeps a display copy of the samples."""

    def __init__(self, inner: Source, seconds: float) -> None:
        super().__init__(inner)
        ident = inner.identity
        rate = ident.nominal_rate_hz if ident.nominal_rate_hz > 0 else 250.0
        self.buffer = DisplayBuffer(len(inner.channels), rate, seconds)

    def on_chunk(self, chunk: Chunk) -> None:
        self.buffer.append(chunk.samples_uv)


class FrameFeed:
    """The monitor's ``on_frame``: log the frame (off the UI thread), then post it.

    ``post`` is the app's thread-safe ``post_message``; ``record`` is the log's
    ``on_frame`` (or None); ``generation`` tags every frame with its connection. A failing log write never stops the frames: it is
    reported once per distinct message.
    """

    def __init__(
        self,
        post: Callable[[Message], Any],
        recorder: Callable[[], tuple[Callable[[QualityFrame], None], AbstractContextManager[Any]] | None],
        generation: int | None = None,
    ) -> None:
        self._post = post
        self._recorder = recorder
        self._generation = generation
        self._last_problem = ""

    def __call__(self, frame: QualityFrame) -> None:
        target = self._recorder()
        if target is not None:
            record, lock = target
            try:
                with lock:
                    record(frame)
            except BedsideError as exc:
                text = f"setup log: {exc}"
                if text != self._last_problem:
                    self._last_problem = text
                    self._post(FeedProblem(text))
        self._post(FrameArrived(frame, self._generation))
