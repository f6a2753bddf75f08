"""What the engine reuses between updates must never show stale content.

The spectrum-only checks are reused until the next spectral segment completes; after
reset() (a gap, a reconnect) nothing of the old data may survive. Reference: a fresh
engine given only the new data (the verdicts a full recompute gives), as in
test_incremental.
"""

from __future__ import annotations

from dataclasses import replace

import numpy as np

from bedside.checks.settings import load_quality

from .helpers import TEN_TWENTY, eeg_like, feed, make_engine

RATE = 256.0


def _frame_content(frame):  # type: ignore[no-untyped-def]
    return [(c.name, c.level_key, c.checks, c.reasons, dict(c.metrics)) for c in frame.channels], [
        (f.kind, f.electrodes, f.level.key) for f in frame.findings
    ]


def test_after_reset_frames_equal_a_fresh_engine() -> None:
    n = int(12 * RATE)
    t = np.arange(n) / RATE
    # Short before the gap, so segment counts after it pass the same values again.
    m = int(2.5 * RATE)
    before = eeg_like(m, len(TEN_TWENTY), RATE, seed=5)
    before[:, 7] += 200.0 * np.sin(2 * np.pi * 50.0 * t[:m])  # strong mains on T7 before the gap
    after = eeg_like(n, len(TEN_TWENTY), RATE, seed=6)
    after[:, 2] += 150.0 * np.sin(2 * np.pi * 50.0 * t)  # and on F7 after it (same mains: reset keeps it)
    eng = make_engine()
    feed(eng, before)
    eng.reset()
    got = feed(eng, after, t0_s=100.0)
    fresh = make_engine()
    ref = feed(fresh, after, t0_s=100.0)
    assert eng.mains_hz == fresh.mains_hz == 50.0
    assert len(got) == len(ref)
    for a, b in zip(got, ref, strict=True):
        np.testing.assert_equal(_frame_content(a), _frame_content(b))  # NaN == NaN
    last = {c.name: c for c in got[-1].channels}
    assert last["T7"].checks["line_noise"] == "good"  # nothing of the old data survives
    assert last["F7"].checks["line_noise"] != "good"


def test_frames_between_segments_equal_a_recompute_from_all_the_samples() -> None:
    """Every update, also those that complete no spectral segment (where the spectrum-only
    checks are reused), gives the per-check verdicts and metrics of a fresh engine that
    computes everything once from all the samples so far. A lead with strong mains goes
    flat mid-way: it must stop counting as valid at once, segment or not. Mains is set
    to 50 Hz (a streaming engine remembers the mains it detected; a fresh one could not
    detect it once the lead is flat)."""
    n = int(10 * RATE)
    t = np.arange(n) / RATE
    x = eeg_like(n, len(TEN_TWENTY), RATE, seed=8)
    x[:, 7] += 120.0 * np.sin(2 * np.pi * 50.0 * t)
    off = int(6.25 * RATE)  # a block boundary between two segment completions
    x[off:, 7] = 0.0
    chunk = int(RATE / 4)  # one block per update
    base = load_quality()
    settings = replace(base, line_noise=replace(base.line_noise, mains=50))
    frames = feed(make_engine(settings=settings), x, chunk=chunk)
    flat_seen = False
    for k in range(int(5 * RATE) // chunk, len(frames)):
        m = (k + 1) * chunk
        fresh = make_engine(settings=settings)
        fresh.push(x[:m], np.arange(m) / RATE)
        ref = fresh.evaluate()
        for a, b in zip(frames[k].channels, ref.channels, strict=True):
            assert a.checks == b.checks, (k, a.name)
            np.testing.assert_equal(dict(a.metrics), dict(b.metrics), err_msg=f"{k} {a.name}")  # NaN == NaN
        flat_seen |= frames[k].channels[7].checks["flat"] == "bad"
        if k * chunk < off - 2 * RATE:  # mains on T7 while it is connected
            assert frames[k].channels[7].checks["line_noise"] != "good"
    assert flat_seen
    assert frames[-1].channels[7].checks["line_noise"] == "good"  # flat: no ratio to judge
