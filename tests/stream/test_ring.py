"""The one ring buffer against the obvious reference: concatenate everything, keep the tail.

The reference (numpy concatenation and slicing) is independent of the ring's mirrored
storage, so any wrap-around error shows up as a difference. The same buffer is the
app's display copy (``bedside.ui.feed.TeeSource.buffer``): ``window`` and ``since``
are checked here against values worked by hand.
"""

from __future__ import annotations

import threading

import numpy as np
import pytest
from hypothesis import given
from hypothesis import strategies as st

from bedside.errors import StreamFormatError
from bedside.stream.ring import RingBuffer


@given(
    capacity=st.integers(1, 40),
    sizes=st.lists(st.integers(0, 90), min_size=1, max_size=12),
    n=st.integers(0, 60),
)
def test_latest_equals_the_tail_of_everything_written(capacity: int, sizes: list[int], n: int) -> None:
    ring = RingBuffer(capacity, 3)
    everything, times = np.zeros((0, 3)), np.zeros(0)
    start = 0
    for size in sizes:
        x = np.arange(start, start + size, dtype=float)[:, None] * np.array([1.0, -1.0, 0.5])
        t = np.arange(start, start + size, dtype=float) / 250.0
        ring.extend(x, t)
        everything, times = np.concatenate([everything, x]), np.concatenate([times, t])
        start += size
    keep = min(n, capacity, len(everything))
    got_x, got_t = ring.latest(n)
    assert got_x.shape == (keep, 3)
    np.testing.assert_array_equal(got_x, everything[len(everything) - keep :])
    np.testing.assert_array_equal(got_t, times[len(times) - keep :])
    view_x, view_t = ring.latest_view(n)
    np.testing.assert_array_equal(view_x, got_x)
    assert ring.total_written == start
    assert len(ring) == min(start, capacity)
    np.testing.assert_array_equal(ring.window(n), got_x)
    np.testing.assert_array_equal(ring.window(), everything[len(everything) - min(capacity, start):])
    since = max(0, start - n)
    new, total = ring.since(since)
    assert total == start
    np.testing.assert_array_equal(new, everything[max(since, start - capacity):])


def test_latest_is_a_copy_and_view_is_read_only() -> None:
    ring = RingBuffer(4, 1)
    ring.extend(np.ones((4, 1)), np.arange(4.0))
    copy, _ = ring.latest(4)
    view, _ = ring.latest_view(4)
    ring.extend(np.full((2, 1), 7.0), np.arange(4.0, 6.0))
    assert np.all(copy == 1.0)  # a copy keeps its values
    assert view[-1, 0] == 7.0 or view[-1, 0] == 1.0  # a view may change: documented
    with pytest.raises(ValueError):
        view[0, 0] = 3.0


def test_storage_is_allocated_once() -> None:
    ring = RingBuffer(100, 8)
    before = ring._data.__array_interface__["data"][0]
    for _ in range(50):
        ring.extend(np.random.default_rng(1).normal(size=(37, 8)), np.zeros(37))
    assert ring._data.__array_interface__["data"][0] == before


def test_bad_shapes_are_refused() -> None:
    """A stream that changed shape is a StreamFormatError (the monitor shows it), and
    nothing of the refused block is mixed in."""
    ring = RingBuffer(10, 2)
    ring.extend(np.ones((4, 2)), np.arange(4.0))
    with pytest.raises(StreamFormatError, match=r"shape \(n, 2\), got \(3, 3\).*channel count changed"):
        ring.extend(np.zeros((3, 3)), np.zeros(3))
    with pytest.raises(StreamFormatError, match=r"timestamps must have shape \(3,\)"):
        ring.extend(np.zeros((3, 2)), np.zeros(4))
    np.testing.assert_array_equal(ring.window(), np.ones((4, 2)))
    assert ring.total_written == 4
    with pytest.raises(ValueError, match="capacity_samples"):
        RingBuffer(0, 2)


def test_window_keeps_the_latest_samples_in_order() -> None:
    """By hand: 23 samples in blocks of 4 into a 10-sample buffer (1 s at 10 Hz) leave
    samples 13…22."""
    ring = RingBuffer.for_seconds(1.0, 10.0, 2)
    assert (ring.capacity, ring.rate_hz) == (10, 10.0)
    data = np.arange(46.0).reshape(23, 2)
    for start in range(0, 23, 4):
        block = data[start:start + 4]
        ring.extend(block, np.arange(start, start + len(block)) / 10.0)
    np.testing.assert_array_equal(ring.window(), data[-10:])
    np.testing.assert_array_equal(ring.window(3), data[-3:])
    assert ring.window(0).shape == (0, 2)


def test_since_hands_over_what_is_new_in_order() -> None:
    """since: the samples after a count, oldest first, across the wrap of the ring; when
    more arrived than it holds, what it holds (the rest is gone). Worked by hand."""
    ring = RingBuffer.for_seconds(1.0, 10.0, 2)  # 10 samples
    x = np.arange(46, dtype=float).reshape(23, 2)  # sample k is (2k, 2k+1)
    t = np.arange(23) / 10.0
    ring.extend(x[:7], t[:7])
    got, total = ring.since(0)
    assert total == 7 and np.array_equal(got, x[:7])
    ring.extend(x[7:12], t[7:12])  # wraps
    got, total = ring.since(total)
    assert total == 12 and np.array_equal(got, x[7:12])
    got, total = ring.since(total)
    assert total == 12 and got.shape == (0, 2)
    ring.extend(x[12:23], t[12:23])  # more than it holds
    got, total = ring.since(12)
    assert total == 23 and np.array_equal(got, x[13:23])


def test_concurrent_extend_and_read_never_tear() -> None:
    """Each row is written as (k, k): a torn read would show a row whose values differ
    or timestamps out of order."""
    ring = RingBuffer(64, 2)
    stop = threading.Event()

    def writer() -> None:
        k = 0
        while not stop.is_set():
            x = np.arange(k, k + 16, dtype=float)
            ring.extend(np.c_[x, x], x)
            k += 16

    th = threading.Thread(target=writer)
    th.start()
    try:
        for _ in range(300):
            x, t = ring.latest(64)
            assert np.array_equal(x[:, 0], x[:, 1])
            assert np.array_equal(x[:, 0], t)
            assert np.all(np.diff(t) == 1.0)
    finally:
        stop.set()
        th.join()
