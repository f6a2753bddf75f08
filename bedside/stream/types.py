"""Data types of the stream package. Sample arrays are (n_samples, n_channels), in µV."""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Literal

import numpy as np


@dataclass(frozen=True)
class StreamIdentity:
    """Who a stream is: enough to pin it and to tell two beds apart.

    uid and started_wall (time.time() when the outlet was made, 0 when not known) name
    one outlet; they take no part in ``==``: two outlets equal in everything else cannot
    be told apart by the user (two copies of one acquisition program on a computer), and
    :func:`bedside.stream.discovery.select_stream` refuses them."""

    name: str
    type: str
    source_id: str
    hostname: str
    n_channels: int
    nominal_rate_hz: float
    uid: str = field(default="", compare=False)
    started_wall: float = field(default=0.0, compare=False)

    def as_dict(self) -> dict[str, object]:
        return {
            "name": self.name,
            "type": self.type,
            "source_id": self.source_id,
            "hostname": self.hostname,
            "n_channels": self.n_channels,
            "nominal_rate_hz": self.nominal_rate_hz,
        }


@dataclass(frozen=True)
class ChannelInfo:
    """One channel as the stream describes it, and as bedside understands it.

    label: as sent by the stream; name: normalised 10-20/10-10 name (or the label
    unchanged when unknown); kind: "EEG" for scalp channels, else "ECG", "EOG",
    "EMG", "TRIG", "MISC", "REF"; unit: as sent ("" when missing); scale_to_uv:
    the factor that turns the stream's values into µV; is_scalp: takes part in
    scalp checks; note: what bedside had to assume or change for this channel
    (unit missing, label empty or repeated), "" when nothing; evidence: what decided
    the kind ("type", "unit", "label", "EDF+ type", "site", "assumed", "reference",
    "technologist"); reference: the reference its label names ("A1" in "T3-A1"), ""
    when none; position_mm: (x, y, z) from the stream's metadata or a layout file, in
    mm (x right, y front, z up), None when not known; impedance_kohm: the electrode's
    impedance as the stream's metadata gives it (``desc/channels/channel/impedance``, kΩ,
    the XDF EEG meta-data convention), None when not given or not a number — judged in
    :mod:`bedside.checks.impedance`, never here.
    """

    label: str
    name: str
    kind: str
    unit: str
    scale_to_uv: float
    is_scalp: bool
    note: str = ""
    evidence: str = ""
    reference: str = ""
    position_mm: tuple[float, float, float] | None = None
    impedance_kohm: float | None = None


@dataclass(frozen=True)
class Chunk:
    """Samples in µV, shape (n_samples, n_channels), with LSL timestamps (s), shape (n_samples,)."""

    samples_uv: np.ndarray
    timestamps: np.ndarray


StreamState = Literal["connecting", "live", "stale", "lost"]


@dataclass(frozen=True)
class StreamHealth:
    """How the stream is doing right now.

    state: "live" (data flowing), "stale" (no data for stale_after_s), "lost"
    (the outlet is gone), "connecting". effective_rate_hz: measured from
    timestamps over the recent past. gaps / dropped_samples: counted since the
    session started, from timestamp jumps. seconds_since_data: wall-clock time
    since the last sample arrived. clock_offset_s: LSL time correction.
    reconnects: times the data came back after "lost". clock_jumps: timestamps that
    went backwards or into the future (not counted as dropped samples). bursts: pulls
    that brought more than a second or so of data at once. untrusted_sources:
    source_ids of other streams with the same name, seen but not used until the
    user chooses one (``LslSource.other_candidates()``). notes: plain-language
    events, newest last.
    """

    state: StreamState
    nominal_rate_hz: float
    effective_rate_hz: float
    gaps: int = 0
    dropped_samples: int = 0
    seconds_since_data: float = 0.0
    clock_offset_s: float = 0.0
    reconnects: int = 0
    notes: tuple[str, ...] = field(default_factory=tuple)
    clock_jumps: int = 0
    bursts: int = 0
    untrusted_sources: tuple[str, ...] = field(default_factory=tuple)

    def as_dict(self) -> dict[str, object]:
        return {
            "state": self.state,
            "nominal_rate_hz": self.nominal_rate_hz,
            "effective_rate_hz": self.effective_rate_hz,
            "gaps": self.gaps,
            "dropped_samples": self.dropped_samples,
            "seconds_since_data": self.seconds_since_data,
            "clock_offset_s": self.clock_offset_s,
            "reconnects": self.reconnects,
            "notes": list(self.notes),
            "clock_jumps": self.clock_jumps,
            "bursts": self.bursts,
            "untrusted_sources": list(self.untrusted_sources),
        }
