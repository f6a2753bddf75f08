"""Publish samples on LSL in real time (or faster): simulated scenarios and replayed files.

:class:`Publisher` plays a :class:`~bedside.sim.scenario.Scenario` through a pylsl
``StreamOutlet`` from a background thread; :func:`run_in_background` starts one for
``bedside demo`` and tests. :class:`StreamPublisher` is the general engine (any
``read(start_sample, n_samples)`` function), which replay uses too.

The outlet carries full channel metadata after the XDF meta-data convention for EEG:
``desc/channels/channel/{label, unit, type}``, ``desc/reference``, ``desc/cap/{name,
size, labelscheme}``, ``desc/acquisition/{manufacturer, model}``, and always a
source_id (pylsl would otherwise invent one and print it; pylsl 1.18 behaviour).

Timestamps: sample k carries ``t0 + k / rate_hz`` where t0 is the LSL clock when
publishing started, so the spacing always matches the nominal rate and the health
monitor sees no false gaps. At ``speed`` 1 this follows the clock; faster speeds
push the same samples sooner (timestamps then run ahead of the clock).
"""

from __future__ import annotations

import logging
import math
import socket
import threading
import time
from collections.abc import Callable
from dataclasses import dataclass, field
from pathlib import Path
from types import TracebackType
from typing import Any

import numpy as np

from bedside.errors import InputError, LSLUnavailable, ScenarioError
from bedside.sim.generator import SignalGenerator
from bedside.sim.scenario import REFERENCE, Scenario, load_scenario

log = logging.getLogger("bedside")

#: µV → the unit named in a scenario (values sent = µV × factor).
UNIT_FROM_UV = {"microvolts": 1.0, "millivolts": 1e-3, "volts": 1e-6, "nanovolts": 1e3}


def import_pylsl() -> Any:
    """pylsl, or a clear error: liblsl missing makes pylsl raise RuntimeError (pylsl 1.18 behaviour)."""
    try:
        import pylsl  # lazy: loading liblsl can fail; that becomes LSLUnavailable here
    except ImportError as exc:
        raise LSLUnavailable("pylsl is not installed; install bedside's dependencies") from exc
    except RuntimeError as exc:
        raise LSLUnavailable(
            f"liblsl could not be loaded ({exc}); install a liblsl for this system or "
            "point PYLSL_LIB at one"
        ) from exc
    return pylsl


@dataclass(frozen=True)
class ChannelSpec:
    """One channel as published: label, unit (XDF spelling, e.g. "microvolts"), type,
    and the electrode's impedance in kΩ (``desc/channels/channel/impedance``; None: not sent)."""

    label: str
    unit: str
    type: str
    impedance_kohm: float | None = None


@dataclass(frozen=True)
class OutletSpec:
    """Everything the outlet says about itself. Values are sent in each channel's unit."""

    name: str
    source_id: str
    rate_hz: float
    channels: tuple[ChannelSpec, ...]
    stream_type: str = "EEG"
    manufacturer: str = "bedside"
    model: str = "simulator"
    cap: tuple[tuple[str, str], ...] = ()  # (key, value) under desc/cap
    reference: str = ""
    extra: tuple[tuple[str, str], ...] = field(default=())  # desc/bedside/{key}
    input_range_uv: float | None = None  # desc/acquisition/input_range_uv (bedside's own key)

    @property
    def n_channels(self) -> int:
        return len(self.channels)


def _check_text(what: str, text: str) -> None:
    """liblsl takes UTF-8 text without NUL bytes; anything else is refused here, clearly
    (a NUL or a byte that is not UTF-8 typed on the command line would otherwise fail
    inside pylsl with a message about its internals)."""
    if "\x00" in text:
        raise InputError(f"the stream's {what} {text!r} contains a NUL character; use letters, digits, '-' or '_'")
    try:
        text.encode("utf-8")
    except UnicodeEncodeError:
        raise InputError(
            f"the stream's {what} {text!r} is not valid UTF-8 text; use letters, digits, '-' or '_'"
        ) from None


