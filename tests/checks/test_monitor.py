"""The monitor loop: frames at the update rate, 'no data' when the source stalls or is
lost (never the last colours), a fresh window after it returns, errors stop it cleanly.

The in-process source below replays the simulator (bedside.sim) through the Source
protocol; the LSL path is exercised in test_check_command.py with real loopback
outlets.
"""

from __future__ import annotations

import threading
import time

import numpy as np
import pytest

from bedside.checks.engine import Engine
from bedside.checks.monitor import Monitor
from bedside.checks.settings import load_quality
from bedside.checks.types import QualityFrame
from bedside.errors import StreamLost
from bedside.stream.types import Chunk, StreamHealth, StreamIdentity

from .helpers import TEN_TWENTY, channels, eeg_like

RATE = 256.0


class ReplaySource:
    """Serves a prepared array as if it arrived live, ``speed`` × real time."""

    def __init__(self, x: np.ndarray, speed: float = 4.0) -> None:
        self.x, self.speed = x, speed
        self.t0 = time.monotonic()
        self.sent = 0
        self.state = "live"
        self.fail: Exception | None = None
        self._lock = threading.Lock()

    @property
    def identity(self) -> StreamIdentity:
        return StreamIdentity("replay", "EEG", "replay-1", "here", self.x.shape[1], RATE)

    @property
    def channels(self):  # type: ignore[no-untyped-def]
        return tuple(channels(TEN_TWENTY))

    def pull(self, timeout_s: float = 0.0) -> Chunk | None:
        time.sleep(min(timeout_s, 0.01))
        if self.fail is not None:
            raise self.fail
        if self.state != "live":
            return None
        due = min(int((time.monotonic() - self.t0) * RATE * self.speed), len(self.x))
        if due <= self.sent:
            return None
        part = self.x[self.sent : due]
        ts = (self.sent + np.arange(len(part))) / RATE
        self.sent = due
        return Chunk(part, ts)

    def health(self) -> StreamHealth:
        return StreamHealth(self.state, RATE, RATE if self.state == "live" else 0.0)  # type: ignore[arg-type]

    def close(self) -> None:
        pass


def _run(source: ReplaySource, action, seconds: float) -> list[QualityFrame]:  # type: ignore[no-untyped-def]
    frames: list[QualityFrame] = []
    settings = load_quality()
    engine = Engine(settings, source.channels, RATE)
    with Monitor(source, engine, frames.append, update_hz=8.0):
        action(frames)
        time.sleep(seconds)
    return frames


def test_frames_flow_and_go_no_data_when_stale_then_recover() -> None:
    source = ReplaySource(eeg_like(int(120 * RATE), len(TEN_TWENTY), RATE), speed=4.0)
    marks: dict[str, int] = {}

    def script(frames: list[QualityFrame]) -> None:
        time.sleep(1.5)  # 6 s of data at 4× → live verdicts
        marks["before_stall"] = len(frames)
        source.state = "stale"
        time.sleep(0.6)
        marks["stalled"] = len(frames)
        source.state = "live"

    frames = _run(source, script, 0.4)
    live_before = frames[: marks["before_stall"]]
    assert any(f.live and all(c.level is not None for c in f.channels) for f in live_before)
    stale = frames[marks["before_stall"] : marks["stalled"]]
    assert stale, "no frame while stale"
    # From the first frame after the stall, every level is None: never the last colours.
    assert all(not f.live and all(c.level is None for c in f.channels) for f in stale)
    # Back live: a fresh window, so 'collecting data' first rather than old verdicts.
    after = frames[marks["stalled"] :]
    assert after and after[0].live
    assert all(c.level is None for c in after[0].channels)
    assert "collecting data" in after[0].channels[0].reasons[0]


def test_frame_rate_follows_update_hz() -> None:
    source = ReplaySource(eeg_like(int(60 * RATE), len(TEN_TWENTY), RATE), speed=2.0)
    frames = _run(source, lambda _f: None, 1.0)
    # 8 Hz for ~1 s: a generous band (this is behaviour, not a speed target).
    assert 4 <= len(frames) <= 14


def test_source_error_stops_the_loop_with_a_no_data_frame() -> None:
    source = ReplaySource(eeg_like(int(60 * RATE), len(TEN_TWENTY), RATE))
    settings = load_quality()
    frames: list[QualityFrame] = []
    mon = Monitor(source, Engine(settings, source.channels, RATE), frames.append, update_hz=8.0)
    with mon:
        time.sleep(0.3)
        source.fail = StreamLost("stream 'replay' went away")
        deadline = time.monotonic() + 2.0
        while mon.running and time.monotonic() < deadline:
            time.sleep(0.02)
    assert not mon.running
    assert isinstance(mon.error, StreamLost)
    assert frames and all(c.level is None for c in frames[-1].channels)
    assert "went away" in frames[-1].channels[0].reasons[0]


def test_an_internal_error_stops_the_loop_in_words_not_in_silence(caplog: pytest.LogCaptureFixture) -> None:
    """A bug under the monitor (here the source raises a plain RuntimeError) ends the loop
    with an error the app shows and a last 'no data' frame naming it — never a silent
    stall (common practice: fail visibly)."""
    source = ReplaySource(eeg_like(int(60 * RATE), len(TEN_TWENTY), RATE))
    frames: list[QualityFrame] = []
    mon = Monitor(source, Engine(load_quality(), source.channels, RATE), frames.append, update_hz=8.0)
    with caplog.at_level("ERROR", logger="bedside"), mon:
        time.sleep(0.3)
        source.fail = RuntimeError("index out of range")
        deadline = time.monotonic() + 2.0
        while mon.running and time.monotonic() < deadline:
            time.sleep(0.02)
    assert not mon.running
    assert mon.error is not None and "internal error (RuntimeError: index out of range)" in str(mon.error)
    assert frames and all(c.level is None for c in frames[-1].channels)
    assert "internal error" in frames[-1].channels[0].reasons[0]
    assert "monitoring stopped on an internal error" in caplog.text


def test_consumer_bug_does_not_stop_monitoring(caplog: pytest.LogCaptureFixture) -> None:
    source = ReplaySource(eeg_like(int(60 * RATE), len(TEN_TWENTY), RATE))
    calls: list[int] = []

    def bad_consumer(_frame: QualityFrame) -> None:
        calls.append(1)
        raise RuntimeError("consumer bug")

    engine = Engine(load_quality(), source.channels, RATE)
    with Monitor(source, engine, bad_consumer, update_hz=10.0) as mon:
        time.sleep(0.5)
        assert mon.running
    assert len(calls) >= 2
    assert "consumer raised" in caplog.text


def test_bad_update_rate_is_refused() -> None:
    source = ReplaySource(np.zeros((10, len(TEN_TWENTY))))
    with pytest.raises(ValueError, match="update_hz must be greater than zero"):
        Monitor(source, Engine(load_quality(), source.channels, RATE), lambda f: None, update_hz=0)
