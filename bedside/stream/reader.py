"""Read one pinned LSL stream: :class:`LslSource` (implements :class:`~bedside.stream.source.Source`).

Opening: the identity is looked up again on the network by its source_id (and name and
host), a ``StreamInlet(recover=True)`` is opened with LSL clock synchronisation (so
timestamps are on this computer's LSL clock), and the full metadata is read from
``inlet.info(timeout)`` (resolved infos carry no channel description) by
:mod:`bedside.stream.metadata`. Labels, types and units become :class:`ChannelInfo`
(see :mod:`bedside.stream.channels`).

Reading: :meth:`LslSource.pull` takes whatever arrived into a buffer allocated once and
returns a :class:`Chunk` of **new** arrays, (n_samples, n_channels) in µV, that the
caller may keep. NaN, ±Inf, zeros and extreme values pass through unchanged as data —
judging them is the checks' job.

Health: :meth:`LslSource.health` at any time (see :mod:`bedside.stream.health`). A
background resolver watches the stream's name: when the outlet is no longer visible a
stale stream is "lost"; the inlet reconnects by itself when an outlet with the **same**
source_id returns. A stream with the same name but another source_id (or another shape)
is never used silently: it is noted, logged, and offered by :meth:`other_candidates`;
to trust it, open a new ``LslSource`` on it.
"""

from __future__ import annotations

import logging
import math
import threading
import time
from typing import Any

import numpy as np

from bedside.errors import BedsideError, StreamError, StreamFormatError, StreamNotFound
from bedside.stream.amplifier import AmplifierProfile
from bedside.stream.channels import ChannelOptions, Reference, setup_channels
from bedside.stream.discovery import describe, identity_of, resolve_one
from bedside.stream.health import HealthTracker
from bedside.stream.labels import LabelRules, load_labels
from bedside.stream.lsl import local_clock, pylsl, translate
from bedside.stream.metadata import read_stream_metadata
from bedside.stream.settings import StreamSettings, load_stream_settings
from bedside.stream.types import ChannelInfo, Chunk, StreamHealth, StreamIdentity
from bedside.stream.units import is_counts, unit_suspicion

log = logging.getLogger("bedside")

#: How often (s) the background resolver's view is consulted, at most.
_VISIBILITY_EVERY_S = 0.2


def _quote(value: str) -> str:
    """An XPath 1.0 string literal (no escapes exist: pick the quote not in the value)."""
    if "'" not in value:
        return f"'{value}'"
    if '"' not in value:
        return f'"{value}"'
    raise StreamFormatError(f"the text {value!r} has both kinds of quote; LSL cannot look it up")


def check_rate(identity: StreamIdentity, settings: StreamSettings) -> str:
    """Reject rates bedside cannot use (StreamFormatError); return a note for low ones."""
    rate = identity.nominal_rate_hz
    accepted = f"accepted: {settings.min_rate_hz:g} to {settings.max_rate_hz:g} Hz"
    if not math.isfinite(rate) or rate <= 0:
        raise StreamFormatError(
            f"{describe(identity)} declares an irregular sampling rate (0 Hz); bedside needs "
            f"a regular EEG rate ({accepted})"
        )
    if rate < settings.min_rate_hz:
        raise StreamFormatError(
            f"{describe(identity)} samples at {rate:g} Hz, too slow for EEG quality checks "
            f"(mains at 50/60 Hz must lie below half the rate; {accepted})"
        )
    if rate > settings.max_rate_hz:
        raise StreamFormatError(
            f"{describe(identity)} samples at {rate:g} Hz, which is not an EEG amplifier rate "
            f"({accepted})"
        )
    if rate < settings.low_rate_note_hz:
        return (f"sampling rate {rate:g} Hz is below the {settings.low_rate_note_hz:g} Hz "
                "clinical guidelines ask for")
    return ""


