"""A Source wrapper that passes every chunk through and lets its owner see it.

Used where a consumer besides the checks needs the raw samples: the app's trace view
(a display copy, ``bedside.ui.feed.TeeSource``) and ``bedside check --clip`` (the newest
seconds for an EDF+ clip); both keep them in a :class:`KeepRecent`.
"""

from __future__ import annotations

from bedside.stream.ring import RingBuffer
from bedside.stream.source import Source
from bedside.stream.types import ChannelInfo, Chunk, StreamHealth, StreamIdentity


class PassThrough:
    """Forwards the Source protocol to ``inner``; subclasses see each chunk in ``on_chunk``."""

    def __init__(self, inner: Source) -> None:
        self._inner = inner

    def on_chunk(self, chunk: Chunk) -> None:
        """Called with every chunk pulled, before the caller gets it."""

    @property
    def identity(self) -> StreamIdentity:
        return self._inner.identity

    @property
    def channels(self) -> tuple[ChannelInfo, ...]:
        return self._inner.channels

    def pull(self, timeout_s: float = 0.0) -> Chunk | None:
        chunk = self._inner.pull(timeout_s)
        if chunk is not None:
            self.on_chunk(chunk)
        return chunk

    def health(self) -> StreamHealth:
        return self._inner.health()

    def other_candidates(self) -> tuple[StreamIdentity, ...]:
        """Streams with the pinned stream's name but another source_id (never used unasked)."""
        others = getattr(self._inner, "other_candidates", None)
        if others is None:
            return ()
        try:
            return tuple(others())
        except RuntimeError:  # read while the monitor's thread updates it: ask next time
            return ()

    def close(self) -> None:
        self._inner.close()

    def __enter__(self) -> PassThrough:
        return self

    def __exit__(self, *exc: object) -> None:
        self.close()


#: The rate assumed for a stream that declares none (irregular), so seconds still mean
#: samples; LslSource refuses such streams, replays and tests may not.
FALLBACK_RATE_HZ = 250.0


class KeepRecent(PassThrough):
    """Keeps the newest ``seconds`` of samples (µV, (n_samples, n_channels)) with their
    timestamps in :attr:`ring`, the one :class:`~bedside.stream.ring.RingBuffer`."""

    def __init__(self, inner: Source, seconds: float) -> None:
        super().__init__(inner)
        rate = inner.identity.nominal_rate_hz
        self.rate_hz = rate if rate > 0 else FALLBACK_RATE_HZ
        self.ring = RingBuffer.for_seconds(seconds, self.rate_hz, len(inner.channels))

    def on_chunk(self, chunk: Chunk) -> None:
        self.ring.extend(chunk.samples_uv, chunk.timestamps)