def build_stream_info(spec: OutletSpec) -> Any:
    """A pylsl.StreamInfo (float32) with the full metadata of ``spec``."""
    pylsl = import_pylsl()
    if not spec.source_id:
        raise InputError("a stream needs a source_id (an empty one can never be recovered)")
    for what, text in (("name", spec.name), ("source_id", spec.source_id)):
        _check_text(what, text)
    info = pylsl.StreamInfo(
        spec.name, spec.stream_type, spec.n_channels, spec.rate_hz, pylsl.cf_float32, spec.source_id
    )
    desc = info.desc()
    desc.append_child_value("manufacturer", spec.manufacturer)
    channels = desc.append_child("channels")
    for ch in spec.channels:
        node = channels.append_child("channel")
        node.append_child_value("label", ch.label)
        node.append_child_value("unit", ch.unit)
        node.append_child_value("type", ch.type)
        if ch.impedance_kohm is not None:
            node.append_child_value("impedance", f"{ch.impedance_kohm:g}")
    if spec.reference:
        ref = desc.append_child("reference")
        ref.append_child_value("label", spec.reference)
        ref.append_child_value("subtracted", "Yes")
        ref.append_child_value("common_average", "No")
    if spec.cap:
        cap = desc.append_child("cap")
        for key, value in spec.cap:
            cap.append_child_value(key, value)
    acq = desc.append_child("acquisition")
    acq.append_child_value("manufacturer", spec.manufacturer)
    acq.append_child_value("model", spec.model)
    if spec.input_range_uv is not None:
        acq.append_child_value("input_range_uv", f"{spec.input_range_uv:g}")
    if spec.extra:
        extra = desc.append_child("bedside")
        for key, value in spec.extra:
            extra.append_child_value(key, value)
    return info


class StreamPublisher:
    """Push ``read(start_sample, n_samples)`` onto an LSL outlet from a background thread.

    ``read`` returns (n_samples, n_channels) in the channels' units. ``total_samples``
    None means endless; otherwise publishing stops after exactly that many samples.
    ``speed`` multiplies real time. Use as a context manager, or ``start()``/``stop()``.
    """

    #: How often the thread wakes to push what is due (s of wall clock).
    TICK_S = 0.02
    #: Largest chunk pushed at once (s of stream time), so fast replays stay smooth.
    MAX_CHUNK_S = 0.25

    def __init__(
        self,
        spec: OutletSpec,
        read: Callable[[int, int], np.ndarray],
        *,
        total_samples: int | None = None,
        speed: float = 1.0,
    ) -> None:
        if not math.isfinite(speed) or speed <= 0:
            raise InputError(f"speed must be a number greater than zero, got {speed!r}")
        if total_samples is not None and total_samples < 0:
            raise InputError(f"total_samples must be >= 0, got {total_samples}")
        self.spec = spec
        self.speed = float(speed)
        self.total_samples = total_samples
        self._read = read
        self._outlet: Any = None
        self._thread: threading.Thread | None = None
        self._stop = threading.Event()
        self._done = threading.Event()
        self._lock = threading.Lock()
        self._sent = 0
        self._t0 = 0.0
        self._clock: Callable[[], float] = lambda: 0.0
        self.error: BaseException | None = None

    # ----- what it is ------------------------------------------------------------------

    @property
    def name(self) -> str:
        return self.spec.name

    @property
    def source_id(self) -> str:
        return self.spec.source_id

    @property
    def samples_sent(self) -> int:
        with self._lock:
            return self._sent

    @property
    def running(self) -> bool:
        return self._thread is not None and self._thread.is_alive()

    @property
    def first_timestamp(self) -> float:
        """LSL time of sample 0 (set when pushing begins)."""
        return self._t0

    # ----- control ---------------------------------------------------------------------

    def start(self, wait_for_consumer_s: float = 0.0) -> StreamPublisher:
        """Create the outlet (errors raise here, in the caller's thread) and start pushing.

        wait_for_consumer_s > 0: hold sample 0 until an inlet connects (or that many
        seconds pass), so a test's inlet receives every sample from the first.
        """
        if self._thread is not None:
            return self
        pylsl = import_pylsl()
        try:
            self._outlet = pylsl.StreamOutlet(build_stream_info(self.spec), 0, 360)
        except (RuntimeError, ValueError) as exc:
            raise ScenarioError(f"could not open an LSL outlet for {self.spec.name!r}: {exc}") from exc
        self._clock = pylsl.local_clock
        self._t0 = float(self._clock())
        self._wait_for_consumer_s = float(wait_for_consumer_s)
        self._started = threading.Event()
        self._thread = threading.Thread(
            target=self._run, name=f"bedside-publish-{self.spec.name}", daemon=True
        )
        self._thread.start()
        log.info(
            "publishing %s (%d channels at %g Hz, source_id %s) at %g× real time",
            self.spec.name, self.spec.n_channels, self.spec.rate_hz, self.spec.source_id, self.speed,
        )
        return self

    def stop(self, timeout_s: float = 2.0) -> None:
        """Stop pushing and close the outlet (idempotent)."""
        self._stop.set()
        if self._thread is not None:
            self._thread.join(timeout_s)
        self._outlet = None  # dropping the outlet closes the stream

    def wait(self, timeout_s: float | None = None) -> bool:
        """Block until all ``total_samples`` are sent (True) or the timeout passes (False)."""
        return self._done.wait(timeout_s)

    def __enter__(self) -> StreamPublisher:
        return self.start()

    def __exit__(
        self, exc_type: type[BaseException] | None, exc: BaseException | None, tb: TracebackType | None
    ) -> None:
        self.stop()

    # ----- the thread ------------------------------------------------------------------

    def _run(self) -> None:
        rate = self.spec.rate_hz
        max_chunk = max(1, int(self.MAX_CHUNK_S * rate))
        try:
            if self._wait_for_consumer_s > 0:  # in slices, so stop() is heard meanwhile
                until = time.monotonic() + self._wait_for_consumer_s
                while not self._stop.is_set() and time.monotonic() < until:
                    if self._outlet.wait_for_consumers(min(0.25, max(0.0, until - time.monotonic()))):
                        break
            self._t0 = float(self._clock())
            self._started.set()
            while not self._stop.is_set():
                due = int((self._clock() - self._t0) * rate * self.speed)
                if self.total_samples is not None:
                    due = min(due, self.total_samples)
                while self._sent < due and not self._stop.is_set():
                    n = min(max_chunk, due - self._sent)
                    data = np.ascontiguousarray(self._read(self._sent, n), dtype=np.float32)
                    last = self._t0 + (self._sent + n - 1) / rate
                    self._outlet.push_chunk(data, last)
                    with self._lock:
                        self._sent += n
                if self.total_samples is not None and self._sent >= self.total_samples:
                    break
                self._stop.wait(self.TICK_S)
        except Exception as exc:  # reported to the owner through .error and the log
            self.error = exc
            log.error("publishing %s stopped: %s", self.spec.name, exc)
        finally:
            self._started.set()
            self._done.set()