def check_channel_count(identity: StreamIdentity, settings: StreamSettings) -> None:
    """Reject a stream with no channels or more than ``max_channels`` (StreamFormatError)."""
    n = identity.n_channels
    if n < 1:
        raise StreamFormatError(f"{describe(identity)} has no channels")
    if n > settings.max_channels:
        raise StreamFormatError(
            f"{describe(identity)} carries {n} channels; bedside reads at most "
            f"{settings.max_channels} (max_channels in configs/stream.yaml)"
        )


class LslSource:
    """One pinned LSL stream, read into µV with continuous health. Use as a context manager."""

    def __init__(
        self,
        identity: StreamIdentity,
        settings: StreamSettings | None = None,
        labels: LabelRules | None = None,
        options: ChannelOptions | None = None,
    ) -> None:
        self._settings = settings or load_stream_settings()
        rules = labels or load_labels()
        s = self._settings
        rate_note = check_rate(identity, s)
        check_channel_count(identity, s)
        if not identity.source_id:
            raise StreamFormatError(
                f"{describe(identity)} has no source_id, so it could never be recognised after a "
                "drop; set a source_id in the sending program"
            )
        mod = pylsl()
        self._mod = mod
        self._closed = False
        # Held while liblsl reads into the inlet, so close() from another thread (the UI
        # stopping) never frees the inlet under a pull in progress.
        self._io_lock = threading.Lock()
        self._inlet: Any = None
        self._resolver: Any = None
        pred = f"source_id={_quote(identity.source_id)} and name={_quote(identity.name)}"
        if identity.hostname:
            pred += f" and hostname={_quote(identity.hostname)}"
        try:
            found = []
            if identity.uid:  # one outlet chosen among equal ones (the app's picker)
                found = mod.resolve_bypred(f"{pred} and uid={_quote(identity.uid)}", 1,
                                           min(1.0, s.open_timeout_s))
            if not found:
                found = mod.resolve_bypred(pred, 1, s.open_timeout_s)
        except RuntimeError as exc:
            raise translate(exc, f"looking for {describe(identity)}") from exc
        if not found:
            raise StreamNotFound(
                f"{describe(identity)} is no longer visible (looked for {s.open_timeout_s:g} s)"
            )
        resolved = found[0]
        if resolved.channel_format() == mod.cf_string:
            raise StreamFormatError(
                f"{describe(identity)} carries text (like event markers), not samples"
            )
        self._dtype = {
            mod.cf_float32: np.float32,
            mod.cf_double64: np.float64,
            mod.cf_int8: np.int8,
            mod.cf_int16: np.int16,
            mod.cf_int32: np.int32,
            mod.cf_int64: np.int64,
        }.get(resolved.channel_format())
        if self._dtype is None:
            raise StreamFormatError(f"{describe(identity)} has a sample format bedside cannot read")
        try:
            # Clock sync only: dejittering or monotonising would smooth over the very
            # gaps and clock jumps that health reports.
            self._inlet = mod.StreamInlet(
                resolved, recover=True, processing_flags=mod.proc_clocksync
            )
            full = self._inlet.info(timeout=s.open_timeout_s)
            self._inlet.open_stream(timeout=s.open_timeout_s)
        except RuntimeError as exc:
            self.close()
            raise translate(exc, f"opening {describe(identity)}") from exc
        self._identity = identity_of(full)
        try:  # the stream found now may not be the one listed earlier
            rate_note = check_rate(self._identity, s)
        except StreamFormatError:
            self.close()
            raise
        try:
            check_channel_count(self._identity, s)
            setup = setup_channels(
                self._identity.n_channels, read_stream_metadata(full), rules, options,
                integer=np.issubdtype(self._dtype, np.integer), what=describe(self._identity),
            )
        except BedsideError:
            self.close()
            raise
        self._channels, notes = setup.channels, setup.notes
        self._reference, self._profile = setup.reference, setup.profile
        self._unit_mask = np.array(
            [c.is_scalp and c.scale_to_uv == 1.0 and not is_counts(c.unit) for c in self._channels],
            dtype=bool)
        self._unit_seen: list[np.ndarray] = []
        self._unit_need = max(2, int(s.unit_check_s * self._identity.nominal_rate_hz))
        self.unit_note = ""
        self._scale = np.array([c.scale_to_uv for c in self._channels], dtype=np.float64)
        self._raw = np.zeros((s.max_pull_samples, self._identity.n_channels), dtype=self._dtype)
        now = time.monotonic()
        self._tracker = HealthTracker(
            self._identity.nominal_rate_hz, s, started_wall=now, label=f"stream '{identity.name}'"
        )
        for text in ((rate_note,) if rate_note else ()) + notes:
            self._tracker.note(text, level=logging.INFO if text.startswith("channels: ") else logging.WARNING)
        if self._identity.type.strip().casefold() != "eeg":
            self._tracker.note(f"the stream's type is '{self._identity.type}', not EEG; read as EEG")
        if self._identity.n_channels == 1:
            self._tracker.note("one channel only: checks that compare channels cannot run",
                               level=logging.INFO)
        self._resolver = mod.ContinuousResolver(
            prop="name", value=identity.name, forget_after=s.forget_after_s
        )
        self._seen_pinned = False
        self._watch_lock = threading.Lock()
        self._others: dict[tuple[str, str, int, float], StreamIdentity] = {}
        self._last_visibility = -math.inf
        self._last_clock_check = -math.inf
        log.info("reading %s", describe(self._identity))

    # -- the Source protocol -----------------------------------------------------------

    @property
    def identity(self) -> StreamIdentity:
        return self._identity

    @property
    def channels(self) -> tuple[ChannelInfo, ...]:
        return self._channels

    @property
    def settings(self) -> StreamSettings:
        return self._settings

    @property
    def reference(self) -> Reference:
        """What the channels are referred to (``--reference``, metadata or label suffixes)."""
        return self._reference

    @property
    def profile(self) -> AmplifierProfile:
        """The amplifier's coupling and input range, where known."""
        return self._profile

    @property
    def numeric_range_uv(self) -> float | None:
        """± the largest value an integer stream can carry, in µV (the smallest over the
        scalp channels' scales); None for float streams, whose limits are no EEG's."""
        if self._dtype is None or not np.issubdtype(self._dtype, np.integer):
            return None
        top = float(np.iinfo(np.dtype(self._dtype)).max)  # type: ignore[type-var]
        scales = [abs(c.scale_to_uv) for c in self._channels if c.is_scalp and c.scale_to_uv]
        return top * min(scales) if scales else None

    def _check_units(self, samples_uv: np.ndarray) -> None:
        """Once, over the first unit_check_s of data: do µV values look like V or mV?"""
        self._unit_seen.append(samples_uv)
        if sum(len(a) for a in self._unit_seen) < self._unit_need:
            return
        s = self._settings
        note = unit_suspicion(np.concatenate(self._unit_seen), self._unit_mask,
                              s.millivolts_below_uv, s.volts_below_uv)
        self._unit_seen = []
        self._unit_need = -1
        if note:
            self.unit_note = note
            self._tracker.note(note, level=logging.WARNING)

    def pull(self, timeout_s: float = 0.0) -> Chunk | None:
        """New samples since the last pull — (n, n_channels) µV and timestamps (n,) on this
        computer's LSL clock — or None if none arrived within ``timeout_s``."""
        timeout_s = max(0.0, float(timeout_s))
        with self._io_lock:
            if self._closed or self._inlet is None:
                raise StreamError(f"stream '{self._identity.name}' was closed; open it again")
            try:
                _, ts = self._inlet.pull_chunk(
                    timeout=timeout_s,
                    max_samples=self._settings.max_pull_samples,
                    dest_obj=self._raw,
                    min_samples=1 if timeout_s > 0 else None,
                )
            except RuntimeError as exc:
                raise translate(exc, f"reading stream '{self._identity.name}'") from exc
            n = len(ts)
            if n:
                with np.errstate(over="ignore", invalid="ignore"):
                    samples_uv = np.multiply(self._raw[:n], self._scale, dtype=np.float64)
        now_wall = time.monotonic()
        self._watch(now_wall)
        if n == 0:
            return None
        timestamps = np.asarray(ts, dtype=np.float64)
        if self._unit_need > 0:
            self._check_units(samples_uv)
        self._tracker.observe(timestamps, local_clock(), now_wall)
        if now_wall - self._last_clock_check >= self._settings.clock_check_s:
            self._last_clock_check = now_wall
            with self._io_lock:
                inlet = self._inlet
                try:
                    if inlet is not None:
                        self._tracker.set_clock_offset(inlet.time_correction(timeout=0.05))
                except RuntimeError:
                    log.debug("clock offset not available yet")
        return Chunk(samples_uv=samples_uv, timestamps=timestamps)

    def health(self) -> StreamHealth:
        now_wall = time.monotonic()
        if not self._closed:
            self._watch(now_wall)
        return self._tracker.snapshot(now_wall)

    def other_candidates(self) -> tuple[StreamIdentity, ...]:
        """Streams with this stream's name but another source_id or shape, seen since
        opening. They are never used by this source; open a new LslSource to trust one."""
        return tuple(self._others.values())

    def close(self) -> None:
        """Release the inlet (idempotent; safe from another thread: waits for a pull in
        progress, at most its timeout)."""
        if self._closed:
            return
        self._closed = True
        with self._io_lock:
            inlet, self._inlet = self._inlet, None
        self._resolver = None
        if inlet is not None:
            try:
                inlet.close_stream()
            except RuntimeError:  # already gone: nothing to release
                log.debug("inlet already closed")
            del inlet

    def __enter__(self) -> LslSource:
        return self

    def __exit__(self, *exc: object) -> None:
        self.close()

    # -- internals ---------------------------------------------------------------------

    def _watch(self, now_wall: float) -> None:
        """Ask the background resolver what is visible under this name (rate-limited).

        Called from pull() (the reading thread) and health() (any thread)."""
        if now_wall - self._last_visibility < _VISIBILITY_EVERY_S:
            return
        with self._watch_lock:
            resolver = self._resolver
            if resolver is None or now_wall - self._last_visibility < _VISIBILITY_EVERY_S:
                return
            self._last_visibility = now_wall
            self._watch_locked(resolver)

    def _watch_locked(self, resolver: Any) -> None:
        me = self._identity
        pinned_visible = False
        for info in resolver.results():
            other = identity_of(info)
            same_shape = (other.n_channels, other.nominal_rate_hz) == (me.n_channels, me.nominal_rate_hz)
            if other.source_id == me.source_id and other.hostname == me.hostname and same_shape:
                pinned_visible = True
                continue
            key = (other.source_id, other.hostname, other.n_channels, other.nominal_rate_hz)
            if key not in self._others:
                self._others[key] = other
                why = ("the same source_id with a different shape"
                       if other.source_id == me.source_id else "another source_id")
                self._tracker.note(
                    f"another stream named '{me.name}' appeared ({why}): {describe(other)}; "
                    "it is not used unless you choose it"
                )
        if pinned_visible:
            self._seen_pinned = True
        self._tracker.set_visible(True if pinned_visible else (False if self._seen_pinned else None))
        self._tracker.set_untrusted(tuple(o.source_id for o in self._others.values()))


def open_stream(
    name: str | None = None,
    source_id: str | None = None,
    host: str | None = None,
    wait_s: float = 3.0,
    settings: StreamSettings | None = None,
    labels: LabelRules | None = None,
    options: ChannelOptions | None = None,
) -> LslSource:
    """Select one EEG stream the way every command does (``--stream``, ``--source-id``,
    ``--host``, ``--wait``; see :func:`bedside.stream.discovery.resolve_one`) and open it."""
    s = settings or load_stream_settings()
    identity = resolve_one(name=name, source_id=source_id, host=host, wait_s=wait_s, settings=s)
    return LslSource(identity, s, labels, options)
