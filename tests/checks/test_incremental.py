"""Incremental engine == full recompute, within a stated tolerance.

The engine keeps running sums (per-block scatter matrices, per-segment periodograms)
and re-sums them exactly every refresh_s. Stated tolerance: after minutes of
streaming with large DC offsets and changing amplitude, the window's covariance,
variance and PSD agree with a full recompute by numpy.cov / scipy.signal.welch
(outside references) to 1e-9 relative, and the verdicts and metrics equal those of
a fresh engine given only the window's samples.

The time-domain statistics are those of the analysis copy (the stream band-limited
by the engine's FIR filter); the reference for them is that copy computed with
scipy.signal.lfilter (tests/checks/helpers.analysis_copy).
"""

from __future__ import annotations

import numpy as np
import pytest
from scipy.signal import welch

from .helpers import TEN_TWENTY, analysis_copy, by_name, eeg_like, feed, make_engine

RATE = 256.0
RTOL = 1e-9


def _long_signal(seconds: float) -> np.ndarray:
    n = int(seconds * RATE)
    x = eeg_like(n, len(TEN_TWENTY), RATE, seed=11)
    t = np.arange(n) / RATE
    x *= 1.0 + 0.5 * np.sin(2 * np.pi * t / 37.0)[:, None]  # amplitude that changes
    x += np.linspace(-20000.0, 20000.0, len(TEN_TWENTY))  # DC offsets up to ±20 mV
    x[:, 7] += 80.0 * np.sin(2 * np.pi * 50.0 * t)
    return x


@pytest.fixture(scope="module")
def streamed() -> tuple[np.ndarray, object, object]:
    x = _long_signal(150.0)
    eng = make_engine()
    frames = feed(eng, x, chunk=29)  # chunks that never line up with blocks
    return x, eng, frames[-1]


def test_covariance_equals_numpy_cov(streamed) -> None:  # type: ignore[no-untyped-def]
    x, eng, _frame = streamed
    stats = eng.window_stats()
    end = eng.analysis_samples
    window = analysis_copy(eng, x)[end - stats.n_samples : end]
    ref = np.cov(window, rowvar=False)
    np.testing.assert_allclose(stats.cov_uv2, ref, rtol=RTOL, atol=RTOL * np.abs(ref).max())
    np.testing.assert_allclose(stats.var_uv2, window.var(axis=0, ddof=1), rtol=RTOL)
    np.testing.assert_allclose(stats.ptp_uv, np.ptp(window, axis=0), rtol=RTOL)
    np.testing.assert_allclose(stats.mean_uv, window.mean(axis=0), rtol=RTOL)


def test_psd_equals_scipy_welch_after_many_refreshes(streamed) -> None:  # type: ignore[no-untyped-def]
    x, eng, _frame = streamed
    spec = eng.spectrum()
    first, n = spec.span
    _f, ref = welch(x[first : first + n], fs=RATE, nperseg=int(RATE), axis=0)
    np.testing.assert_allclose(spec.psd_uv2_per_hz, ref, rtol=RTOL, atol=RTOL * ref.max())


def test_verdicts_equal_a_fresh_engine_on_the_window(streamed) -> None:  # type: ignore[no-untyped-def]
    x, eng, frame = streamed
    n = eng.window_stats().n_samples
    # Start the fresh engine early enough for both windows (the analysis copy's and the
    # spectrum's), on a boundary of the segments, blocks and decimation alike: its rings
    # then hold exactly the samples the long-running engine's rings hold.
    q = eng.analysis.q
    hop = eng.geometry.segment // 2
    start = min(eng.spectrum().span[0], (eng.analysis_samples - n) * q)
    step = int(np.lcm.reduce([hop, eng.geometry.block, eng.analysis_geometry.block * q]))
    start = start // step * step
    fresh = make_engine()
    fresh.push(x[start:], (start + np.arange(len(x) - start)) / RATE)
    ref = fresh.evaluate()
    # Bridging is not a function of the 4-s window: it band-passes with a filter state
    # and votes over its own epochs (bridging.BridgeDetector); its incremental sums are
    # checked against scipy + numpy.var in test_bridging.py (fed in uneven chunks).
    keys = ("rms_uv", "ptp_uv", "line_noise_db", "mains_uv", "drift_uv_per_s", "slow_uv",
            "muscle_ratio", "clip_fraction")
    # The correlation check likewise judges its own 1-s windows of that band.
    def own(checks: dict[str, str]) -> dict[str, str]:
        return {k: v for k, v in checks.items() if k != "correlation"}

    for name in TEN_TWENTY:
        a, b = by_name(frame, name), by_name(ref, name)
        assert own(a.checks) == own(b.checks), name
        for k in keys:
            assert a.metrics[k] == pytest.approx(b.metrics[k], rel=1e-7, abs=1e-9), (name, k)
    assert by_name(frame, "T7").checks["line_noise"] != "good"
    assert by_name(frame, "Cz").level_key == "good"


def test_running_sums_drift_is_undone_by_refresh() -> None:
    """Without the exact re-sum the running scatter differs from the ring's sum by
    rounding; after refresh() they agree exactly (the re-sum is what the ring holds)."""
    eng = make_engine()
    feed(eng, _long_signal(30.0), chunk=64)
    blocks = eng._blocks
    blocks.refresh()
    order = blocks._order()
    np.testing.assert_array_equal(blocks.m2_sum, blocks.m2[order].sum(axis=0))
