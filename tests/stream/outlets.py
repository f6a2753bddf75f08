"""Small LSL outlets for the stream tests (real liblsl, loopback; no mocks).

Every outlet gets a unique name and an explicit source_id, so parallel test runs never
see each other's streams (tests/lsl_api.cfg keeps discovery on this machine).
"""

from __future__ import annotations

import time
import uuid
from collections.abc import Sequence

import numpy as np
import pylsl


def unique_name(prefix: str = "bedside-test") -> str:
    return f"{prefix}-{uuid.uuid4().hex[:10]}"


def make_info(
    name: str,
    *,
    n_channels: int = 4,
    rate_hz: float = 250.0,
    source_id: str | None = None,
    stream_type: str = "EEG",
    fmt: str = "float32",
    labels: Sequence[str] | None = None,
    units: Sequence[str] | str | None = "microvolts",
    types: Sequence[str] | str | None = "EEG",
) -> pylsl.StreamInfo:
    """A StreamInfo with the XDF channel metadata (desc/channels/channel/{label,unit,type})."""
    info = pylsl.StreamInfo(name, stream_type, n_channels, rate_hz, fmt, source_id or f"sid-{name}")
    if labels is None:
        labels = [f"E{i + 1}" for i in range(n_channels)]
    chans = info.desc().append_child("channels")
    for i, label in enumerate(labels):
        ch = chans.append_child("channel")
        ch.append_child_value("label", label)
        unit = units if isinstance(units, str) or units is None else units[i]
        if unit is not None:
            ch.append_child_value("unit", unit)
        ctype = types if isinstance(types, str) or types is None else types[i]
        if ctype is not None:
            ch.append_child_value("type", ctype)
    return info


class Feeder:
    """Pushes samples on a sample clock: ``push_for(seconds)`` sends them at real-time
    pace in small chunks with explicit timestamps, so tests control gaps and jumps."""

    def __init__(self, info: pylsl.StreamInfo, values: np.ndarray | None = None) -> None:
        self.info = info
        self.outlet = pylsl.StreamOutlet(info, chunk_size=0, max_buffered=60)
        self.rate = info.nominal_srate()
        self.n_channels = info.channel_count()
        self.t = pylsl.local_clock()  # timestamp of the next sample
        self.values = values
        self.sent = 0

    def wait_for_consumer(self, timeout_s: float = 3.0) -> bool:
        return bool(self.outlet.wait_for_consumers(timeout_s))

    def block(self, n: int) -> np.ndarray:
        if self.values is not None:
            idx = (self.sent + np.arange(n)) % self.values.shape[0]
            return np.ascontiguousarray(self.values[idx])
        k = self.sent + np.arange(n)[:, None]  # a 10 Hz, 50 µV sine on every channel
        return np.sin(2 * np.pi * 10.0 * k / self.rate) * 50.0 * np.ones((1, self.n_channels))

    def push(self, n: int, *, skip_s: float = 0.0) -> None:
        """Push n samples starting ``skip_s`` after the next expected timestamp."""
        self.t += skip_s
        x = self.block(n)
        ts = self.t + np.arange(n) / self.rate
        fmt = self.info.channel_format()
        dtype = {pylsl.cf_float32: np.float32, pylsl.cf_double64: np.float64,
                 pylsl.cf_int16: np.int16, pylsl.cf_int32: np.int32}[fmt]
        self.outlet.push_chunk(np.ascontiguousarray(x.astype(dtype)), ts.tolist())
        self.t = float(ts[-1]) + 1.0 / self.rate
        self.sent += n

    def skip(self, seconds: float) -> None:
        """Leave out ``seconds`` of samples: a gap in time and data (real time passes)."""
        self.t += seconds

    def push_due(self) -> int:
        """Push every sample whose timestamp has come (real-time pace); return how many."""
        n = int((pylsl.local_clock() - self.t) * self.rate)
        if n > 0:
            self.push(n)
        return max(n, 0)

    def push_for(self, seconds: float, chunk_s: float = 0.02) -> None:
        """Real-time pace for ``seconds``."""
        end = time.monotonic() + seconds
        while time.monotonic() < end:
            self.push_due()
            time.sleep(chunk_s)

    def close(self) -> None:
        """Destroy the outlet (the stream vanishes); safe to call twice."""
        if hasattr(self, "outlet"):
            del self.outlet


def drain(source, seconds: float, feeder: Feeder | None = None, chunk_s: float = 0.04):  # type: ignore[no-untyped-def]
    """Pull from ``source`` for ``seconds`` (pushing with ``feeder`` meanwhile);
    return (samples (n, C), timestamps (n,)) of everything pulled."""
    xs, ts = [], []
    end = time.monotonic() + seconds
    while time.monotonic() < end:
        if feeder is not None:
            feeder.push_due()
        chunk = source.pull(timeout_s=chunk_s)
        if chunk is not None:
            xs.append(chunk.samples_uv)
            ts.append(chunk.timestamps)
    while (chunk := source.pull(timeout_s=0.2)) is not None:
        xs.append(chunk.samples_uv)
        ts.append(chunk.timestamps)
    if not xs:
        return np.zeros((0, 0)), np.zeros(0)
    return np.concatenate(xs), np.concatenate(ts)
