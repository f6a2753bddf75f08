"""The small interface every sample source offers (LSL inlet, in-process simulator, tests).

The checks' monitor loop and the UI depend on this protocol, never on pylsl.
"""

from __future__ import annotations

from typing import Protocol, runtime_checkable

from bedside.stream.types import ChannelInfo, Chunk, StreamHealth, StreamIdentity


@runtime_checkable
class Source(Protocol):
    """A stream of EEG samples in µV.

    identity / channels: what is being read (channels in stream order).
    pull(timeout_s): the samples that arrived since the last pull, or None if none
    arrived within timeout_s. Never raises on a transient outage: health() says so.
    health(): the stream's state now. close(): release it (idempotent).
    """

    @property
    def identity(self) -> StreamIdentity: ...

    @property
    def channels(self) -> tuple[ChannelInfo, ...]: ...

    def pull(self, timeout_s: float = 0.0) -> Chunk | None: ...

    def health(self) -> StreamHealth: ...

    def close(self) -> None: ...
