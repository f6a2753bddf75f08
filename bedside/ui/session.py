"""Opening and closing a live connection (called from worker threads, never the UI thread).

A :class:`Connection` is the pinned stream, the display tee on it, the engine and
the monitor thread that feeds frames to the app.
"""

from __future__ import annotations

import logging
from collections.abc import Callable
from dataclasses import dataclass
from typing import Any

from bedside.checks.types import QualityFrame
from bedside.stream.source import Source
from bedside.stream.types import ChannelInfo, StreamIdentity
from bedside.ui.config import AppConfig
from bedside.ui.feed import TeeSource
from bedside.ui.services import MonitorLike, Services

log = logging.getLogger("bedside")


@dataclass
class Connection:
    """A running connection. ``stop()`` is idempotent and returns within the monitor's stop."""

    identity: StreamIdentity
    channels: tuple[ChannelInfo, ...]
    tee: TeeSource
    engine: Any
    monitor: MonitorLike
    neighbours: tuple[tuple[str, str], ...]
    #: What bedside inferred, in words ("19 scalp, 2 EOG, 1 ECG, 1 EMG, 2 not judged").
    summary: str = ""
    #: The types a channel may be given (BIDS channels.tsv), for the channels screen.
    channel_types: tuple[str, ...] = ()
    #: Where the bridging neighbours came from (positions, 10-10 names, or all pairs).
    geometry_note: str = ""
    #: The app's connection counter when this one was started (stale messages are dropped).
    generation: int = 0
    #: The department profile its engine judges with (bedside.checks.profiles.Profile;
    #: None: the services gave none, quality.yaml as it is).
    profile: Any = None
    _stopped: bool = False

    def stop(self) -> None:
        if self._stopped:
            return
        self._stopped = True
        try:
            self.monitor.stop()
        finally:
            self.tee.close()


def connect(
    services: Services,
    source: Source,
    config: AppConfig,
    on_frame: Callable[[QualityFrame], None],
    generation: int = 0,
    profile: Any = None,
) -> Connection:
    """Wrap ``source`` for display, build the engine and start the monitor thread.
    profile: the department profile whose thresholds the engine uses (None: the
    services' quality settings)."""
    tee = TeeSource(source, seconds=max(config.trace_s, config.page_s, 4.0))
    try:
        settings = profile.quality if profile is not None else services.load_quality()
        ident = source.identity
        # Neighbours from the stream's own geometry (never the measured plan's graph: it
        # covers only its system and naming, so bridging would skip pairs) and the
        # amplifier's range, as ``bedside check`` builds them.
        engine, geometry = services.make_engine(settings, source)
        summary = services.describe_channels(source.channels)
        kinds = services.channel_types()
        monitor = services.make_monitor(tee, engine, on_frame, config.update_hz)
        monitor.start()
    except BaseException:
        tee.close()
        raise
    return Connection(ident, source.channels, tee, engine, monitor, engine_neighbours(engine), summary,
                      kinds, geometry, generation, profile)


def engine_neighbours(engine: Any) -> tuple[tuple[str, str], ...]:
    """The neighbour pairs the engine uses (index pairs into ``engine.names``), by name;
    () when the engine does not say (the bipolar view then takes the nearest on the map)."""
    pairs, names = getattr(engine, "neighbours", None), getattr(engine, "names", None)
    if pairs is None or names is None:
        return ()
    try:
        return tuple((str(names[int(a)]), str(names[int(b)])) for a, b in pairs)
    except (TypeError, ValueError, IndexError):
        return ()
