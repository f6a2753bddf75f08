"""PassThrough / KeepRecent: every chunk reaches the caller unchanged, the newest kept.

Outside reference: plain NumPy concatenation of everything written (the last n rows).
"""

from __future__ import annotations

import numpy as np

from bedside.stream.tee import KeepRecent
from bedside.stream.types import ChannelInfo, Chunk, StreamHealth, StreamIdentity


class _Inner:
    def __init__(self, chunks: list[Chunk]) -> None:
        self._chunks = chunks
        self.closed = False
        self.identity = StreamIdentity("bed4", "EEG", "sid-bed4", "ward", 2, 100.0)
        self.channels = tuple(
            ChannelInfo(n, n, "EEG", "microvolts", 1.0, True) for n in ("Fp1", "Fp2")
        )

    def pull(self, timeout_s: float = 0.0) -> Chunk | None:
        return self._chunks.pop(0) if self._chunks else None

    def health(self) -> StreamHealth:
        return StreamHealth(state="live", nominal_rate_hz=100.0, effective_rate_hz=100.0)

    def other_candidates(self) -> tuple[StreamIdentity, ...]:
        return (StreamIdentity("bed4", "EEG", "sid-other", "ward", 2, 100.0),)

    def close(self) -> None:
        self.closed = True


def test_chunks_pass_unchanged_and_the_newest_second_is_kept() -> None:
    rng = np.random.default_rng(7)
    chunks = [Chunk(rng.normal(size=(n, 2)), np.arange(n) / 100.0) for n in (30, 70, 45, 5)]
    everything = np.concatenate([c.samples_uv for c in chunks])
    inner = _Inner(list(chunks))
    with KeepRecent(inner, seconds=1.0) as tee:
        got = [tee.pull(0.0) for _ in range(4)]
        assert tee.pull(0.0) is None
        assert all(g is c for g, c in zip(got, chunks, strict=True))
        kept, _ = tee.ring.latest(len(tee.ring))
        np.testing.assert_array_equal(kept, everything[-100:])
        assert tee.identity.source_id == "sid-bed4" and len(tee.channels) == 2
        assert tee.health().state == "live"
        assert [c.source_id for c in tee.other_candidates()] == ["sid-other"]
    assert inner.closed
