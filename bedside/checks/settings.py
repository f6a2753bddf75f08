"""Settings of the quality checks, loaded strictly from ``configs/quality.yaml``.

Every threshold lives in the YAML file with its source in a comment; the defaults
here only mirror it so that a missing key takes a sensible value. Ranges in
``metadata`` are what the loader accepts (out of range → ConfigError naming the
file, line and key); relations between fields (check below bad …) are checked in
``__post_init__`` and reported the same way.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path
from typing import Literal

from bedside.config import CONFIG_DIR, load_config

DEFAULT_PATH = CONFIG_DIR / "quality.yaml"


def _rng(lo: float | None = None, hi: float | None = None) -> dict[str, float | None]:
    return {"min": lo, "max": hi}


def _band(name: str, band: tuple[float, float]) -> None:
    if len(band) != 2 or not 0 <= band[0] < band[1]:
        raise ValueError(f"'{name}' must be [low, high] with 0 <= low < high, got {list(band)}")


def _order(section: str, low_name: str, low: float, high_name: str, high: float) -> None:
    if not low <= high:
        raise ValueError(
            f"'{section}.{low_name}' ({low}) must not be above '{section}.{high_name}' ({high})"
        )


@dataclass(frozen=True)
class AnalysisSettings:
    rate_hz: float = field(default=250.0, metadata=_rng(100.0, 2000.0))
    band_hz: float = field(default=100.0, metadata=_rng(30.0, 500.0))
    spectrum_rate_hz: float = field(default=500.0, metadata=_rng(100.0, 5000.0))

    def __post_init__(self) -> None:
        if not self.band_hz < self.rate_hz / 2:
            raise ValueError(
                f"'analysis.band_hz' ({self.band_hz:g}) must be below half of 'analysis.rate_hz' "
                f"({self.rate_hz:g}): the analysis copy must carry its band"
            )
        _order("quality", "analysis.rate_hz", self.rate_hz, "analysis.spectrum_rate_hz", self.spectrum_rate_hz)


@dataclass(frozen=True)
class HoldSettings:
    hold_s: float = field(default=1.0, metadata=_rng(0.0, 30.0))
    confirm_updates: int = field(default=1, metadata=_rng(1, 20))
    relapse_window_s: float = field(default=10.0, metadata=_rng(0.0, 300.0))
    relapse_hold_s: float = field(default=10.0, metadata=_rng(0.0, 300.0))
    margin_fraction: float = field(default=0.3, metadata=_rng(0.0, 0.9))
    margin_db: float = field(default=2.0, metadata=_rng(0.0, 20.0))


@dataclass(frozen=True)
class LineNoiseSettings:
    mains: Literal["auto", 50, 60] = "auto"
    recent_s: float = field(default=1.5, metadata=_rng(0.1, 60.0))
    bandwidth_hz: float = field(default=1.0, metadata=_rng(0.1, 5.0))
    harmonics: int = field(default=3, metadata=_rng(1, 10))
    detect_prominence_db: float = field(default=4.0, metadata=_rng(0.0, 40.0))
    line_min_peak_db: float = field(default=6.0, metadata=_rng(0.0, 60.0))
    check_uv: float = field(default=10.0, metadata=_rng(0.0, 1e5))
    bad_uv: float = field(default=20.0, metadata=_rng(0.0, 1e5))
    imbalance_ratio: float = field(default=4.0, metadata=_rng(1.0, 1000.0))
    imbalance_min_uv: float = field(default=5.0, metadata=_rng(0.0, 1e5))
    median_floor_uv: float = field(default=0.5, metadata=_rng(0.01, 1e5))
    check_db: float = field(default=0.0, metadata=_rng(-40.0, 40.0))
    bad_db: float = field(default=10.0, metadata=_rng(-40.0, 60.0))
    ratio_min_uv: float = field(default=3.0, metadata=_rng(0.0, 1e5))

    def __post_init__(self) -> None:
        _order("line_noise", "check_db", self.check_db, "bad_db", self.bad_db)
        _order("line_noise", "check_uv", self.check_uv, "bad_uv", self.bad_uv)


@dataclass(frozen=True)
class FlatSettings:
    flat_s: float = field(default=1.0, metadata=_rng(0.05, 60.0))
    ptp_bad_uv: float = field(default=3.0, metadata=_rng(0.0, 1000.0))
    ptp_check_uv: float = field(default=10.0, metadata=_rng(0.0, 1000.0))
    zero_diff_bad_fraction: float = field(default=0.95, metadata=_rng(0.0, 1.0))
    rail_fraction: float = field(default=0.98, metadata=_rng(0.5, 1.0))

    def __post_init__(self) -> None:
        _order("flat", "ptp_bad_uv", self.ptp_bad_uv, "ptp_check_uv", self.ptp_check_uv)


@dataclass(frozen=True)
class DriftSettings:
    slope_check_uv_per_s: float = field(default=120.0, metadata=_rng(0.0, 1e6))
    slope_bad_uv_per_s: float = field(default=400.0, metadata=_rng(0.0, 1e6))
    slow_check_uv: float = field(default=150.0, metadata=_rng(0.0, 1e6))
    slow_bad_uv: float = field(default=400.0, metadata=_rng(0.0, 1e6))
    offset_check_fraction: float = field(default=0.5, metadata=_rng(0.0, 1.0))
    offset_bad_fraction: float = field(default=0.9, metadata=_rng(0.0, 1.0))
    dc_highpass_hz: float = field(default=0.16, metadata=_rng(0.01, 2.0))

    def __post_init__(self) -> None:
        _order("drift", "slope_check_uv_per_s", self.slope_check_uv_per_s,
               "slope_bad_uv_per_s", self.slope_bad_uv_per_s)
        _order("drift", "slow_check_uv", self.slow_check_uv, "slow_bad_uv", self.slow_bad_uv)
        _order("drift", "offset_check_fraction", self.offset_check_fraction,
               "offset_bad_fraction", self.offset_bad_fraction)


@dataclass(frozen=True)
class BridgingSettings:
    l_freq_hz: float = field(default=0.5, metadata=_rng(0.01, 10.0))
    h_freq_hz: float = field(default=30.0, metadata=_rng(1.0, 1000.0))
    epoch_s: float = field(default=2.0, metadata=_rng(0.25, 30.0))
    hop_s: float = field(default=1.0, metadata=_rng(0.1, 30.0))
    n_epochs: int = field(default=3, metadata=_rng(1, 64))
    density_epochs: int = field(default=12, metadata=_rng(1, 120))
    epoch_threshold: float = field(default=0.5, metadata=_rng(0.0, 1.0))
    lm_cutoff_uv2: float = field(default=16.0, metadata=_rng(0.01, 1e6))
    min_rms_uv: float = field(default=1.5, metadata=_rng(0.0, 1000.0))
    short_ed_uv2: float = field(default=1.0, metadata=_rng(0.0, 1e6))
    short_corr_min: float = field(default=0.995, metadata=_rng(0.0, 1.0))

    def __post_init__(self) -> None:
        _order("bridging", "l_freq_hz", self.l_freq_hz, "h_freq_hz", self.h_freq_hz)
        _order("bridging", "hop_s", self.hop_s, "epoch_s", self.epoch_s)
        _order("bridging", "n_epochs", self.n_epochs, "density_epochs", self.density_epochs)
        ratio = self.epoch_s / self.hop_s
        if abs(ratio - round(ratio)) > 1e-6:
            raise ValueError(f"'bridging.epoch_s' must be a whole number of 'bridging.hop_s' ({self.hop_s} s)")


@dataclass(frozen=True)
class ArtifactSettings:
    pop_lag_s: float = field(default=0.01, metadata=_rng(0.0, 0.1))
    pop_step_min_uv: float = field(default=50.0, metadata=_rng(0.0, 1e6))
    pop_step_ratio: float = field(default=10.0, metadata=_rng(1.0, 1e6))
    pop_check_count: int = field(default=1, metadata=_rng(1, 1000))
    pop_bad_count: int = field(default=3, metadata=_rng(1, 1000))
    clip_run_s: float = field(default=0.02, metadata=_rng(0.0, 10.0))
    clip_run_min_samples: int = field(default=4, metadata=_rng(2, 100000))
    clip_check_fraction: float = field(default=0.002, metadata=_rng(0.0, 1.0))
    clip_bad_fraction: float = field(default=0.02, metadata=_rng(0.0, 1.0))
    muscle_band_hz: tuple[float, float] = (50.0, 100.0)
    muscle_z: float = field(default=5.0, metadata=_rng(0.0, 100.0))
    muscle_z_min_ratio: float = field(default=0.3, metadata=_rng(0.0, 100.0))
    muscle_ratio_check: float = field(default=1.0, metadata=_rng(0.0, 100.0))
    muscle_min_uv: float = field(default=20.0, metadata=_rng(0.0, 1e5))
    rms_check_uv: float = field(default=150.0, metadata=_rng(0.0, 1e6))
    rms_bad_uv: float = field(default=300.0, metadata=_rng(0.0, 1e6))
    deviation_z: float = field(default=5.0, metadata=_rng(0.0, 100.0))
    deviation_min_rms_uv: float = field(default=120.0, metadata=_rng(0.0, 1e6))

    def __post_init__(self) -> None:
        _band("artifacts.muscle_band_hz", self.muscle_band_hz)
        _order("artifacts", "pop_check_count", self.pop_check_count, "pop_bad_count", self.pop_bad_count)
        _order("artifacts", "clip_check_fraction", self.clip_check_fraction,
               "clip_bad_fraction", self.clip_bad_fraction)
        _order("artifacts", "rms_check_uv", self.rms_check_uv, "rms_bad_uv", self.rms_bad_uv)


@dataclass(frozen=True)
class CorrelationSettings:
    percentile: float = field(default=98.0, metadata=_rng(50.0, 100.0))
    windows: int = field(default=5, metadata=_rng(1, 600))
    artifact_ratio: float = field(default=4.0, metadata=_rng(1.0, 1e6))
    check_below: float = field(default=0.4, metadata=_rng(0.0, 1.0))
    bad_below: float = field(default=0.15, metadata=_rng(0.0, 1.0))
    min_channels: int = field(default=4, metadata=_rng(3, 1000))

    def __post_init__(self) -> None:
        _order("correlation", "bad_below", self.bad_below, "check_below", self.check_below)


@dataclass(frozen=True)
class ReferenceSettings:
    majority_fraction: float = field(default=0.7, metadata=_rng(0.5, 1.0))
    shared_min: float = field(default=0.5, metadata=_rng(0.0, 1.0))
    min_channels: int = field(default=4, metadata=_rng(2, 1000))


@dataclass(frozen=True)
class PlacementSettings:
    alpha_band_hz: tuple[float, float] = (8.0, 13.0)
    min_evidence_ratio: float = field(default=3.0, metadata=_rng(1.0, 100.0))

    def __post_init__(self) -> None:
        _band("placement.alpha_band_hz", self.alpha_band_hz)


@dataclass(frozen=True)
class LongTermSettings:
    trend_bin_s: float = field(default=600.0, metadata=_rng(10.0, 86400.0))
    alert_after_s: float = field(default=600.0, metadata=_rng(10.0, 86400.0))
    skin_check_s: float = field(default=28800.0, metadata=_rng(600.0, 7 * 86400.0))


@dataclass(frozen=True)
class QualitySettings:
    """All settings of the checks. Times in s, rates in Hz, amplitudes in µV."""

    window_s: float = field(default=4.0, metadata=_rng(1.0, 60.0))
    update_hz: float = field(default=4.0, metadata=_rng(0.2, 50.0))
    block_s: float = field(default=0.25, metadata=_rng(0.01, 2.0))
    segment_s: float = field(default=1.0, metadata=_rng(0.1, 10.0))
    min_data_s: float = field(default=2.0, metadata=_rng(0.0, 60.0))
    refresh_s: float = field(default=10.0, metadata=_rng(0.5, 3600.0))
    min_rate_hz: float = field(default=64.0, metadata=_rng(1.0, 1e6))
    max_rate_hz: float = field(default=20000.0, metadata=_rng(1.0, 1e6))
    eeg_band_hz: tuple[float, float] = (1.0, 40.0)
    spectrum_max_hz: float = field(default=190.0, metadata=_rng(50.0, 1e5))
    analysis: AnalysisSettings = field(default_factory=AnalysisSettings)
    hold: HoldSettings = field(default_factory=HoldSettings)
    line_noise: LineNoiseSettings = field(default_factory=LineNoiseSettings)
    flat: FlatSettings = field(default_factory=FlatSettings)
    drift: DriftSettings = field(default_factory=DriftSettings)
    bridging: BridgingSettings = field(default_factory=BridgingSettings)
    artifacts: ArtifactSettings = field(default_factory=ArtifactSettings)
    correlation: CorrelationSettings = field(default_factory=CorrelationSettings)
    reference: ReferenceSettings = field(default_factory=ReferenceSettings)
    placement: PlacementSettings = field(default_factory=PlacementSettings)
    long_term: LongTermSettings = field(default_factory=LongTermSettings)

    def __post_init__(self) -> None:
        _band("eeg_band_hz", self.eeg_band_hz)
        _order("quality", "segment_s", self.segment_s, "window_s", self.window_s)
        _order("quality", "block_s", self.block_s, "segment_s", self.segment_s)
        _order("quality", "min_data_s", self.min_data_s, "window_s", self.window_s)
        _order("quality", "line_noise.recent_s", self.line_noise.recent_s, "window_s", self.window_s)
        _order("quality", "flat.flat_s", self.flat.flat_s, "window_s", self.window_s)
        _order("quality", "min_rate_hz", self.min_rate_hz, "max_rate_hz", self.max_rate_hz)
        need_hz = max(
            self.artifacts.muscle_band_hz[1],
            self.eeg_band_hz[1],
            self.placement.alpha_band_hz[1],
            self.line_noise.harmonics * 60.0 + self.line_noise.bandwidth_hz,
            60.0 + self.line_noise.bandwidth_hz + 3.0,  # the fundamental's upper flank
        )
        if not self.spectrum_max_hz < self.analysis.spectrum_rate_hz / 2:
            raise ValueError(
                f"'spectrum_max_hz' ({self.spectrum_max_hz:g}) must be below half of "
                f"'analysis.spectrum_rate_hz' ({self.analysis.spectrum_rate_hz:g}): the spectrum's "
                "copy must carry its band"
            )
        if self.spectrum_max_hz < need_hz:
            raise ValueError(
                f"'spectrum_max_hz' ({self.spectrum_max_hz:g}) must reach the highest band the "
                f"checks use ({need_hz:g} Hz: muscle band, mains harmonics)"
            )
        blocks_per_segment = self.segment_s / self.block_s
        blocks_per_window = self.window_s / self.block_s
        for name, value in (("segment_s", blocks_per_segment), ("window_s", blocks_per_window)):
            if abs(value - round(value)) > 1e-6:
                raise ValueError(f"'{name}' must be a whole number of 'block_s' ({self.block_s} s)")
        if round(blocks_per_segment) % 2:
            raise ValueError("'segment_s' must be an even number of 'block_s' (50 % overlap)")


def load_quality(path: Path | str | None = None) -> QualitySettings:
    """Load the ``quality:`` section of ``path`` (default: the shipped configs/quality.yaml)."""
    return load_config(path if path is not None else DEFAULT_PATH, QualitySettings, section="quality")
