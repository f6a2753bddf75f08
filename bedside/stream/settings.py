"""Settings of the stream package, loaded strictly from ``configs/stream.yaml``.

Every value's reason (and its source, where it has one) is written beside it in the
YAML file; the defaults here are the same values, so a missing key is harmless.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path

from bedside.config import CONFIG_DIR, load_config
from bedside.errors import ConfigError

#: The shipped settings file.
STREAM_CONFIG = CONFIG_DIR / "stream.yaml"


@dataclass(frozen=True)
class StreamSettings:
    """How bedside reads and judges an LSL stream (times in seconds, rates in Hz)."""

    stale_after_s: float = field(default=2.0, metadata={"min": 0.2, "max": 30.0})
    forget_after_s: float = field(default=1.0, metadata={"min": 0.2, "max": 30.0})
    lost_after_s: float = field(default=5.0, metadata={"min": 0.5, "max": 300.0})
    open_timeout_s: float = field(default=3.0, metadata={"min": 0.1, "max": 60.0})
    max_pull_samples: int = field(default=16384, metadata={"min": 16, "max": 1_000_000})
    gap_tolerance_periods: float = field(default=1.5, metadata={"min": 1.01, "max": 100.0})
    gap_min_s: float = field(default=0.05, metadata={"min": 0.0, "max": 5.0})
    clock_jump_s: float = field(default=1.0, metadata={"min": 0.01, "max": 3600.0})
    rate_window_s: float = field(default=5.0, metadata={"min": 0.5, "max": 120.0})
    rate_tolerance: float = field(default=0.02, metadata={"min": 0.001, "max": 0.5})
    burst_s: float = field(default=1.0, metadata={"min": 0.1, "max": 60.0})
    clock_check_s: float = field(default=5.0, metadata={"min": 0.5, "max": 600.0})
    min_rate_hz: float = field(default=128.0, metadata={"min": 1.0, "max": 100_000.0})
    max_rate_hz: float = field(default=20_000.0, metadata={"min": 1.0, "max": 1_000_000.0})
    low_rate_note_hz: float = field(default=200.0, metadata={"min": 1.0, "max": 100_000.0})
    max_channels: int = field(default=1024, metadata={"min": 1, "max": 100_000})
    millivolts_below_uv: float = field(default=0.5, metadata={"min": 0.0, "max": 100.0})
    volts_below_uv: float = field(default=0.002, metadata={"min": 0.0, "max": 100.0})
    unit_check_s: float = field(default=2.0, metadata={"min": 0.1, "max": 60.0})
    max_notes: int = field(default=20, metadata={"min": 1, "max": 1000})
    discovery_min_wait_s: float = field(default=1.0, metadata={"min": 0.0, "max": 60.0})

    def __post_init__(self) -> None:
        if self.lost_after_s < self.stale_after_s:
            raise ValueError(
                f"lost_after_s ({self.lost_after_s}) must not be below stale_after_s ({self.stale_after_s})"
            )
        if self.volts_below_uv >= self.millivolts_below_uv:
            raise ValueError(
                f"volts_below_uv ({self.volts_below_uv}) must be below millivolts_below_uv "
                f"({self.millivolts_below_uv})"
            )
        if self.min_rate_hz >= self.max_rate_hz:
            raise ValueError(
                f"min_rate_hz ({self.min_rate_hz}) must be below max_rate_hz ({self.max_rate_hz})"
            )



def load_stream_settings(path: Path | str = STREAM_CONFIG) -> StreamSettings:
    """Read ``path`` (section ``stream``); any problem is a ConfigError naming file and key."""
    settings = load_config(path, StreamSettings, "stream")
    if not isinstance(settings, StreamSettings):  # pragma: no cover - load_config guarantees it
        raise ConfigError(f"{path}: could not build the stream settings")
    return settings
