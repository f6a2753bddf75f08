"""The live session in plain Python: discover, connect, switch, reconnect and close.

:class:`LiveSession` owns everything that opens or stops a stream for the app. It
never imports Textual; the app hands it a thread-safe ``post`` for its events and a
``frame_feed`` for each connection's frames, and asks it from the UI thread only.

Threads (DEVELOPERS.md, "Thread map"):

- the UI thread calls :meth:`discover`, :meth:`end_look`, :meth:`connect`,
  :meth:`reconnect`, :meth:`accept` and :meth:`is_current`; it alone writes
  ``generation`` and the app's state (the app assigns ``connection`` when
  :meth:`accept` says a :class:`Connected` counts);
- the session's worker thread (``bedside-live``) runs the requests one at a time, in
  order: it opens sources, builds engines, starts and stops monitors. It alone holds
  the running connection (``_running``), so at most one monitor runs. A request that
  a newer one has superseded stops where it is and starts nothing;
- a look thread (``bedside-look``) per look for streams polls it (:mod:`bedside.ui.look`);
- each monitor thread calls the connection's frame feed; its last frame after an
  error also posts :class:`MonitorStopped` (the monitor is never polled for it).

Every request takes the next generation; frames and events carry it, and the UI
drops what an older request sends (:meth:`accept`, :meth:`is_current`).
:meth:`close` may be called from any thread and waits for the worker.

Why about 430 lines: the connection, its events and the one worker that changes it
belong together (every transition is checked against the same generation).
"""

from __future__ import annotations

import logging
import queue
import threading
from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass
from typing import Any, Protocol

from bedside.checks.types import QualityFrame
from bedside.errors import BedsideError
from bedside.stream.source import Source
from bedside.stream.types import ChannelInfo, StreamIdentity
from bedside.ui.config import AppConfig
from bedside.ui.look import StreamsFound, StreamsSeen, run_look
from bedside.ui.services import MonitorLike, Services

log = logging.getLogger("bedside")

class DisplaySource(Source, Protocol):
    """The source as the monitor reads it, keeping a display copy (``buffer``) of what
    passes (bedside.ui.feed.TeeSource)."""

    @property
    def buffer(self) -> Any: ...

    def other_candidates(self) -> tuple[StreamIdentity, ...]: ...


@dataclass(eq=False)
class Connection:
    """A running connection. ``stop()`` is idempotent and returns within the monitor's stop."""

    identity: StreamIdentity
    channels: tuple[ChannelInfo, ...]
    tee: DisplaySource
    engine: Any
    monitor: MonitorLike
    neighbours: tuple[tuple[str, str], ...]
    #: What bedside inferred, in words ("19 scalp, 2 EOG, 1 ECG, 1 EMG, 2 not judged").
    summary: str = ""
    #: The types a channel may be given (BIDS channels.tsv), for the channels screen.
    channel_types: tuple[str, ...] = ()
    #: Where the bridging neighbours came from (positions, 10-10 names, or all pairs).
    geometry_note: str = ""
    #: The request that started this one (its frames and events carry it).
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


# --- events (posted from the session's threads, read on the UI thread; the look's
# StreamsFound and StreamsSeen are bedside.ui.look's) ------------------------------------
@dataclass(frozen=True)
class Connected:
    """A connection is running. places: what the app's ``places`` hook made of it (the
    head map's points); note: said once it is shown; confirmed: its channels are the
    ones just confirmed (not asked again)."""

    connection: Connection
    places: Any = None
    note: str = ""
    confirmed: bool = False

    @property
    def generation(self) -> int:
        return self.connection.generation


@dataclass(frozen=True)
class ConnectFailed:
    """Request ``generation`` could not start watching; ``text`` says why."""

    generation: int
    text: str


@dataclass(frozen=True)
class ReconnectRefused:
    """The stream could not be opened again (new channels, new profile): the connection of
    generation ``kept`` runs on as before."""

    generation: int
    kept: int
    text: str


@dataclass(frozen=True)
class MonitorStopped:
    """The monitor of ``generation`` stopped by itself (the stream became unusable)."""

    generation: int
    text: str


LiveEvent = StreamsFound | StreamsSeen | Connected | ConnectFailed | ReconnectRefused | MonitorStopped
FrameFeedFactory = Callable[[int], Callable[[QualityFrame], None]]


class _Superseded(Exception):
    """A newer request came while this one was being built: it starts nothing."""


class _Feed:
    """A connection's ``on_frame`` (monitor thread): the app's feed, then, once, the
    monitor's own stop (its ``error``, set on this thread before its last frame)."""

    def __init__(self, inner: Callable[[QualityFrame], None], generation: int,
                 post: Callable[[LiveEvent], object]) -> None:
        self.inner, self.generation, self.post = inner, generation, post
        self.monitor: MonitorLike | None = None
        self._said = False

    def __call__(self, frame: QualityFrame) -> None:
        self.inner(frame)
        error = getattr(self.monitor, "error", None)
        if error is not None and not self._said:
            self._said = True
            self.post(MonitorStopped(self.generation, str(error)))