def scenario_spec(scenario: Scenario, name: str | None = None, source_id: str | None = None) -> OutletSpec:
    """The outlet description of a scenario (channel units from ``scenario.units``)."""
    stream_name = name or scenario.stream_name
    sid = source_id or f"bedside-sim-{stream_name}-{socket.gethostname()}"
    channels = tuple(
        ChannelSpec(label, scenario.units, kind)
        for label, kind in zip(scenario.channels, scenario.channel_types, strict=True)
    )
    return OutletSpec(
        name=stream_name,
        source_id=sid,
        rate_hz=scenario.rate_hz,
        channels=channels,
        manufacturer=scenario.manufacturer,
        model="bedside simulator",
        cap=(("name", scenario.cap), ("size", scenario.cap_size), ("labelscheme", scenario.labelscheme)),
        reference=REFERENCE,
        extra=(
            ("scenario", scenario.name),
            ("ward", scenario.ward),
            ("bed", scenario.bed),
            ("patient", scenario.patient),
            ("note", scenario.note),
            ("mains_hz", f"{scenario.mains_hz:g}"),
        ),
    )


class Publisher(StreamPublisher):
    """Publish a scenario on LSL: ``Publisher(scenario).start()`` … ``stop()``, or ``with``.

    name / source_id override the scenario's stream name and the derived source_id;
    speed multiplies real time; duration_s stops after that much stream time (else a
    looping scenario runs until stopped, a non-looping one for its duration_s).
    """

    def __init__(
        self,
        scenario: Scenario | str | Path,
        name: str | None = None,
        speed: float = 1.0,
        source_id: str | None = None,
        duration_s: float | None = None,
    ) -> None:
        if not isinstance(scenario, Scenario):
            scenario = load_scenario(scenario)
        self.scenario = scenario
        self.generator = SignalGenerator(scenario)
        scale = UNIT_FROM_UV[scenario.units]
        if duration_s is not None:
            if not math.isfinite(duration_s) or duration_s <= 0:
                raise InputError(f"duration must be greater than zero seconds, got {duration_s!r}")
            total: int | None = int(round(duration_s * scenario.rate_hz))
        elif scenario.loop:
            total = None
        else:
            total = int(round(scenario.duration_s * scenario.rate_hz))
        gen = self.generator

        def read(start: int, n: int) -> np.ndarray:
            x = gen.generate(start, n)
            return x * scale if scale != 1.0 else x

        super().__init__(scenario_spec(scenario, name, source_id), read, total_samples=total, speed=speed)


def run_in_background(
    scenario: Scenario | str | Path = "ward_demo",
    name: str | None = None,
    speed: float = 1.0,
    source_id: str | None = None,
    duration_s: float | None = None,
) -> Publisher:
    """Start publishing ``scenario`` (a Scenario, a name in demo_streams/ or a path) and return
    the running :class:`Publisher`; call ``.stop()`` when done."""
    publisher = Publisher(scenario, name=name, speed=speed, source_id=source_id, duration_s=duration_s)
    publisher.start()
    return publisher

