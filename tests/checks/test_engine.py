"""The engine on synthetic signals with known answers.

Outside references named per test: PREP (Bigdely-Shamlo et al. 2015) for the flat
and deviation criteria and its robust z (checked with scipy.stats.median_abs_deviation);
numpy.polyfit for the drift slope; the IFCN amplifier-noise limit (Nuwer 1998) for flat;
hand-made faults (steps, rails, NaN) whose answer is known by construction.
"""

from __future__ import annotations

import numpy as np
import pytest
from scipy.stats import median_abs_deviation

from bedside.checks.base import robust_z
from bedside.checks.drift import slope_uv_per_s
from bedside.checks.settings import load_quality
from bedside.checks.types import Level
from bedside.errors import StreamFormatError
from bedside.stream.types import StreamHealth

from .helpers import TEN_TWENTY, by_name, eeg_like, feed, make_engine

RATE = 256.0


def _clean(seconds: float = 8.0, seed: int = 0) -> np.ndarray:
    return eeg_like(int(seconds * RATE), len(TEN_TWENTY), RATE, seed=seed)


def _idx(name: str) -> int:
    return TEN_TWENTY.index(name)


def test_clean_signal_is_all_good() -> None:
    frame = feed(make_engine(), _clean())[-1]
    assert {c.level_key for c in frame.channels} == {"good"}
    assert frame.findings == ()
    assert all("rms_uv" in c.metrics and "line_noise_db" in c.metrics for c in frame.channels)


def test_too_little_data_is_no_data_not_a_colour() -> None:
    eng = make_engine()
    frames = feed(eng, _clean(1.0))
    assert all(c.level is None and c.level_key == "no_data" for c in frames[-1].channels)
    assert "collecting data" in frames[-1].channels[0].reasons[0]


@pytest.mark.parametrize("state", ["stale", "lost", "connecting"])
def test_stream_not_live_gives_no_data(state: str) -> None:
    eng = make_engine()
    feed(eng, _clean())
    health = StreamHealth(state=state, nominal_rate_hz=RATE, effective_rate_hz=0.0)  # type: ignore[arg-type]
    frame = eng.evaluate(health)
    assert all(c.level is None for c in frame.channels)
    assert frame.stream_health is health and not frame.live
    assert f"stream {state}" in frame.channels[0].reasons[0]


def test_nan_and_inf_flag_only_their_channel() -> None:
    """NaN/±Inf: that channel is bad with a clear reason; the others' numbers are unchanged."""
    x = _clean()
    clean_frame = feed(make_engine(), x)[-1]
    y = x.copy()
    y[-300, _idx("C3")] = np.nan
    y[-200, _idx("C3")] = np.inf
    y[-100, _idx("O2")] = -np.inf
    frame = feed(make_engine(), y)[-1]
    for name in ("C3", "O2"):
        ch = by_name(frame, name)
        assert ch.level is Level.BAD
        assert "not numbers (NaN/Inf)" in ch.reasons[0]
    assert by_name(frame, "C3").metrics["nonfinite_samples"] == 2
    for name in ("Fz", "Cz", "P4"):
        a, b = by_name(frame, name), by_name(clean_frame, name)
        assert a.level is Level.GOOD
        # Only the pairs with C3/O2 differ; per-channel metrics are identical.
        assert a.metrics["rms_uv"] == pytest.approx(b.metrics["rms_uv"])
        assert a.metrics["line_noise_db"] == pytest.approx(b.metrics["line_noise_db"])
    assert not [f for f in frame.findings if f.kind in ("ground", "reference")]


@pytest.mark.parametrize("value", [1e308, -3.4e38, 1e12])
def test_numeric_limits_flag_only_their_channel(value: float) -> None:
    """Samples at the numeric limits cannot overflow the shared sums (issue: bad input)."""
    x = _clean()
    x[-500:-400, _idx("F4")] = value
    frame = feed(make_engine(), x)[-1]
    f4 = by_name(frame, "F4")
    assert f4.level is Level.BAD and "beyond any EEG value" in f4.reasons[0]
    others = [c for c in frame.channels if c.name != "F4"]
    assert all(c.level is Level.GOOD for c in others)
    assert all(np.isfinite(c.metrics["rms_uv"]) for c in others)