class LiveSession:
    """The app's live stream, one request at a time (see the module's thread rules).

    post(event): thread-safe, hands a :data:`LiveEvent` to the UI thread.
    frame_feed(generation): the ``on_frame`` for a new connection's monitor (monitor
    thread: record the frame, post it with its generation).
    display(source, seconds): wraps a source so the UI can draw what passes.
    places(connection): run in the worker once a connection runs; its result goes in
    :class:`Connected` (the app's head-map points).
    """

    def __init__(self, services: Services, config: AppConfig, post: Callable[[LiveEvent], object], *,
                 frame_feed: FrameFeedFactory, display: Callable[[Source, float], DisplaySource],
                 places: Callable[[Connection], Any] = lambda conn: None) -> None:
        self._services, self._config, self._post = services, config, post
        self._frame_feed, self._display, self._places = frame_feed, display, places
        #: The request whose frames and events count (UI thread only).
        self.generation = 0
        self._issued = 0  # the newest request (UI thread writes; the worker reads)
        self._look = 0
        self._look_done: threading.Event | None = None
        self._jobs: queue.Queue[Callable[[], None] | None] = queue.Queue()
        self._worker: threading.Thread | None = None
        self._running: Connection | None = None  # the worker's alone
        self._closed = False

    # --- UI thread ------------------------------------------------------------------
    @property
    def looking(self) -> bool:
        """A look for streams is open (its answers count)."""
        return self._look_done is not None

    def discover(self, force_picker: bool) -> int:
        """Start a look for streams (the previous one ends); its events carry the number returned."""
        self.end_look()
        self._look += 1
        done = threading.Event()  # set: this look is over (picked, cancelled, replaced)
        self._look_done = done
        threading.Thread(target=run_look, args=(self._services, self._config, self._post, self._look,
                                                force_picker, done), name="bedside-look", daemon=True).start()
        return self._look

    def end_look(self) -> None:
        if self._look_done is not None:
            self._look_done.set()
            self._look_done = None

    def connect(self, identity: StreamIdentity | None, source: Source | None, profile_name: str) -> int:
        """Watch ``source`` (given in-process) or the stream ``identity``; the connection
        running now stops first. Answers: :class:`Connected` or :class:`ConnectFailed`."""
        if identity is None and source is None:
            raise ValueError("connect needs a stream or a source")
        g = self._next()
        self._submit(lambda: self._do_connect(g, identity, source, profile_name))
        return g

    def reconnect(self, choices: Mapping[str, Any] | None, profile_name: str, *, refused: str,
                  with_what: str, note: Callable[[Connection], str] = lambda conn: "") -> int:
        """Open the watched stream again (``choices``: the confirmed channel set; None: the
        saved one) and watch it with ``profile_name``'s thresholds. The old connection runs
        on until the new source is open, so a refusal (:class:`ReconnectRefused`) keeps it.
        ``note(new)`` runs in the worker and is said with the :class:`Connected`."""
        g = self._next()
        self._submit(lambda: self._do_reconnect(g, choices, profile_name, refused, with_what, note))
        return g

    def accept(self, event: LiveEvent) -> bool:
        """Whether ``event`` counts (UI thread): from the open look, or from the newest
        request. A refused reconnect gives the kept connection its frames back."""
        if isinstance(event, StreamsFound | StreamsSeen):
            return self._look_done is not None and event.look == self._look
        if event.generation != self.generation:
            return False  # an older request's; a newer one stops what it started
        if isinstance(event, ReconnectRefused):
            self.generation = event.kept
        return True

    def is_current(self, generation: int | None) -> bool:
        """A frame of ``generation`` is shown (None: handed in by a test or a replay)."""
        return generation is None or generation == self.generation

    # --- any thread -----------------------------------------------------------------
    def close(self, timeout_s: float = 5.0) -> list[str]:
        """End the look, drop every request, stop the connection; wait for the worker
        (at most ``timeout_s``). The problems met, in words."""
        problems: list[str] = []
        if self._closed:
            return problems
        self._closed = True
        done = self._look_done
        if done is not None:
            done.set()
        self._issued += 1  # anything still queued is superseded

        def stop() -> None:
            try:
                self._stop_running()
            except BedsideError as exc:
                problems.append(str(exc))

        worker = self._worker
        if worker is None:
            return problems
        self._jobs.put(stop)
        self._jobs.put(None)
        worker.join(timeout_s)
        if worker.is_alive():
            problems.append(f"the stream did not close within {timeout_s:g} s")
        return problems

    # --- the worker -------------------------------------------------------------------
    def _next(self) -> int:
        self._issued += 1
        self.generation = self._issued
        return self._issued

    def _submit(self, job: Callable[[], None]) -> None:
        if self._closed:
            return
        if self._worker is None:
            self._worker = threading.Thread(target=self._work, name="bedside-live", daemon=True)
            self._worker.start()
        self._jobs.put(job)

    def _work(self) -> None:
        while True:
            job = self._jobs.get()
            if job is None:
                return
            try:
                job()
            except Exception:  # a bug in one request must not stop the next ones
                log.exception("live session request failed")

    def _superseded(self, g: int) -> bool:
        return g != self._issued

    def _check(self, g: int) -> None:
        if self._superseded(g):
            raise _Superseded

    def _stop_running(self) -> None:
        conn, self._running = self._running, None
        if conn is not None:
            conn.stop()

    def _do_connect(self, g: int, identity: StreamIdentity | None, source: Source | None,
                    profile_name: str) -> None:
        self._stop_running()
        try:
            self._check(g)
            if source is None:
                assert identity is not None
                source = self._services.open_source(identity, None)
                self._check(g)  # a newer pick came while this stream was being opened
            conn = self._start(source, g, profile_name)
            places = self._places(conn)
        except _Superseded:
            if source is not None:
                source.close()
            return
        except BedsideError as exc:
            if source is not None:
                source.close()
            self._post(ConnectFailed(g, f"could not start watching: {exc}"))
            return
        self._post(Connected(conn, places))

    def _do_reconnect(self, g: int, choices: Mapping[str, Any] | None, profile_name: str, refused: str,
                      with_what: str, note: Callable[[Connection], str]) -> None:
        old = self._running
        if self._superseded(g):
            return
        if old is None:
            self._post(ReconnectRefused(g, g, f"{refused}: no stream is being watched"))
            return
        try:
            source = self._services.open_source(old.identity, choices)
        except BedsideError as exc:
            self._post(ReconnectRefused(g, old.generation, f"{refused}: {exc}"))
            return
        if self._superseded(g):
            source.close()
            return
        self._stop_running()
        try:
            conn = self._start(source, g, profile_name)
            places = self._places(conn)
        except _Superseded:
            source.close()
            return
        except BedsideError as exc:
            source.close()
            self._post(ConnectFailed(g, f"could not start watching with {with_what}: {exc}"))
            return
        self._post(Connected(conn, places, note=note(conn), confirmed=True))

    def _start(self, source: Source, g: int, profile_name: str) -> Connection:
        """Wrap ``source`` for display, build the engine with the profile's thresholds
        and start the monitor; it becomes the running connection. A newer request met on
        the way: nothing is left running (_Superseded)."""
        cfg, services = self._config, self._services
        tee = self._display(source, max(cfg.trace_s, cfg.page_s, 4.0))
        try:
            # Read for each connection (cached until its file changes): an unknown or
            # broken profile is said and nothing starts.
            profile = services.load_profile(profile_name)
            settings = profile.quality if profile is not None else services.load_quality()
            # Neighbours from the stream's own geometry and the amplifier's range, as
            # ``bedside check`` builds them (bedside.engine_setup).
            engine, geometry = services.make_engine(settings, source)
            summary = services.describe_channels(source.channels)
            kinds = services.channel_types()
            feed = _Feed(self._frame_feed(g), g, self._post)
            monitor = services.make_monitor(tee, engine, feed, cfg.update_hz)
            feed.monitor = monitor
            self._check(g)
        except BaseException:
            tee.close()
            raise
        conn = Connection(source.identity, source.channels, tee, engine, monitor, engine_neighbours(engine),
                          summary, kinds, geometry, g, profile)
        monitor.start()
        self._running = conn
        if self._superseded(g):
            self._stop_running()
            raise _Superseded
        return conn



