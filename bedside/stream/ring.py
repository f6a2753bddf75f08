"""The one ring buffer: the latest samples (µV) of every channel and their timestamps.

Both keepers of recent samples use it: :class:`bedside.stream.tee.KeepRecent` (the
newest seconds for ``bedside check --clip``) and the app's display tee
(``bedside.ui.feed.TeeSource``: the trace, the page of traces, the tap test).

Samples are (n_samples, n_channels) in µV, timestamps (n_samples,) in seconds.
Storage is allocated once. Each sample is written twice (at ``i`` and
``i + capacity``), so the latest ``n <= capacity`` samples always sit in one
contiguous block: :meth:`latest` copies that block in one step and
:meth:`latest_view` returns it without copying. ``extend`` costs O(new samples).

Thread safety: every method takes a lock, so a reader thread may extend while another
thread reads. ``latest``, ``window`` and ``since`` return **copies** (safe to keep);
``latest_view`` returns read-only **views** that the next ``extend`` overwrites — use it
only in the thread that extends, and only until the next ``extend``.

Samples with another channel count than the buffer's are refused with a
:class:`~bedside.errors.StreamFormatError` (the stream changed shape), never mixed in
or dropped silently; the monitor then stops with that message, as the engine would.
"""

from __future__ import annotations

import threading

import numpy as np

from bedside.errors import StreamFormatError


class RingBuffer:
    """The most recent ``capacity_samples`` samples of ``n_channels`` channels.

    rate_hz: the samples' rate where the owner knows it (0.0 when not), kept for the
    readers that turn seconds into samples."""

    def __init__(self, capacity_samples: int, n_channels: int, dtype: type = np.float64,
                 *, rate_hz: float = 0.0) -> None:
        if int(capacity_samples) < 1:
            raise ValueError(f"capacity_samples must be at least 1, got {capacity_samples}")
        if int(n_channels) < 1:
            raise ValueError(f"n_channels must be at least 1, got {n_channels}")
        self.capacity = int(capacity_samples)
        self.n_channels = int(n_channels)
        self.rate_hz = float(rate_hz)
        self._data: np.ndarray = np.zeros((2 * self.capacity, self.n_channels), dtype=dtype)
        self._times = np.zeros(2 * self.capacity, dtype=np.float64)
        self._head = 0  # next write position, in [0, capacity)
        self._total = 0
        self._lock = threading.Lock()

    @classmethod
    def for_seconds(cls, seconds: float, rate_hz: float, n_channels: int) -> RingBuffer:
        """A buffer holding the newest ``seconds`` at ``rate_hz`` (at least one sample)."""
        return cls(max(1, int(round(seconds * rate_hz))), n_channels, rate_hz=rate_hz)

    @property
    def total_written(self) -> int:
        """Samples written since creation (including those already overwritten)."""
        return self._total

    def __len__(self) -> int:
        """Samples held now (at most the capacity)."""
        return min(self._total, self.capacity)

    def extend(self, samples_uv: np.ndarray, timestamps: np.ndarray) -> None:
        """Append samples (n, n_channels) in µV with their timestamps (n,)."""
        samples_uv = np.asarray(samples_uv)
        timestamps = np.asarray(timestamps, dtype=np.float64)
        if samples_uv.ndim != 2 or samples_uv.shape[1] != self.n_channels:
            raise StreamFormatError(
                f"samples must have shape (n, {self.n_channels}), got {samples_uv.shape} "
                "— the stream's channel count changed from its metadata"
            )
        n = samples_uv.shape[0]
        if timestamps.shape != (n,):
            raise StreamFormatError(f"timestamps must have shape ({n},), got {timestamps.shape}")
        if n == 0:
            return
        cap = self.capacity
        with self._lock:
            self._total += n
            if n >= cap:  # only the newest `cap` samples survive
                samples_uv, timestamps = samples_uv[-cap:], timestamps[-cap:]
                self._head = (self._head + n) % cap
                start = self._head  # the oldest kept sample goes at the new head
                self._write(start, samples_uv, timestamps)
                return
            self._write(self._head, samples_uv, timestamps)
            self._head = (self._head + n) % cap

    def _write(self, start: int, samples: np.ndarray, times: np.ndarray) -> None:
        cap = self.capacity
        n = samples.shape[0]
        first = min(n, cap - start)
        for offset in (0, cap):  # the primary copy and its mirror
            self._data[start + offset : start + offset + first] = samples[:first]
            self._times[start + offset : start + offset + first] = times[:first]
        rest = n - first
        if rest:
            for offset in (0, cap):
                self._data[offset : offset + rest] = samples[first:]
                self._times[offset : offset + rest] = times[first:]

    def _span(self, n: int) -> tuple[int, int]:
        n = max(0, min(int(n), len(self)))
        end = self._head + self.capacity
        return end - n, end

    def latest(self, n: int) -> tuple[np.ndarray, np.ndarray]:
        """Copies of the newest ``min(n, len(self))`` samples, oldest first:
        ``(samples (n, C) µV, timestamps (n,))``."""
        with self._lock:
            lo, hi = self._span(n)
            return self._data[lo:hi].copy(), self._times[lo:hi].copy()

    def latest_view(self, n: int) -> tuple[np.ndarray, np.ndarray]:
        """Read-only views of the same block as :meth:`latest` (no copy; see the module notes)."""
        with self._lock:
            lo, hi = self._span(n)
            data, times = self._data[lo:hi], self._times[lo:hi]
        data.flags.writeable = False
        times.flags.writeable = False
        return data, times

    def window(self, last_n: int | None = None) -> np.ndarray:
        """A copy of the samples held (the newest ``last_n`` when given), oldest first,
        (n_samples, n_channels) in µV; no timestamps."""
        with self._lock:
            lo, hi = self._span(self.capacity if last_n is None else last_n)
            return self._data[lo:hi].copy()

    def since(self, total: int) -> tuple[np.ndarray, int]:
        """The samples written after the first ``total`` (at most what is held), oldest
        first, and the count to pass next time (:attr:`total_written`)."""
        with self._lock:
            lo, hi = self._span(self._total - int(total))
            return self._data[lo:hi].copy(), self._total

    def clear(self) -> None:
        """Forget all samples (the storage is kept)."""
        with self._lock:
            self._head = 0
            self._total = 0