def test_flat_channel_prep_and_ifcn() -> None:
    """PREP calls SD ≈ 0 flat; amplifier noise only (0.2 µV RMS, below twice the IFCN
    1.5 µV p-p limit) is flat too; a suppressed-looking 1.5 µV RMS channel is 'check'."""
    x = _clean()
    rng = np.random.default_rng(5)
    x[:, _idx("P3")] = 7.0  # constant: SD 0
    x[:, _idx("P4")] = rng.normal(0, 0.2, len(x))
    x[:, _idx("Cz")] = rng.normal(0, 1.5, len(x))
    frame = feed(make_engine(), x)[-1]
    assert by_name(frame, "P3").level is Level.BAD
    assert by_name(frame, "P4").level is Level.BAD
    assert "flat" in by_name(frame, "P4").reasons[0]
    assert by_name(frame, "Cz").checks["flat"] == "check"
    assert by_name(frame, "Pz").level is Level.GOOD


def test_robust_z_matches_scipy_mad() -> None:
    """PREP's robust z: (x − median) / (1.4826·MAD) == scipy's normal-scaled MAD."""
    rng = np.random.default_rng(2)
    v = rng.gamma(2.0, 3.0, 40)
    mask = np.ones(40, dtype=bool)
    ref = (v - np.median(v)) / median_abs_deviation(v, scale="normal")
    np.testing.assert_allclose(robust_z(v, mask), ref, rtol=1e-3)


def test_prep_deviation_flags_a_loud_channel_as_check() -> None:
    """Our outlier rule after PREP's deviation criterion (Bigdely-Shamlo 2015: robust z of
    amplitude > 5): robust z of the RMS > 5 and at least deviation_min_rms_uv → 'check'."""
    x = _clean()
    x[:, _idx("T8")] *= 9.0  # 135 µV RMS: under the absolute limit, far above the others
    frame = feed(make_engine(), x)[-1]
    t8 = by_name(frame, "T8")
    assert t8.checks["amplitude"] == "check"
    assert t8.metrics["amplitude_z"] > 5
    assert "amplitude" in t8.reasons[0]


def test_drift_slope_matches_polyfit_and_is_flagged() -> None:
    x = _clean()
    t = np.arange(len(x)) / RATE
    x[:, _idx("F8")] += 120.0 * t  # 120 µV/s ramp
    eng = make_engine()
    frame = feed(eng, x)[-1]
    stats = eng.window_stats()
    assert stats is not None
    ref = np.polyfit(stats.block_times_s, stats.block_means_uv[:, _idx("F8")], 1)[0]
    assert slope_uv_per_s(stats.block_times_s, stats.block_means_uv)[_idx("F8")] == pytest.approx(ref)
    f8 = by_name(frame, "F8")
    assert f8.metrics["drift_uv_per_s"] == pytest.approx(120.0, rel=0.1)
    assert f8.checks["drift"] == "check" and "µV/s" in f8.reasons[0]


def test_pops_steps_are_found_on_their_channel_only() -> None:
    x = _clean()
    n = len(x)
    for onset in (n - 900, n - 600, n - 300):  # three pops in the last 4 s
        tau = np.arange(n - onset) / RATE
        x[onset:, _idx("C4")] += 300.0 * np.exp(-tau / 0.3)
    frame = feed(make_engine(), x)[-1]
    c4 = by_name(frame, "C4")
    assert c4.checks["pops"] == "bad" and c4.metrics["pops"] == 3
    assert "pop" in " ".join(c4.reasons)
    assert all(c.checks["pops"] == "good" for c in frame.channels if c.name != "C4")


