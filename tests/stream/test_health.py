"""Stream health from timestamps, with clocks driven by the test (no LSL).

Expected figures are hand arithmetic: at 250 Hz a sample period is 4 ms, so a 0.5 s
hole between two samples (a step of 0.5 s) leaves 0.5 × 250 − 1 = 124 samples out.
"""

from __future__ import annotations

import dataclasses

import numpy as np
import pytest

from bedside.stream.health import HealthTracker
from bedside.stream.settings import StreamSettings

RATE = 250.0
S = StreamSettings(rate_window_s=1.0, stale_after_s=2.0)


class Clock:
    """Feeds a tracker chunks of 40 ms at real-time pace, in simulated time."""

    def __init__(self, tracker: HealthTracker, rate: float = RATE, t0: float = 1000.0) -> None:
        self.tr = tracker
        self.rate = rate
        self.ts = t0  # next sample's timestamp
        self.wall = 0.0

    def run(self, seconds: float, chunk_s: float = 0.04, *, true_rate: float | None = None) -> None:
        true_rate = true_rate or self.rate
        n = int(round(chunk_s * true_rate))
        for _ in range(int(round(seconds / chunk_s))):
            t = self.ts + np.arange(n) / true_rate
            self.ts = float(t[-1]) + 1 / true_rate
            self.wall += chunk_s
            self.tr.observe(t, now_lsl=self.ts + 0.001, now_wall=self.wall)


def make() -> tuple[HealthTracker, Clock]:
    tr = HealthTracker(RATE, S, started_wall=0.0)
    return tr, Clock(tr)


def test_steady_stream_is_live_at_its_rate() -> None:
    tr, clk = make()
    assert tr.snapshot(0.0).state == "connecting"
    clk.run(2.0)
    h = tr.snapshot(clk.wall)
    assert h.state == "live"
    assert h.effective_rate_hz == pytest.approx(RATE, rel=1e-6)
    assert (h.gaps, h.dropped_samples, h.clock_jumps, h.bursts) == (0, 0, 0, 0)


def test_gap_counts_the_missing_samples() -> None:
    tr, clk = make()
    clk.run(1.0)
    clk.ts += 0.5 - 1 / RATE  # next sample 0.5 s after the last one
    clk.run(1.0)
    h = tr.snapshot(clk.wall)
    assert h.gaps == 1
    assert h.dropped_samples == 124  # 0.5 s × 250 Hz − 1
    assert any("gap of 0.50 s" in n for n in h.notes)


def test_jitter_below_the_tolerance_is_not_a_gap() -> None:
    tr, clk = make()
    clk.run(0.5)
    clk.ts += 0.02  # 20 ms of jitter: under gap_min_s (50 ms)
    clk.run(0.5)
    assert tr.snapshot(clk.wall).gaps == 0


def test_clock_jumps_back_and_forward_are_not_lost_data() -> None:
    tr, clk = make()
    clk.run(1.0)
    clk.ts -= 30.0  # the sender's clock went back 30 s
    clk.run(0.5)
    h = tr.snapshot(clk.wall)
    assert h.clock_jumps == 1 and h.gaps == 0 and h.dropped_samples == 0
    # Forward into the future of this computer's clock: now_lsl stays where it was.
    t = clk.ts + 60.0 + np.arange(10) / RATE
    tr.observe(t, now_lsl=clk.ts, now_wall=clk.wall + 0.04)
    h = tr.snapshot(clk.wall + 0.04)
    assert h.clock_jumps == 2 and h.gaps == 0
    assert any("went back 30" in n for n in h.notes)
    assert any("ahead of this computer's clock" in n for n in h.notes)


