"""The bedside app: wires the three views to the core. Build it with :func:`make_app`.

Threads: discovery, connecting, the monitor, the log and drawing all run off the
UI thread; they reach the UI only by posting messages (``post_message`` is
thread-safe). The UI never computes a quality metric.
"""

from __future__ import annotations

import contextlib
import gc
import logging
import math
import threading
import time
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from textual import work
from textual.app import App, ScreenStackError
from textual.binding import Binding
from textual.message import Message

from bedside.checks.impedance import ImpedanceLimits, Verdict, check_entry, judge, merge, over_limit
from bedside.checks.ready import Cues, ReadyGate, ReadyState
from bedside.checks.settings import LongTermSettings
from bedside.checks.types import QualityFrame
from bedside.errors import AmbiguousStream, BedsideError, IndistinguishableStreams, StreamNotFound
from bedside.placement.types import PlacementPlan
from bedside.record.log import TapedMeasurements
from bedside.record.trends import AlertKeeper, SkinReminder
from bedside.record.worker import LogWorker
from bedside.stream.source import Source
from bedside.stream.types import StreamIdentity
from bedside.ui.config import VIEWS, AppConfig, View
from bedside.ui.export import plan_as_text, write_text_atomic
from bedside.ui.feed import FeedProblem, FrameArrived, FrameFeed
from bedside.ui.progress import GoodTracker, Progress
from bedside.ui.screens.channels import ChannelsScreen
from bedside.ui.screens.help import HelpScreen
from bedside.ui.screens.log import LogScreen
from bedside.ui.screens.measure import MeasureScreen
from bedside.ui.screens.picker import StreamPicker, streams_visible
from bedside.ui.screens.profiles import ProfilePicker
from bedside.ui.screens.ward import WardScreen
from bedside.ui.screens.watch import WatchScreen
from bedside.ui.services import ChannelPreview, Services, StreamLookLike, default_services
from bedside.ui.session import Connection, connect
from bedside.ui.widgets.impedance_line import ImpedanceView
from bedside.ui.widgets.stream_status import STATE_LOOK

log = logging.getLogger("bedside")

VIEW_TITLE = {"measure": "Measure", "watch": "Watch", "log": "Log"}
#: How often a look for streams is asked what it heard (it never blocks), and for how
#: many polls an open picker keeps listening (10 min) before its list stays as it is.
LOOK_POLL_S = 0.2
LOOK_MAX_POLLS = 3000
#: The picker's title when the streams are equal in name, type, source_id and host.
TWINS_NOTE = ("These streams cannot be told apart (same name, type, source_id and host: two copies "
              "of one program?) — choose the outlet for this bed, or close a copy")


class StreamsFound(Message):
    """What a look found: one stream to pin, several to choose from (the picker), or a
    problem to say. still_looking: the look goes on and the picker will be updated."""

    def __init__(self, streams: list[StreamIdentity], ambiguous: bool, pinned: StreamIdentity | None,
                 note: str, still_looking: bool = False, look: threading.Event | None = None) -> None:
        super().__init__()
        self.streams, self.ambiguous, self.pinned, self.note = streams, ambiguous, pinned, note
        self.still_looking, self.look = still_looking, look


class StreamsSeen(Message):
    """The open picker's list, updated as more streams answer (or the look settles)."""

    def __init__(self, streams: list[StreamIdentity], still_looking: bool, look: threading.Event) -> None:
        super().__init__()
        self.streams, self.still_looking, self.look = streams, still_looking, look


class Connected(Message):
    """A connection is running (its ``generation`` says which request started it).

    note: said to the technologist once it is shown; confirmed: its channels are the
    ones just confirmed in the channels screen (not asked again)."""

    def __init__(self, connection: Connection, places: MapPlaces,
                 note: str = "", confirmed: bool = False) -> None:
        super().__init__()
        self.connection, self.places = connection, places
        self.note, self.confirmed = note, confirmed


class ChannelsNotApplied(Message):
    """The channel choices could not be applied; the stream is watched as before
    (the connection of generation ``kept``, still running)."""

    def __init__(self, generation: int, kept: int, text: str) -> None:
        super().__init__()
        self.generation, self.kept, self.text = generation, kept, text


class MapPoints(Message):
    def __init__(self, connection: Connection, places: MapPlaces) -> None:
        super().__init__()
        self.connection, self.places = connection, places


@dataclass(frozen=True)
class MapPlaces:
    """Where the head map draws the scalp channels, and those it cannot place."""

    points: dict[str, tuple[float, float]]
    unplaced: tuple[str, ...] = ()


class LogOpened(Message):
    def __init__(self, gate: LogWorker[Any] | None, error: str = "") -> None:
        super().__init__()
        self.gate, self.error = gate, error


class ProfileReady(Message):
    """A department profile loaded (worker thread) for ``name``, or why it could not be."""

    def __init__(self, name: str, profile: Any = None, error: str = "",
                 choices: list[tuple[str, str, float, float | None]] | None = None) -> None:
        super().__init__()
        self.name, self.profile, self.error, self.choices = name, profile, error, choices


class ShutdownDone(Message):
    def __init__(self, problems: list[str]) -> None:
        super().__init__()
        self.problems = problems