def test_clipping_and_rail() -> None:
    x = _clean()
    x[:, _idx("T7")] = np.clip(x[:, _idx("T7")] * 8, -40.0, 40.0)  # clipped a lot
    x[:, _idx("T8")] = 3190.0 + np.random.default_rng(1).normal(0, 1, len(x))  # at the rail
    frame = feed(make_engine(amplifier_range_uv=3200.0), x)[-1]
    assert by_name(frame, "T7").checks["clipping"] == "bad"
    t8 = by_name(frame, "T8")
    assert t8.level is Level.BAD and "amplifier's limit" in t8.reasons[0]


def test_mains_on_every_channel_is_one_ground_finding() -> None:
    """Huhta & Webster 1973: a poor ground puts mains in all channels → one finding, no wall of red."""
    x = _clean()
    t = np.arange(len(x)) / RATE
    gains = np.linspace(0.8, 1.6, len(TEN_TWENTY))
    x += 60.0 * np.sin(2 * np.pi * 50 * t)[:, None] * gains
    frame = feed(make_engine(), x)[-1]
    ground = [f for f in frame.findings if f.kind == "ground"]
    assert len(ground) == 1 and len(ground[0].electrodes) == len(TEN_TWENTY)
    assert ground[0].level is Level.BAD and "ground" in ground[0].reason
    assert all(c.level is Level.CHECK for c in frame.channels)


def test_non_scalp_channels_are_shown_but_left_out() -> None:
    """An ECG channel with huge amplitude and mains is shown, but is no scalp verdict,
    takes no part in bridging, and cannot tip the reference decision."""
    x = np.hstack([_clean(), np.zeros((int(8 * RATE), 1))])
    t = np.arange(len(x)) / RATE
    x[:, -1] = 900.0 * np.sin(2 * np.pi * 1.2 * t) + 200 * np.sin(2 * np.pi * 50 * t)
    eng = make_engine(non_scalp=["ECG"])
    frame = feed(eng, x)[-1]
    ecg = by_name(frame, "ECG")
    assert not ecg.is_scalp and ecg.level is Level.GOOD
    assert all(c.level is Level.GOOD for c in frame.channels)
    assert all(max(p) < len(TEN_TWENTY) for p in eng.neighbours.tolist())


def test_hold_keeps_a_verdict_steady_then_clears() -> None:
    """A pop shows at once, stays while in the window and for hold_s after, then clears."""
    settings = load_quality()
    x = _clean(14.0)
    onset = int(6 * RATE)
    x[onset:, _idx("Cz")] += 300.0 * np.exp(-np.arange(len(x) - onset) / RATE / 0.2)
    eng = make_engine(settings=settings)
    frames = feed(eng, x)
    times = (np.arange(len(frames)) + 1) / settings.update_hz
    levels = [by_name(f, "Cz").level_key for f in frames]
    first_bad = times[levels.index("check")]
    assert 6.0 <= first_bad <= 6.0 + 1 / settings.update_hz + 1e-9
    raised = [lv for tt, lv in zip(times, levels, strict=True) if first_bad <= tt < 6.0 + settings.window_s]
    assert set(raised) == {"check"}  # no flicker while the pop is in the window
    cleared = [tt for tt, lv in zip(times, levels, strict=True) if tt > first_bad and lv == "good"]
    assert cleared and cleared[0] <= 6.0 + settings.window_s + settings.hold.hold_s + 0.5


@pytest.mark.parametrize("rate", [1.0, 10.0, 100000.0, float("nan")])
def test_absurd_rates_are_refused(rate: float) -> None:
    with pytest.raises(StreamFormatError, match="sampling rate .* accepted: 64 to 20000 Hz"):
        make_engine(rate_hz=rate)


def test_channel_count_change_is_refused() -> None:
    eng = make_engine()
    with pytest.raises(StreamFormatError, match=r"expected \(n_samples, 19\)"):
        eng.push(np.zeros((10, 18)), np.zeros(10))
    with pytest.raises(StreamFormatError, match="no channels"):
        make_engine(names=[])


