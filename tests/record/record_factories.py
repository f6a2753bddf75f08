"""Builders for the record tests: objects made directly from the shared dataclasses
(bedside/*/types.py), so these tests do not depend on the other packages' engines."""

from __future__ import annotations

from collections.abc import Sequence

from bedside.checks.types import ChannelQuality, Finding, Level, QualityFrame
from bedside.placement.types import HeadMeasurements, Mark, PlacementPlan
from bedside.stream.types import ChannelInfo, StreamHealth, StreamIdentity

#: Ten scalp sites of the 10-20 system and one ECG channel (an invented small cap).
SCALP = ("Fp1", "Fp2", "F3", "F4", "C3", "C4", "P3", "P4", "O1", "O2", "Cz")


def make_identity(n_channels: int = len(SCALP) + 1) -> StreamIdentity:
    return StreamIdentity(
        name="WardB-Bed4-EEG",
        type="EEG",
        source_id="wardb-bed4-amp-0001",
        hostname="wardb-cart-2",
        n_channels=n_channels,
        nominal_rate_hz=256.0,
    )


def make_channels() -> tuple[ChannelInfo, ...]:
    chans = [ChannelInfo(n, n, "EEG", "microvolts", 1.0, True) for n in SCALP]
    chans.append(ChannelInfo("ECG", "ECG", "ECG", "microvolts", 1.0, False))
    return tuple(chans)


def make_plan() -> PlacementPlan:
    """A plan for a 56 cm head. The positions are points on a 90 mm sphere at the
    usual 10-20 angles (an idealised head; only the record code reads them here)."""
    import math

    # (azimuth from front, polar angle from vertex) in degrees: spherical 10-20 layout
    # (common practice: Fp at 72° from the vertex, temporal/occipital row at 90°).
    angles = {
        "Fp1": (18, 90), "Fp2": (-18, 90), "F3": (40, 60), "F4": (-40, 60),
        "C3": (90, 45), "C4": (-90, 45), "P3": (140, 60), "P4": (-140, 60),
        "O1": (162, 90), "O2": (-162, 90), "Cz": (0, 0),
    }  # fmt: skip
    positions = {}
    for name, (az, pol) in angles.items():
        a, p = math.radians(az), math.radians(pol)
        # x right, y front, z up: positive azimuth is to the left.
        positions[name] = (
            round(-90 * math.sin(p) * math.sin(a), 1),
            round(90 * math.sin(p) * math.cos(a), 1),
            round(90 * math.cos(p), 1),
        )
    marks = (
        Mark("Fpz", "", "midline", "nasion", 3.6, 3.6, 10.0, (0.0, 85.6, 27.8)),
        Mark("Fz", "", "midline", "nasion", 10.8, 7.2, 30.0, (0.0, 63.6, 63.6)),
        Mark("Cz", "", "midline", "nasion", 18.0, 7.2, 50.0, positions["Cz"]),
    )
    return PlacementPlan(
        measurements=HeadMeasurements(36.0, 35.0, 56.0),
        system="10-20",
        names="modern",
        marks=marks,
        neighbours=(("C3", "Cz"), ("C4", "Cz")),
        positions_mm=positions,
    )


def make_frame(
    wall_time: float,
    levels: dict[str, Level | None],
    *,
    findings: Sequence[Finding] = (),
    state: str = "live",
    gaps: int = 0,
    reconnects: int = 0,
) -> QualityFrame:
    channels = tuple(
        ChannelQuality(
            name=name,
            level=level,
            metrics={"rms_uv": 21.5, "line_noise_db": 3.25 if level is Level.GOOD else 18.0},
            reasons=() if level in (Level.GOOD, None) else (f"{name}: line noise 18 dB over its flanks",),
            is_scalp=name != "ECG",
        )
        for name, level in levels.items()
    )
    health = StreamHealth(
        state=state,  # type: ignore[arg-type]
        nominal_rate_hz=256.0,
        effective_rate_hz=256.0 if state == "live" else 0.0,
        gaps=gaps,
        reconnects=reconnects,
    )
    return QualityFrame(
        time=wall_time, wall_time=wall_time, channels=channels, findings=tuple(findings), stream_health=health
    )


class FakeClock:
    """A settable wall clock (seconds since the epoch)."""

    def __init__(self, start: float = 1_796_000_000.0) -> None:
        self.now = start

    def __call__(self) -> float:
        return self.now

    def advance(self, seconds: float) -> float:
        self.now += seconds
        return self.now
