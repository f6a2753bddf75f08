"""Cutting the incoming samples into the engine's blocks, and the sizes of the window.

Samples (n_samples, n_channels) arrive in any count; the engine works in whole blocks
(``block_s``) on the stream's samples and on the analysis copy's. :class:`Geometry` is
the window's sizes in samples at one rate.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass

import numpy as np

from bedside.checks.settings import QualitySettings


@dataclass(frozen=True)
class Geometry:
    """Sizes in samples derived from the settings and the rate."""

    block: int
    n_blocks: int
    segment: int
    n_segments: int
    refresh_blocks: int

    @classmethod
    def of(cls, settings: QualitySettings, rate_hz: float) -> Geometry:
        block = max(1, round(rate_hz * settings.block_s))
        per_segment = round(settings.segment_s / settings.block_s)
        n_blocks = round(settings.window_s / settings.block_s)
        n_segments = (n_blocks - per_segment) // (per_segment // 2) + 1
        refresh = max(1, round(settings.refresh_s / settings.block_s))
        return cls(block, n_blocks, block * per_segment, n_segments, refresh)


class BlockCutter:
    """Cuts samples (n, C) arriving in any count into whole blocks of ``block`` rows and
    hands each to ``sink`` (a full block straight from the input, no copy; the rest is
    gathered in one buffer). Used for the stream's blocks and the analysis copy's."""

    def __init__(self, block: int, n_channels: int, sink: Callable[[np.ndarray], None]) -> None:
        self.block = block
        self._buf = np.zeros((block, n_channels))
        self._n = 0
        self._sink = sink

    def reset(self) -> None:
        self._n = 0

    def feed(self, x: np.ndarray) -> None:
        b, pos, n = self.block, 0, x.shape[0]
        while pos < n:
            take = min(b - self._n, n - pos)
            if self._n == 0 and take == b:
                self._sink(x[pos : pos + b])
            else:
                self._buf[self._n : self._n + take] = x[pos : pos + take]
                self._n += take
                if self._n == b:
                    self._sink(self._buf)
                    self._n = 0
            pos += take
