"""A causal IIR filter (second-order sections) over blocks, as matrix products.

An IIR filter with state is linear in (input block, state): for a block of n samples,
output = T·x + O·z and new state = B·x + A·z, with T (n × n, lower triangular: the
impulse response), O (n × s), B (s × n), A (s × s), s = 2 × sections. The four
matrices are found once per block length by running ``scipy.signal.sosfilt`` itself
on unit impulses and unit states, so the result is sosfilt's own, summed in another
order (equal to about 1e-13 of the signal; ``tests/checks/test_blockfilter.py``).

Why: sosfilt runs one channel at a time through its sections, sample by sample; at
256 channels and 64 samples per update that is 0.4 ms, the two products about 0.13 ms
(BLAS, all channels at once). Long blocks (after a stall) go through in pieces of at
most ``PIECE`` samples, so T stays small.
"""

from __future__ import annotations

import numpy as np
from scipy.signal import sosfilt, sosfilt_zi

#: Longest piece filtered by one product (T is PIECE × PIECE).
PIECE = 128
#: Block lengths whose matrices are kept (a stream delivers a few lengths only).
KEEP_LENGTHS = 8


class BlockIIR:
    """sosfilt along axis 0 of (n, C) blocks, the state kept between calls."""

    def __init__(self, sos: np.ndarray, n_channels: int) -> None:
        self.sos = np.asarray(sos, dtype=np.float64)
        self.n_sections = self.sos.shape[0]
        self.n_state = 2 * self.n_sections
        self.n_channels = n_channels
        self._maps: dict[int, tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]] = {}
        self.state: np.ndarray | None = None  # (n_state, C); None: not started

    def reset(self) -> None:
        self.state = None

    def start_at(self, first: np.ndarray) -> None:
        """The steady state of a constant input equal to ``first`` (C,): no DC step."""
        zi = sosfilt_zi(self.sos)[:, :, None] * np.asarray(first, dtype=np.float64)[None, None, :]
        self.state = zi.reshape(self.n_state, -1)

    def _matrices(self, n: int) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
        m = self._maps.get(n)
        if m is None:
            ns, s = self.n_sections, self.n_state
            # Column k of T: the response to a unit impulse at sample k from rest; B: the
            # state it leaves. O and A: the same for each unit initial state, no input.
            t, b = sosfilt(self.sos, np.eye(n), axis=0, zi=np.zeros((ns, 2, n)))
            o, a = sosfilt(self.sos, np.zeros((n, s)), axis=0, zi=np.eye(s).reshape(ns, 2, s))
            m = (np.ascontiguousarray(t), np.ascontiguousarray(o),
                 np.ascontiguousarray(b.reshape(s, n)), np.ascontiguousarray(a.reshape(s, s)))
            if len(self._maps) >= KEEP_LENGTHS:
                self._maps.pop(next(iter(self._maps)))
            self._maps[n] = m
        return m

    def filter(self, x: np.ndarray) -> np.ndarray:
        """(n, C) → (n, C) filtered, continuing from the kept state (start_at first)."""
        if self.state is None:
            raise RuntimeError("BlockIIR.filter before start_at")
        n = x.shape[0]
        if n == 0:
            return np.zeros((0, x.shape[1]))
        if n > PIECE:
            return np.concatenate([self.filter(x[k : k + PIECE]) for k in range(0, n, PIECE)], axis=0)
        t, o, b, a = self._matrices(n)
        z = self.state
        y = t @ x
        y += o @ z
        new = b @ x
        new += a @ z
        self.state = new
        return y