class BedsideApp(App[int]):
    CSS_PATH = "app.tcss"
    TITLE = "bedside"
    ENABLE_COMMAND_PALETTE = False

    BINDINGS = [
        Binding("f1", "help", "Help"),
        Binding("f2", "view('measure')", "Measure"),
        Binding("f3", "view('watch')", "Watch"),
        Binding("f4", "view('log')", "Log"),
        Binding("question_mark", "help", "Help", show=False),
        # Views by F2/F3/F4 only: a digit is a number being typed, never a jump.
        Binding("q", "leave", "Save & quit", show=False),
        Binding("ctrl+q", "leave", "Save & quit", priority=True),
        Binding("ctrl+c", "leave", "Save & quit", show=False, priority=True),
        Binding("ctrl+s", "save", "Save", show=False),
        Binding("w", "ward", "Ward", show=False),
    ]

    def __init__(self, config: AppConfig, services: Services, source: Source | None = None) -> None:
        super().__init__()
        self.config = config
        self.services = services
        self._given_source = source
        self.views: dict[str, Any] = {}
        self.plan: PlacementPlan | None = None
        self.taped: TapedMeasurements | None = None
        self.identity: StreamIdentity | None = source.identity if source is not None else None
        self._ward_screen: WardScreen | None = None  # bedside ward: the list of beds
        self.connection: Connection | None = None
        self.recorder: LogWorker[Any] | None = None
        self._log_error = "" if config.log_path else "no setup log is kept in this session (it was started without one)"
        self.latest_frame: QualityFrame | None = None
        self.progress: Progress | None = None
        self.tracker = GoodTracker()
        # The start gate (bedside.checks.ready, the same as check --until-good) and the
        # sound cue; both start again with every connection.
        self.ready_gate = ReadyGate(self.config.ready_hold_s)
        self.ready_state: ReadyState | None = None
        self.cues = Cues()
        # The checks' long_term settings (services without quality settings: the defaults).
        long_term = getattr(self.services.load_quality(), "long_term", None) or LongTermSettings()
        self.alert_keeper = AlertKeeper(long_term.alert_after_s)
        self.skin_reminder = SkinReminder(long_term.skin_check_s)
        self.bell_on = self.config.bell
        #: The department profile (bedside.checks.profiles.Profile) once loaded, by name.
        self.profile_name = config.profile
        self.profile: Any = None
        #: Impedances typed in the Log view (kΩ, by the stream's electrode name), their
        #: verdicts with the amplifier's (bedside.checks.impedance), and when the last
        #: value came (epoch seconds; the re-check interval counts from it).
        self.typed_impedances: dict[str, float] = {}
        self.impedance_verdicts: dict[str, Verdict] = {}
        self.impedance_at: float | None = None
        self.status_note = ""
        self.points: dict[str, tuple[float, float]] = {}
        #: Scalp channels with neither a position nor a 10-20/10-10 name (not on the map).
        self.unplaced: tuple[str, ...] = ()
        self._last_frame_at: float | None = None
        self._connected_at: float | None = None
        self._shown_stalled = False
        self._leaving = False
        self._pending_pick: tuple[list[StreamIdentity], str, bool] | None = None
        #: The running look for streams (set when it is over or replaced).
        self._look: threading.Event | None = None
        self._view: str = config.start_view
        self._monitor_error_shown = False
        self._others_seen: set[StreamIdentity] = set()
        #: Counts connection requests; a thread's message from an older one is dropped.
        self._generation = 0
        #: The channels screen is waiting to open on Watch (a new stream to confirm).
        self._pending_confirm = False
        #: What became of the setup log, said once the app has closed (the CLI prints it).
        self.log_outcome = ""

    # --- start and stop -------------------------------------------------------------
    def on_mount(self) -> None:
        self.views = {"measure": MeasureScreen(), "watch": WatchScreen(), "log": LogScreen()}
        for name, screen in self.views.items():
            self.install_screen(screen, name)
        self.push_screen(self.config.start_view)
        self._update_subtitle()
        self.set_interval(0.5, self._watchdog)
        # Everything loaded so far (libraries, engine, widgets) lives as long as the app:
        # keep it out of the collector's full sweeps, which otherwise stall a frame now
        # and then by 100 ms or more at 256 channels (Python docs, gc.freeze).
        gc.freeze()
        # A connection reads the profile in its own worker; without one, read it once the
        # screen has settled (a worker at start-up holds up the first keys).
        self.set_timer(1.0, self._profile_if_none)
        if self.config.log_path is not None and self.services.open_recorder is not None:
            self._open_log()
        if self.config.ward:
            self._ward_screen = WardScreen(self.services.make_ward())
            self.push_screen(self._ward_screen)
        elif self._given_source is not None:
            self._connect(None, self._given_source)
        elif self.config.discover:
            self.discover(force_picker=False)

    def open_bed(self, identity: StreamIdentity) -> None:
        """From the ward: watch this bed (the ward keeps watching every bed meanwhile)."""
        if self._ward_screen is not None and self.screen is self._ward_screen:
            self.pop_screen()
        if self.identity != identity or self.connection is None:
            self.status_note = "connecting…"
            self._connect(identity, None)
        self.action_view("watch")

    def action_ward(self) -> None:
        """Back to the ward's list (``bedside ward`` only)."""
        if self._ward_screen is None:
            self.notify("the ward's list is opened with `bedside ward`", timeout=4)
            return
        if self.screen is not self._ward_screen:
            self.push_screen(self._ward_screen)

    def on_unmount(self) -> None:
        ward_screen = getattr(self, "_ward_screen", None)
        if ward_screen is not None:
            try:
                ward_screen.ward.close()
            except Exception as exc:  # noqa: BLE001 - leaving: say it, go on closing
                log.warning("the ward did not close cleanly: %s", exc)
        self._end_look()
        # Leaving by any other way than q/Ctrl-C (e.g. an error): still stop and save.
        if self.connection is not None:
            self.connection.stop()
            self.connection = None
        gate, self.recorder = self.recorder, None
        if gate is not None and not self._leaving:
            try:
                self._close_log(gate)
            except BedsideError as exc:
                log.error("setup log: %s", exc)
            gate.stop()

    def action_leave(self) -> None:
        if self._leaving:
            return
        self._leaving = True
        self._end_look()
        self.notify("saving the log and closing…", timeout=3)
        self._close_down()

    @work(thread=True, exclusive=True, group="close-down", exit_on_error=False)
    def _close_down(self) -> None:
        problems: list[str] = []
        conn, self.connection = self.connection, None
        if conn is not None:
            try:
                conn.stop()
            except BedsideError as exc:
                problems.append(str(exc))
        gate = self.recorder
        if gate is not None:
            gate.drain(3.0)
            try:
                self._close_log(gate)
            except BedsideError as exc:
                problems.append(f"setup log: {exc}")
            gate.stop()
            self.recorder = None
        self.post_message(ShutdownDone(problems))

    def _close_log(self, gate: LogWorker[Any]) -> None:
        gate.call(lambda r: r.save_now())
        if self.config.discard_empty_log:
            gate.call(lambda r: r.close(True))
        else:
            gate.call(lambda r: r.close())
        if getattr(gate.recorder, "discarded", False):
            self.log_outcome = "nothing was recorded, so no setup log was kept"
        else:
            path = getattr(gate.recorder, "path", None) or self.config.log_path
            self.log_outcome = f"setup log saved to {path}"

    def on_shutdown_done(self, message: ShutdownDone) -> None:
        if message.problems:
            for p in message.problems:
                log.error("%s", p)
        self.exit(0 if not message.problems else 1)

    # --- views -------------------------------------------------------------------
    def action_view(self, name: str) -> None:
        if name not in VIEWS:
            return
        while len(self.screen_stack) > 2 and self.screen.name not in self.views:
            self.pop_screen()
        if self.screen.name != name:
            self.switch_screen(name)
        self._update_subtitle(name)
        if name == "watch":
            self._open_picker()
            self.open_pending_confirm()

    def _update_subtitle(self, view: str | None = None) -> None:
        """The header names the view and, on every view, the pinned stream and its state."""
        if view is not None:
            self._view = view
        view = self._view
        parts = [VIEW_TITLE.get(view, "")]
        if self.identity is not None:
            stalled = self.stalled_for() is not None
            frame = self.latest_frame
            state = "stalled" if stalled else (
                frame.stream_health.state if frame is not None and frame.stream_health else "connecting")
            sym, _, _ = STATE_LOOK.get(state, STATE_LOOK["connecting"])
            parts.append(f"{sym} {state} {self.identity.name}")
        title = " · ".join(p for p in parts if p)
        if title != self.sub_title:
            self.sub_title = title

    def action_help(self) -> None:
        if not isinstance(self.screen, HelpScreen):
            self.push_screen(HelpScreen())

    @property
    def current_view(self) -> View | None:
        try:
            name = self.screen.name
        except ScreenStackError:  # shutting down: a last frame may still come in
            return None
        return name if name in VIEWS else None  # type: ignore[return-value]

    # --- stream ------------------------------------------------------------------
    def discover(self, force_picker: bool) -> None:
        """Look for streams (Watch: p for the picker, r to look again). The look answers
        as streams reply: the picker opens at once (p) or as soon as two candidates are
        heard, and fills as more answer; only pinning the one stream waits the full look."""
        self.status_note = "looking for streams…"
        self._refresh_watch_status()
        self._end_look()
        look = threading.Event()  # set: this look is over (picked, cancelled, replaced)
        self._look = look
        self._discover(force_picker, look)

    def _end_look(self) -> None:
        if self._look is not None:
            self._look.set()
            self._look = None

    @work(thread=True, group="discover", exit_on_error=False)
    def _discover(self, force_picker: bool, done: threading.Event) -> None:
        try:
            look = self.services.look_for_streams()
        except BedsideError as exc:
            self.post_message(StreamsFound([], False, None, str(exc)))
            return
        try:
            self._run_look(look, force_picker, done)
        except BedsideError as exc:
            self.post_message(StreamsFound([], False, None, str(exc)))
        finally:
            look.close()

    def _run_look(self, look: StreamLookLike, force_picker: bool, done: threading.Event) -> None:
        """Poll the look every LOOK_POLL_S (worker thread) until it has an answer; while
        a picker shows its list, keep it up to date until the picker closes."""
        cfg = self.config
        shown: tuple[list[StreamIdentity], bool] | None = None  # what the picker lists
        polls = 0
        while not done.is_set() and polls < LOOK_MAX_POLLS:
            polls += 1
            settled = look.settled(cfg.wait_s)
            found = look.visible()
            if shown is not None:
                cands = found if force_picker else self._matching(found)
                if (cands, settled) != shown:
                    shown = (cands, settled)
                    self.post_message(StreamsSeen(cands, not settled, done))
            elif force_picker:
                shown = (found, settled)
                self.post_message(StreamsFound(found, True, None, "", not settled, done))
            else:
                try:
                    pinned = self.services.select_stream(found, cfg.stream_name, cfg.source_id, cfg.host)
                except AmbiguousStream as exc:  # two candidates heard: it cannot become one
                    cands = [c for c in exc.candidates if isinstance(c, StreamIdentity)] or found
                    shown = (cands, settled)
                    # The picker says it in the app's terms (the error's text names command options).
                    note = TWINS_NOTE if isinstance(exc, IndistinguishableStreams) else ""
                    self.post_message(StreamsFound(cands, True, None, note, not settled, done))
                except StreamNotFound as exc:
                    if settled:
                        self.post_message(StreamsFound(found, False, None, f"{exc} — press r to look again",
                                                       look=done))
                        return
                else:
                    if settled:  # one stream, and the look lasted long enough to say so
                        self.post_message(StreamsFound(found, False, pinned, "", look=done))
                        return
            done.wait(LOOK_POLL_S)

    def _matching(self, found: list[StreamIdentity]) -> list[StreamIdentity]:
        """The streams that fit what the app was started with (all when nothing was pinned)."""
        cfg = self.config
        return [s for s in found
                if (cfg.stream_name is None or s.name == cfg.stream_name)
                and (cfg.source_id is None or s.source_id == cfg.source_id)
                and (cfg.host is None or s.hostname == cfg.host)]

    def on_streams_found(self, message: StreamsFound) -> None:
        if message.look is not None and message.look is not self._look:
            return  # an older look's answer
        self.status_note = message.note
        if message.pinned is not None:
            self.status_note = "connecting…"
            self._connect(message.pinned, None)
        elif message.ambiguous:
            # The picker opens on Watch; elsewhere it waits (it would take the keys
            # of someone typing measurements or notes).
            self._pending_pick = (message.streams, message.note, message.still_looking)
            if self.current_view == "watch":
                self._open_picker()
            else:
                self.status_note = f"{streams_visible(len(message.streams))}: choose one in Watch (F3)"
                self.notify(self.status_note, timeout=6)
        self._refresh_watch_status()

    def on_streams_seen(self, message: StreamsSeen) -> None:
        if message.look is not self._look:
            return
        if isinstance(self.screen, StreamPicker):
            self.screen.update_streams(message.streams, message.still_looking)
        elif self._pending_pick is not None:
            self._pending_pick = (message.streams, self._pending_pick[1], message.still_looking)

    def _open_picker(self) -> None:
        if self._pending_pick is None or isinstance(self.screen, StreamPicker):
            return
        streams, note, still_looking = self._pending_pick
        self._pending_pick = None
        self.push_screen(StreamPicker(streams, note, current=self.identity, still_looking=still_looking),
                         self._picked)

    def _picked(self, identity: StreamIdentity | None) -> None:
        self._end_look()
        if identity is not None:
            self.status_note = "connecting…"
            self._connect(identity, None)
        self._refresh_watch_status()

    def _connect(self, identity: StreamIdentity | None, source: Source | None) -> None:
        """Start watching (UI thread): forget the old stream's state, connect in a worker."""
        self._forget_frames()
        self._pending_confirm = False
        old, self.connection = self.connection, None
        self._generation += 1
        self._connect_worker(identity, source, old, self._generation)

    def _forget_frames(self) -> None:
        self.tracker.reset()
        self.ready_gate, self.ready_state, self.cues = ReadyGate(self.config.ready_hold_s), None, Cues()
        self.alert_keeper = AlertKeeper(self.alert_keeper.after_s)
        self.ready_gate.set_blocked(over_limit(self.impedance_verdicts))
        self.latest_frame, self.progress = None, None
        self._last_frame_at = None
        self._connected_at = time.monotonic()

    @work(thread=True, exclusive=True, group="connect", exit_on_error=False)
    def _connect_worker(self, identity: StreamIdentity | None, source: Source | None,
                        old: Connection | None, generation: int) -> None:
        if old is not None:
            old.stop()
        try:
            if source is None:
                assert identity is not None
                source = self.services.open_source(identity, None)
            conn = self._start(source, generation)
            places = self._points_for(conn)
        except BedsideError as exc:
            self.post_message(FeedProblem(f"could not start watching: {exc}"))
            return
        self.post_message(Connected(conn, places))

    def _start(self, source: Source, generation: int) -> Connection:
        """Engine and monitor on ``source`` (worker thread); frames carry ``generation``."""
        feed = FrameFeed(self.post_message, self._frame_recorder, generation)
        # The profile is read for each connection (cached until its file changes): its thresholds go
        # into the engine; an unknown or broken profile is said and nothing starts.
        profile = self.services.load_profile(self.profile_name)
        return connect(self.services, source, self.config, feed, generation, profile=profile)

    # --- channels: what bedside inferred, confirmed or changed by the technologist ----
    def open_channels(self) -> None:
        """The channels screen for the stream being watched (Watch: c; also at connect)."""
        conn = self.connection
        if conn is None:
            self.notify("no stream is being watched yet; its channels can be changed once it is",
                        severity="warning", timeout=4)
            return
        if isinstance(self.screen, ChannelsScreen):
            return
        self._pending_confirm = False
        self.push_screen(ChannelsScreen(conn), lambda preview: self._channels_chosen(conn, preview))

    def open_pending_confirm(self) -> None:
        """Open the channels screen if a new stream waits for it and Watch is in front
        (elsewhere it waits: it would take the keys of someone typing)."""
        if self._pending_confirm and self.current_view == "watch" and self.connection is not None:
            self.open_channels()

    def _channels_chosen(self, conn: Connection, preview: ChannelPreview | None) -> None:
        """The screen's answer (UI thread). None: cancelled, nothing changes."""
        if preview is None:
            return
        if conn is not self.connection:
            self.notify("the stream changed while the channels were open; nothing was applied",
                        severity="warning", timeout=6)
            return
        same = [(c.kind, c.name) for c in conn.channels] == [(c.kind, c.name) for c in preview.channels]
        if same:  # confirmed as they are: remember that, keep the engine and its verdicts
            self._save_choices(conn.identity.source_id, preview)
            return
        self._generation += 1
        self._apply_channels(conn, preview, self._generation)

    @work(thread=True, group="save-channels", exit_on_error=False)
    def _save_choices(self, source_id: str, preview: ChannelPreview) -> None:
        self.call_from_thread(self.notify, self._saved_note(source_id, preview), timeout=6)

    def _saved_note(self, source_id: str, preview: ChannelPreview) -> str:
        """Save the choices for this source_id (worker thread) and say so."""
        try:
            path = self.services.save_channel_choices(source_id, preview.choices)
        except BedsideError as exc:
            path, why = None, str(exc)
        else:
            why = "see bedside.log"
        if path is None:
            return f"channels: {preview.summary} — not saved for next time ({why}); they hold for this session"
        return f"channels: {preview.summary} — saved for this amplifier (source_id {source_id!r})"

    @work(thread=True, exclusive=True, group="connect", exit_on_error=False)
    def _apply_channels(self, old: Connection, preview: ChannelPreview, generation: int) -> None:
        """Reopen the stream with the new channel set and rebuild the engine on it."""
        started = self._restart(old, preview.choices, generation, "channels not changed", "the new channels")
        if started is not None:
            conn, places = started
            note = self._saved_note(conn.identity.source_id, preview)
            self.post_message(Connected(conn, places, note=note, confirmed=True))

    def _restart(self, old: Connection, choices: Any, generation: int, refused: str,
                 with_what: str) -> tuple[Connection, Any] | None:
        """Open ``old``'s stream again (with ``choices``) and start watching it (worker
        thread); the old connection runs on until the new source is open, so a refusal
        keeps it. None, with the reason posted, when it cannot."""
        try:
            source = self.services.open_source(old.identity, choices)
        except BedsideError as exc:
            self.post_message(ChannelsNotApplied(generation, old.generation, f"{refused}: {exc}"))
            return None
        old.stop()
        try:
            conn = self._start(source, generation)
            places = self._points_for(conn)
        except BedsideError as exc:
            source.close()
            self.post_message(FeedProblem(f"could not start watching with {with_what}: {exc}"))
            return None
        return conn, places

    def on_channels_not_applied(self, message: ChannelsNotApplied) -> None:
        if message.generation == self._generation:  # nothing newer asked meanwhile
            self._generation = message.kept  # the old connection's frames count again
            self.notify(message.text, severity="error", timeout=10)

    @work(thread=True, group="stale", exit_on_error=False)
    def _stop_stale(self, conn: Connection) -> None:
        conn.stop()

    def _frame_recorder(self) -> tuple[Any, Any] | None:
        gate = self.recorder
        return (gate.recorder.on_frame, contextlib.nullcontext()) if gate is not None else None

    def _points_for(self, conn: Connection) -> MapPlaces:
        """Map places for the stream's scalp channels: the geometry the stream gives (its
        own locations or --layout: ``ChannelInfo.position_mm``) first; for the channels
        without one, their 10-20/10-10 name on this head's plan, else on the standard
        head; the rest are unplaced (the map lists them)."""
        scalp = [ch for ch in conn.channels if ch.is_scalp]
        names = [ch.name for ch in scalp]
        geometry = {ch.name: ch.position_mm for ch in scalp if ch.position_mm is not None}
        points: dict[str, tuple[float, float]] = {}
        if geometry:
            try:
                points.update(self.services.project_geometry(geometry))
            except (BedsideError, ValueError) as exc:
                log.warning("the stream's electrode positions cannot be drawn: %s", exc)
        xyz: dict[str, tuple[float, float, float]] = {}
        if self.plan is not None:
            xyz.update({n: p for n, p in self.plan.positions_mm.items() if n in names and n not in points})
        missing = [n for n in names if n not in xyz and n not in points]
        if missing:
            try:
                xyz.update(self.services.positions_for(missing))
            except BedsideError as exc:
                log.warning("no map positions: %s", exc)
        points.update({n: self.services.project_2d(p) for n, p in xyz.items()})
        return MapPlaces(points, tuple(n for n in names if n not in points))

    def on_connected(self, message: Connected) -> None:
        conn = message.connection
        if conn.generation != self._generation:  # a newer request started meanwhile
            self._stop_stale(conn)
            return
        if message.confirmed:  # the new channel set: the old one's verdicts are void
            self._forget_frames()
        self.connection = conn
        self.identity = message.connection.identity
        if conn.profile is not None:
            self._use_profile(conn.profile)
        if any(c.impedance_kohm is not None for c in conn.channels):
            self.impedance_at = time.time()  # the amplifier's values, as of this opening
        self._judge_impedances()
        self.points, self.unplaced = message.places.points, message.places.unplaced
        self._monitor_error_shown = False
        self._connected_at = time.monotonic()
        self.status_note = ""
        if self.recorder is not None:
            conn = message.connection
            self.recorder.submit(lambda r: r.set_stream(conn.identity, conn.channels), self._log_done("stream"))
        if self._watch_ready():
            self.views["watch"].set_points(self.points, self.unplaced)
        self._refresh_watch_status()
        if message.note:
            self.notify(message.note, timeout=8)
        if self.config.confirm_channels and not message.confirmed:
            if all(ch.evidence == "technologist" for ch in conn.channels):
                self.notify(f"channels as confirmed before for this amplifier: {conn.summary} (Watch: c to change)",
                            timeout=6)
            else:
                self._pending_confirm = True
                self.open_pending_confirm()
                if self._pending_confirm:
                    self.notify(f"channels: {conn.summary} — confirm or change them in Watch (F3)", timeout=8)

    def on_frame_arrived(self, message: FrameArrived) -> None:
        if message.generation is not None and message.generation != self._generation:
            return  # from a connection that has been replaced
        frame = message.frame
        self.latest_frame = frame
        self._last_frame_at = time.monotonic()
        self._shown_stalled = False
        self.progress = self.tracker.update(frame)
        self._judge_ready(frame)
        self._update_subtitle()
        if self.current_view == "watch":
            self.views["watch"].show_frame(frame, self.progress, live=self.is_live())

    def _judge_ready(self, frame: QualityFrame) -> None:
        """The start gate on the frame's own clock; the log gets the first ready time;
        the bell (when on) rings for ready and for a new fault."""
        t = frame.wall_time if frame.wall_time > 0 else time.time()
        was = self.ready_gate.ready_at_s
        state = self.ready_state = self.ready_gate.update(frame, t)
        if was is None and state.ready and self.recorder is not None:
            self.recorder.submit(lambda r: r.set_ready(state.hold_s, state.accepted, "app"), self._log_done("ready"))
        if self.cues.update(frame, state) and self.bell_on:
            self.bell()
        # Long recordings: an electrode that degraded and stayed so, and skin checks.
        for alert in self.alert_keeper.feed(frame, t):
            self.notify(alert.text(), severity="warning", timeout=30)
            if self.bell_on:
                self.bell()
        reminder = self.skin_reminder.feed(t)
        if reminder is not None:
            self.notify(reminder, timeout=60)

    def toggle_bell(self) -> None:
        self.bell_on = not self.bell_on
        self.notify("sound cue on: a bell when ready and when a new fault appears" if self.bell_on
                    else "sound cue off", timeout=3)

    def show_frame(self, frame: QualityFrame) -> None:
        """Show a frame as if the monitor had sent it (tests, replays)."""
        self.post_message(FrameArrived(frame))

    def on_feed_problem(self, message: FeedProblem) -> None:
        self.status_note = message.text
        self.notify(message.text, severity="error", timeout=8)
        self._refresh_watch_status()

    def stalled_for(self) -> float | None:
        """Seconds since the last frame, when frames stopped (None while they flow)."""
        if self.connection is None:
            return None
        since = self._last_frame_at or self._connected_at
        if since is None:
            return None
        age = time.monotonic() - since
        return age if age > self.config.stale_after_s else None

    def is_live(self) -> bool:
        frame = self.latest_frame
        return frame is not None and frame.live and self.stalled_for() is None

    def _watchdog(self) -> None:
        self._update_subtitle()
        conn = self.connection
        error = getattr(conn.monitor, "error", None) if conn is not None else None
        if error is not None and not self._monitor_error_shown:
            self._monitor_error_shown = True
            self.status_note = f"checks stopped: {error}"
            self.notify(self.status_note, severity="error", timeout=10)
        if conn is not None:
            others = [o for o in conn.tee.other_candidates() if o not in self._others_seen]
            if others:
                self._others_seen.update(others)
                ids = ", ".join(o.source_id for o in others)
                self.status_note = (f"another stream named {conn.identity.name!r} appeared (id {ids}); "
                                    "not trusted unless you pick it: press p")
                self.notify(self.status_note, severity="warning", timeout=10)
        stalled = self.stalled_for()
        if stalled is not None and not self._shown_stalled and self._watch_ready():
            self._shown_stalled = True
            self.views["watch"].show_no_data()
        elif stalled is not None:
            self._refresh_watch_status()

    def _watch_ready(self) -> bool:
        screen = self.views.get("watch")
        return screen is not None and screen.is_mounted

    def _refresh_watch_status(self) -> None:
        if self._watch_ready():
            self.views["watch"].refresh_status()

    def mains_hz(self) -> tuple[float, ...]:
        frame = self.latest_frame
        value = frame.mains_hz if frame is not None else None
        if isinstance(value, int | float) and math.isfinite(value) and value > 0:
            return (float(value),)
        return ()  # not detected (yet, or none there): the spectrum marks nothing

    def bipolar_partner(self, name: str) -> str | None:
        """The electrode ``name`` is read against in the trace's bipolar view: its partner
        in the standard longitudinal chains (bedside.montage.chain_partner: Fp1 → F7,
        O1 → P7), None when the stream has none."""
        conn = self.connection
        if conn is None:
            return None
        return self.services.chain_partner(name, [ch.name for ch in conn.channels])

    # --- plan ----------------------------------------------------------------------
    def plan_changed(self, plan: PlacementPlan, taped: TapedMeasurements | None = None) -> None:
        self.plan = plan
        self.taped = taped
        if self.recorder is not None:
            self.recorder.submit(lambda r: r.set_plan(plan, taped), self._log_done("marks"))
        if self.connection is not None:
            self._remap(self.connection)

    @work(thread=True, exclusive=True, group="remap", exit_on_error=False)
    def _remap(self, conn: Connection) -> None:
        """The head map follows this head's plan once it is measured."""
        self.post_message(MapPoints(conn, self._points_for(conn)))

    def on_map_points(self, message: MapPoints) -> None:
        if message.connection is self.connection:
            self.points, self.unplaced = message.places.points, message.places.unplaced
            if self._watch_ready():
                self.views["watch"].set_points(self.points, self.unplaced)

    def export_plan(self, plan: PlacementPlan) -> None:
        # The taped values are read here, on the UI thread, and go with the plan.
        self._export(plan, self.taped if plan is self.plan else None)

    @work(thread=True, group="export", exit_on_error=False)
    def _export(self, plan: PlacementPlan, taped: TapedMeasurements | None = None) -> None:
        stamp = time.strftime("%Y%m%d-%H%M%S")
        path = self.config.export_dir / f"marks-{plan.system}-{stamp}.txt"
        try:
            write_text_atomic(path, plan_as_text(plan, taped))
        except BedsideError as exc:
            self.post_message(FeedProblem(str(exc)))
            return
        self.call_from_thread(self.notify, f"marking sheet saved: {path}")

    # --- log -------------------------------------------------------------------------
    @work(thread=True, exclusive=True, group="open-log", exit_on_error=False)
    def _open_log(self) -> None:
        cfg = self.config
        opener = self.services.open_recorder
        assert cfg.log_path is not None and opener is not None
        try:
            recorder = opener(Path(cfg.log_path), cfg.technologist, cfg.subject_id, cfg.config_paths)
        except BedsideError as exc:
            self.post_message(LogOpened(None, str(exc)))
            return
        self.post_message(LogOpened(LogWorker(recorder)))

    def on_log_opened(self, message: LogOpened) -> None:
        if message.gate is None:
            self._log_error = message.error
            self.notify(f"setup log not open: {message.error}", severity="error", timeout=10)
            return
        self.recorder = message.gate
        log_screen = self.views.get("log")
        if log_screen is not None and log_screen.is_mounted:
            log_screen.refresh_status()  # its status line and file name, now, not at the next tick
        profile, plan, taped = self.profile, self.plan, self.taped
        if profile is not None:
            message.gate.submit(lambda r: r.set_profile(profile.name, profile.sha256), self._log_done("profile"))
        if plan is not None:
            message.gate.submit(lambda r: r.set_plan(plan, taped), self._log_done("marks"))
        if self.connection is not None:
            conn = self.connection
            message.gate.submit(lambda r: r.set_stream(conn.identity, conn.channels), self._log_done("stream"))

    def _log_done(self, what: str) -> Any:
        def done(ok: bool, text: str, status: Any) -> None:
            if not ok:
                self.post_message(FeedProblem(f"setup log ({what}): {text}"))

        return done

    def log_unavailable_reason(self) -> str:
        return self._log_error or "the setup log is still opening"

    def action_save(self) -> None:
        if self.recorder is None:
            self.notify(self.log_unavailable_reason(), severity="warning")
            return
        log_screen = self.views.get("log")
        if log_screen is not None and log_screen.is_mounted:
            log_screen.action_save()
        else:
            self.recorder.submit(lambda r: r.save_now(), self._log_done("save"))
            self.notify("log saved", timeout=2)

    # --- department profile and impedances --------------------------------------------
    def _profile_if_none(self) -> None:
        if self.profile is None:
            self._load_profile(self.profile_name)

    @work(thread=True, exclusive=True, group="profile", exit_on_error=False)
    def _load_profile(self, name: str) -> None:
        try:
            profile = self.services.load_profile(name)
        except BedsideError as exc:
            self.post_message(ProfileReady(name, error=str(exc)))
            return
        self.post_message(ProfileReady(name, profile))

    def on_profile_ready(self, message: ProfileReady) -> None:
        if message.choices is not None:  # the picker's list
            self.push_screen(ProfilePicker(message.choices, self.profile_name), self._profile_chosen)
            return
        if message.name != self.profile_name:
            return  # an older choice
        if message.profile is None:
            self.notify(f"profile {message.name}: {message.error}", severity="error", timeout=10)
            return
        changed = self.profile is not None and self.profile.name != message.profile.name
        self._use_profile(message.profile)
        self._judge_impedances()
        if changed and self.connection is not None:
            self._rejudge_with_profile(self.connection)

    def _use_profile(self, profile: Any) -> None:
        """Take ``profile`` (UI thread); the log records a new one (name and hash)."""
        before = self.profile
        self.profile = profile
        if self.recorder is not None and (before is None or (before.name, before.sha256) != (profile.name, profile.sha256)):
            self.recorder.submit(lambda r: r.set_profile(profile.name, profile.sha256), self._log_done("profile"))

    def open_profiles(self) -> None:
        """The department profile picker (Watch: d); the list is read in a worker."""
        self._profile_list()

    @work(thread=True, exclusive=True, group="profile-list", exit_on_error=False)
    def _profile_list(self) -> None:
        self.post_message(ProfileReady(self.profile_name, choices=self.services.profile_choices()))

    def _profile_chosen(self, name: str | None) -> None:
        if name is None or name == self.profile_name:
            return
        self.profile_name = name
        self.notify(f"profile {name}: loading its limits…", timeout=3)
        self._load_profile(name)

    def _rejudge_with_profile(self, conn: Connection) -> None:
        """The engine takes the new profile's thresholds: the stream is opened again as
        the channels screen does (a stream given in-process cannot be: said)."""
        if self._given_source is not None:
            self.notify(f"profile {self.profile_name}: impedance limit in use now; its quality "
                        "thresholds apply when the stream is opened again", timeout=8)
            return
        self._generation += 1
        self._reopen(conn, self._generation)

    @work(thread=True, exclusive=True, group="connect", exit_on_error=False)
    def _reopen(self, old: Connection, generation: int) -> None:
        started = self._restart(old, None, generation, "profile thresholds not applied", "the new profile")
        if started is not None:
            conn, places = started
            self.post_message(Connected(conn, places, note=f"profile {self.profile_name}: its thresholds are in use",
                                        confirmed=True))

    def impedance_typed(self, electrode: str, kohm: float) -> tuple[str, float]:
        """A typed impedance (Log view): checked (0 or less, over 1 000 kΩ, or an electrode
        the stream does not have: InputError with the reason), kept, judged at once."""
        name, value = check_entry(electrode, kohm, self.known_electrodes())
        self.typed_impedances[name] = value
        self.impedance_at = time.time()
        self._judge_impedances()
        return name, value

    def _judge_impedances(self) -> None:
        """Typed values (they win) and the amplifier's, for the stream's scalp electrodes,
        against the profile's limits; the gate holds those over the limit."""
        conn = self.connection
        scalp = [c for c in conn.channels if c.is_scalp] if conn is not None else []
        names = {c.name for c in scalp}
        published = {c.name: c.impedance_kohm for c in scalp if c.impedance_kohm is not None}
        typed = {n: v for n, v in self.typed_impedances.items() if not names or n in names}
        limits = self.profile.impedance if self.profile is not None else ImpedanceLimits()
        self.impedance_verdicts = judge(merge(typed, published), limits)
        self.ready_gate.set_blocked(over_limit(self.impedance_verdicts))
        if self._watch_ready():
            self.views["watch"].show_impedances()

    def impedance_view(self) -> ImpedanceView | None:
        if self.profile is None:
            return None
        conn = self.connection
        electrodes = [c.name for c in conn.channels if c.is_scalp] if conn is not None else list(self.typed_impedances)
        due = None
        if self.profile.recheck_h is not None and self.impedance_at is not None:
            due = self.impedance_at + self.profile.recheck_h * 3600.0
        return ImpedanceView(self.impedance_verdicts, electrodes, self.profile.impedance.limit_kohm,
                             self.profile.name, due)

    def known_electrodes(self) -> set[str]:
        """Electrodes an impedance may be typed for: the stream's channels while one is
        watched (a planned site the stream does not carry would be judged "no data"),
        else the measured plan's sites."""
        if self.connection is not None:
            return {ch.name for ch in self.connection.channels}
        if self.plan is not None:
            return {mk.name for mk in self.plan.marks}
        return set()


def make_app(
    config: AppConfig | None = None,
    *,
    source: Source | None = None,
    services: Services | None = None,
) -> BedsideApp:
    """The app, for the CLI and the tests.

    config: start-up choices (defaults: watch view, look for streams, no log).
    source: read this Source instead of looking for an LSL stream.
    services: the core functions (default: the real packages); tests pass stand-ins.
    """
    return BedsideApp(config or AppConfig(), services or default_services(), source)