# --- where the head map draws a connection's channels (the ``places`` hook) -----------
@dataclass(frozen=True)
class MapPlaces:
    """Where the head map draws the scalp channels, and those it cannot place."""

    points: dict[str, tuple[float, float]]
    unplaced: tuple[str, ...] = ()


def map_places(services: Services, channels: Sequence[ChannelInfo], plan: Any) -> MapPlaces:
    """Map places for the scalp channels (worker thread): the geometry the stream gives
    (its own locations or --layout: ``ChannelInfo.position_mm``) first; for the channels
    without one, their 10-20/10-10 name on this head's plan (a PlacementPlan or None),
    else on the standard head; the rest are unplaced (the map lists them)."""
    scalp = [ch for ch in channels if ch.is_scalp]
    names = [ch.name for ch in scalp]
    geometry = {ch.name: ch.position_mm for ch in scalp if ch.position_mm is not None}
    points: dict[str, tuple[float, float]] = {}
    if geometry:
        try:
            points.update(services.project_geometry(geometry))
        except (BedsideError, ValueError) as exc:
            log.warning("the stream's electrode positions cannot be drawn: %s", exc)
    xyz: dict[str, tuple[float, float, float]] = {}
    if plan is not None:
        xyz.update({n: p for n, p in plan.positions_mm.items() if n in names and n not in points})
    missing = [n for n in names if n not in xyz and n not in points]
    if missing:
        try:
            xyz.update(services.positions_for(missing))
        except BedsideError as exc:
            log.warning("no map positions: %s", exc)
    points.update({n: services.project_2d(p) for n, p in xyz.items()})
    return MapPlaces(points, tuple(n for n in names if n not in points))