def test_one_channel_stream_works() -> None:
    eng = make_engine(names=["Cz"])
    x = eeg_like(int(6 * RATE), 1, RATE)
    frame = feed(eng, x[:, 0])[-1]
    assert frame.channels[0].level is Level.GOOD


def test_burst_of_seconds_at_once_equals_steady_feed() -> None:
    """Seconds of data arriving in one chunk give the same verdicts as a steady stream."""
    x = _clean(10.0)
    steady = feed(make_engine(), x)[-1]
    eng = make_engine()
    eng.push(x, np.arange(len(x)) / RATE)
    burst = eng.evaluate()
    assert [c.level_key for c in burst.channels] == [c.level_key for c in steady.channels]
    assert [c.metrics["rms_uv"] for c in burst.channels] == pytest.approx(
        [c.metrics["rms_uv"] for c in steady.channels]
    )



def test_prep_hf_noise_flags_muscle_as_check_only() -> None:
    """PREP's HF-noise criterion (robust z of the >50 Hz / EEG-band ratio > 5): a channel
    with broadband high-frequency activity is 'check' (muscle is advisory, never 'bad')."""
    x = _clean()
    rng = np.random.default_rng(8)
    from scipy.signal import butter, sosfilt

    sos = butter(4, [55.0, 110.0], btype="bandpass", fs=RATE, output="sos")
    x[:, _idx("T7")] += 12.0 * sosfilt(sos, rng.normal(size=len(x))) / 0.3
    frame = feed(make_engine(), x)[-1]
    t7 = by_name(frame, "T7")
    assert t7.checks["muscle"] == "check" and t7.level is Level.CHECK
    assert t7.metrics["muscle_z"] > 5
    assert "relax" in t7.reasons[0]
    assert all(c.checks["muscle"] == "good" for c in frame.channels if c.name != "T7")


def test_swapped_frontal_and_occipital_leads_are_flagged() -> None:
    """Blinks are largest at Fp1/Fp2 and alpha at O1/O2 (common practice of EEG reading;
    alpha 8–13 Hz, IFCN glossary). With the Fp1 and O1 leads swapped the pair is named."""
    n = int(8 * RATE)
    t = np.arange(n) / RATE
    x = _clean(8.0)
    blink = np.zeros(n)
    for onset in (1.0, 3.1, 5.2, 7.0):
        blink += 150.0 * np.exp(-0.5 * ((t - onset) / 0.12) ** 2)
    alpha = 40.0 * np.sin(2 * np.pi * 10.0 * t)
    for name in ("Fp1", "Fp2"):
        x[:, _idx(name)] += blink
    for name in ("O1", "O2"):
        x[:, _idx(name)] += alpha
    normal = feed(make_engine(), x)[-1]
    assert not [f for f in normal.findings if f.kind == "placement"]
    swapped = x.copy()
    swapped[:, [_idx("Fp1"), _idx("O1")]] = x[:, [_idx("O1"), _idx("Fp1")]]
    frame = feed(make_engine(), swapped)[-1]
    found = [f for f in frame.findings if f.kind == "placement"]
    assert len(found) == 1 and set(found[0].electrodes) == {"Fp1", "O1"}
    assert found[0].level is Level.CHECK and "swapped" in found[0].reason


def test_confirm_updates_delays_a_worse_level() -> None:
    """hold.confirm_updates = 3: a worse level shows only after three updates in a row."""
    import dataclasses

    base = load_quality()
    settings = dataclasses.replace(base, hold=dataclasses.replace(base.hold, confirm_updates=3))
    x = _clean(8.0)
    onset = int(6 * RATE)
    x[onset:, _idx("Cz")] = 0.0  # lead falls off at 6 s
    frames = feed(make_engine(settings=settings), x)
    raw = ["bad" in by_name(f, "Cz").checks.values() for f in frames]
    shown = [by_name(f, "Cz").level_key for f in frames]
    first_raw = raw.index(True)
    assert shown[first_raw] == "good" and shown[first_raw + 1] == "good"
    assert shown[first_raw + 2] == "bad"
