"""A scenario as an in-process sample source (the :class:`bedside.stream.source.Source`
protocol), with no LSL in between: for tests and a demo that needs no network.

Samples are (n_samples, n_channels) in µV, made by the scenario's
:class:`~bedside.sim.generator.SignalGenerator` as real time × ``speed`` passes;
timestamps are ``k / rate_hz`` from the first pull's clock, so they never gap.
"""

from __future__ import annotations

import socket
import threading
import time

import numpy as np

from bedside.errors import InputError
from bedside.sim.generator import SignalGenerator
from bedside.sim.scenario import Scenario, load_scenario
from bedside.stream.channels import build_channels
from bedside.stream.labels import load_labels
from bedside.stream.types import ChannelInfo, Chunk, StreamHealth, StreamIdentity


class SimulatedSource:
    """Serve ``scenario`` live, in-process: ``pull()`` returns what is due since the last pull."""

    def __init__(self, scenario: Scenario | str, speed: float = 1.0, name: str | None = None,
                 max_chunk_s: float = 1.0) -> None:
        if not speed > 0:
            raise InputError(f"speed must be greater than zero, got {speed!r}")
        self.scenario = scenario if isinstance(scenario, Scenario) else load_scenario(scenario)
        self.generator = SignalGenerator(self.scenario)
        self.speed = float(speed)
        self._name = name or f"{self.scenario.stream_name}-inprocess"
        self._rate = self.scenario.rate_hz
        # In-process the samples are already µV, whatever the scenario sends on LSL.
        self._channels, self._notes = build_channels(
            self.scenario.n_channels, list(self.scenario.channels), list(self.scenario.channel_types),
            ["microvolts"] * self.scenario.n_channels, load_labels(),
        )
        self._max_chunk = max(1, int(max_chunk_s * self._rate))
        self._lock = threading.Lock()
        self._t0: float | None = None
        self._sent = 0
        self._closed = False

    @property
    def identity(self) -> StreamIdentity:
        return StreamIdentity(self._name, "EEG", f"bedside-inprocess-{self._name}",
                              socket.gethostname(), self.scenario.n_channels, self._rate)

    @property
    def channels(self) -> tuple[ChannelInfo, ...]:
        return self._channels

    @property
    def samples_sent(self) -> int:
        return self._sent

    def _due(self) -> int:
        assert self._t0 is not None
        return int((time.monotonic() - self._t0) * self._rate * self.speed)

    def pull(self, timeout_s: float = 0.0) -> Chunk | None:
        """Samples due since the last pull (at most max_chunk_s of them), or None."""
        with self._lock:
            if self._closed:
                return None
            if self._t0 is None:
                self._t0 = time.monotonic()
            deadline = time.monotonic() + max(0.0, timeout_s)
            while self._due() <= self._sent:
                left = deadline - time.monotonic()
                if left <= 0:
                    return None
                time.sleep(min(left, 1.0 / (self._rate * self.speed) + 0.001))
            n = min(self._due() - self._sent, self._max_chunk)
            samples = self.generator.generate(self._sent, n)
            stamps = (self._sent + np.arange(n)) / self._rate
            self._sent += n
            return Chunk(samples, stamps)

    def health(self) -> StreamHealth:
        if self._closed:
            return StreamHealth("lost", self._rate, 0.0, notes=self._notes)
        if self._t0 is None:
            return StreamHealth("connecting", self._rate, 0.0, notes=self._notes)
        return StreamHealth("live", self._rate, self._rate * self.speed, notes=self._notes)

    def close(self) -> None:
        self._closed = True