def test_stale_after_two_seconds_then_lost_when_not_visible_then_reconnect() -> None:
    tr, clk = make()
    clk.run(1.0)
    tr.set_visible(True)
    assert tr.snapshot(clk.wall + 1.9).state == "live"
    assert tr.snapshot(clk.wall + 2.01).state == "stale"
    tr.set_visible(False)
    h = tr.snapshot(clk.wall + 2.1)
    assert h.state == "lost"
    assert h.seconds_since_data == pytest.approx(2.1)
    tr.set_visible(True)  # the outlet is back before its data
    assert tr.snapshot(clk.wall + 4.0).state == "stale"
    clk.ts += 4.0
    clk.wall += 4.0
    clk.run(0.2)
    h = tr.snapshot(clk.wall)
    assert h.state == "live" and h.reconnects == 1
    assert h.gaps == 1  # the outage is in the record as a gap
    assert any(n.startswith("reconnected") for n in h.notes)


def test_stall_then_burst() -> None:
    tr, clk = make()
    clk.run(1.0)
    clk.wall += 3.0  # nothing arrives for 3 s ...
    assert tr.snapshot(clk.wall).state == "stale"
    t = clk.ts + np.arange(int(3 * RATE)) / RATE  # ... then all 3 s at once
    clk.ts = float(t[-1]) + 1 / RATE
    tr.observe(t, now_lsl=clk.ts, now_wall=clk.wall)
    h = tr.snapshot(clk.wall)
    assert h.state == "live" and h.bursts == 1 and h.gaps == 0 and h.reconnects == 0


def test_nominal_rate_that_disagrees_with_timestamps_is_noted() -> None:
    tr, clk = make()
    clk.run(1.5, true_rate=240.0)  # declares 250 Hz, sends 240 Hz
    h = tr.snapshot(clk.wall)
    assert h.effective_rate_hz == pytest.approx(240.0, rel=1e-3)
    assert any("give 240.0 Hz but the stream declares 250 Hz" in n for n in h.notes)
    assert h.gaps == 0  # 1/240 s steps are well inside the gap tolerance


def test_irregular_spacing_averages_to_the_rate() -> None:
    """Random spacing (uniform 2-6 ms, mean 4 ms → 250 Hz on average)."""
    tr = HealthTracker(RATE, dataclasses.replace(S, rate_window_s=2.0), started_wall=0.0)
    rng = np.random.default_rng(7)
    t = 1000.0 + np.cumsum(rng.uniform(0.002, 0.006, size=1000))
    for k in range(0, 1000, 10):
        tr.observe(t[k : k + 10], now_lsl=t[k + 9] + 0.001, now_wall=t[k + 9] - 1000.0)
    h = tr.snapshot(t[-1] - 1000.0)
    assert h.effective_rate_hz == pytest.approx(250.0, rel=0.03)
    assert h.gaps == 0


def test_three_hours_with_a_gap_every_minute_stays_bounded() -> None:
    """Accelerated long run (issue 8): 3 h at 250 Hz in 1 s chunks, a 0.2 s gap each
    minute. 180 gaps of round(0.204 × 250) − 1 = 50 samples each (hand arithmetic);
    the memory held (chunks for the rate, notes) stays bounded."""
    tr = HealthTracker(RATE, S, started_wall=0.0)
    clk = Clock(tr)
    for _minute in range(180):
        clk.run(60.0, chunk_s=1.0)
        clk.ts += 0.2
        assert len(tr._chunks) <= 3
    clk.run(1.0, chunk_s=1.0)
    h = tr.snapshot(clk.wall)
    assert h.gaps == 180
    assert h.dropped_samples == 180 * 50
    assert len(h.notes) == S.max_notes
    assert h.effective_rate_hz == pytest.approx(RATE, rel=1e-6)


def test_lost_after_a_longer_silence_when_visibility_is_unknown() -> None:
    """Visibility never known (resolver never saw the outlet): stale at 2 s, lost at 5 s
    (stale_after_s, lost_after_s in configs/stream.yaml)."""
    tr, clk = make()
    clk.run(0.4)
    assert tr.snapshot(clk.wall + 2.01).state == "stale"
    assert tr.snapshot(clk.wall + 4.9).state == "stale"
    assert tr.snapshot(clk.wall + 5.01).state == "lost"
    tr.set_visible(True)  # seen after all: merely stale
    assert tr.snapshot(clk.wall + 6.0).state == "stale"
