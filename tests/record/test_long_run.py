"""An accelerated hour of frames: the recorder's memory does not grow with time when
nothing changes (only level changes, findings and events add to the log)."""

from __future__ import annotations

import gc
import tracemalloc
from pathlib import Path

from record_factories import FakeClock

from bedside.checks.types import ChannelQuality, Finding, Level, QualityFrame
from bedside.record.session import SessionRecorder
from bedside.stream.types import StreamHealth

NAMES = tuple(f"E{i:02d}" for i in range(8))


def _frame(t: float, i: int) -> QualityFrame:
    chans = tuple(
        ChannelQuality(n, Level.BAD if n == "E03" else Level.GOOD, {"rms_uv": 20.0 + (i % 7), "line_noise_db": 2.5}, ())
        for n in NAMES
    )
    health = StreamHealth("live", 256.0, 255.9, notes=(f"rate {255 + i % 3} Hz",))  # a few repeating notes
    bridge = Finding("bridge", ("E01", "E02"), Level.BAD, "bridged")
    return QualityFrame(t, t, chans, (bridge,), health)


def test_an_hour_of_steady_frames_keeps_memory_flat(tmp_path: Path, clock: FakeClock) -> None:
    rec = SessionRecorder.open(tmp_path / "long.yaml", subject_id="W3-017", clock=clock, autosave_s=2.0)
    frames_per_hour = 4 * 3600  # the engine's default 4 Hz
    tracemalloc.start()
    try:
        # Warm up (first verdicts, the final state, the save cache), then measure.
        for i in range(2000):
            rec.on_frame(_frame(clock.now + i * 0.25, i))
        gc.collect()
        before, _ = tracemalloc.get_traced_memory()
        for i in range(2000, frames_per_hour):
            rec.on_frame(_frame(clock.now + i * 0.25, i))
        gc.collect()
        after, _ = tracemalloc.get_traced_memory()
        snap = rec.snapshot()
    finally:
        tracemalloc.stop()
        rec.close()
    assert len(snap.timeline) == len(NAMES), "one first verdict per electrode, nothing more"
    assert len(snap.findings) == 1 and len([e for e in snap.events if e.kind == "stream_note"]) == 3
    assert after - before < 64_000, f"grew by {after - before} bytes over {frames_per_hour - 2000} frames"
