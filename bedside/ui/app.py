"""The bedside app: wires the three views to the core. Build it with :func:`make_app`.

The live stream is the plain-Python :class:`~bedside.ui.live.LiveSession`'s (discover,
connect, switch, reconnect, close, on its own threads); the app asks it from the UI
thread and takes its events as :class:`LiveMessage`. Every other worker posts a
message too: only the UI thread assigns the app's state (DEVELOPERS.md, "Thread map").
The frames' and impedances' bookkeeping is :mod:`bedside.ui.vigil`'s (plain Python).
The UI never computes a quality metric.

Why this module is still about 800 lines, not 400: what is left is the wiring itself,
one message handler per answer (the live session's events, the log opening and
closing, the department profile loading and its picker, the channels screen, the
picker of streams, the plan and its export), each a few lines that assign the app's
state on the UI thread. Split across mixins, a reader could no longer see in one
place which handler takes which message; every piece with logic of its own has moved
out (``live.py``, ``vigil.py``, ``host.py``).
"""

from __future__ import annotations

import gc
import logging
import math
import time
from collections.abc import Callable
from pathlib import Path
from typing import Any

from textual import work
from textual.app import App, ScreenStackError
from textual.binding import Binding
from textual.message import Message
from textual.reactive import var

from bedside.checks.impedance import Verdict, over_limit
from bedside.checks.ready import ReadyGate, ReadyState
from bedside.checks.settings import LongTermSettings
from bedside.checks.types import QualityFrame
from bedside.errors import BedsideError
from bedside.placement.types import PlacementPlan
from bedside.record.log import TapedMeasurements
from bedside.record.worker import LogWorker
from bedside.stream.source import Source
from bedside.stream.types import StreamIdentity
from bedside.ui.config import VIEWS, AppConfig, View
from bedside.ui.export import plan_as_text, write_text_atomic
from bedside.ui.feed import FeedProblem, FrameArrived, FrameFeed, TeeSource
from bedside.ui.host import BedsideHost
from bedside.ui.live import (
    Connected,
    ConnectFailed,
    Connection,
    LiveEvent,
    LiveSession,
    MapPlaces,
    MonitorStopped,
    ReconnectRefused,
    map_places,
)
from bedside.ui.look import TWINS_NOTE, StreamsFound, StreamsSeen
from bedside.ui.progress import GoodTracker, Progress
from bedside.ui.screens.channels import ChannelsScreen
from bedside.ui.screens.help import HelpScreen
from bedside.ui.screens.log import LogScreen
from bedside.ui.screens.measure import MeasureScreen
from bedside.ui.screens.picker import StreamPicker, streams_visible
from bedside.ui.screens.profiles import ProfilePicker
from bedside.ui.screens.ward import WardScreen
from bedside.ui.screens.watch import WatchScreen
from bedside.ui.services import ChannelPreview, Services, default_services
from bedside.ui.vigil import FrameVigil, ImpedanceBook
from bedside.ui.widgets.impedance_line import ImpedanceView
from bedside.ui.widgets.stream_status import STATE_LOOK

__all__ = ["TWINS_NOTE", "BedsideApp", "make_app"]

log = logging.getLogger("bedside")

VIEW_TITLE = {"measure": "Measure", "watch": "Watch", "log": "Log"}


class LiveMessage(Message):
    """An event of the live session (bedside.ui.live), on its way to the UI thread."""

    def __init__(self, event: LiveEvent) -> None:
        super().__init__()
        self.event = event


class MapPoints(Message):
    def __init__(self, connection: Connection, places: MapPlaces) -> None:
        super().__init__()
        self.connection, self.places = connection, places


class LogOpened(Message):
    """The setup log opened (``gate``) or why not; ``typed``/``typed_at``: the impedances
    typed into it before (a resumed log) and when the newest was."""

    def __init__(self, gate: LogWorker[Any] | None, error: str = "",
                 typed: dict[str, float] | None = None, typed_at: float | None = None) -> None:
        super().__init__()
        self.gate, self.error = gate, error
        self.typed, self.typed_at = typed or {}, typed_at


class ProfileReady(Message):
    """A department profile loaded (worker thread) for ``name``, or why it could not be."""

    def __init__(self, name: str, profile: Any = None, error: str = "",
                 choices: list[tuple[str, str, float, float | None]] | None = None) -> None:
        super().__init__()
        self.name, self.profile, self.error, self.choices = name, profile, error, choices


class ShutdownDone(Message):
    def __init__(self, problems: list[str], outcome: str) -> None:
        super().__init__()
        self.problems, self.outcome = problems, outcome


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

    #: The app's state the screens watch (bedside.ui.host); assigned on the UI thread only.
    connection: var[Connection | None] = var(None)
    places: var[MapPlaces] = var(MapPlaces({}))
    recorder: var[LogWorker[Any] | None] = var(None)
    status_note: var[str] = var("")
    #: Typed and amplifier impedances judged against the profile (bedside.checks.impedance).
    impedance_verdicts: var[dict[str, Verdict]] = var(dict, always_update=True)

    def __init__(self, config: AppConfig, services: Services, source: Source | None = None) -> None:
        super().__init__()
        self.config = config
        self.services = services
        self._given_source = source
        self.live = LiveSession(
            services, config, lambda event: self.post_message(LiveMessage(event)),
            frame_feed=lambda g: FrameFeed(self.post_message, self._frame_recorder, g),
            display=TeeSource, places=lambda conn: map_places(self.services, conn.channels, self.plan))
        self.views: dict[str, Any] = {}
        self.plan: PlacementPlan | None = None
        self.taped: TapedMeasurements | None = None
        self.identity: StreamIdentity | None = source.identity if source is not None else None
        self._ward_screen: WardScreen | None = None  # bedside ward: the list of beds
        self._log_error = "" if config.log_path else "no setup log is kept in this session (it was started without one)"
        # The checks' long_term settings (services without quality settings: the defaults).
        long_term = getattr(self.services.load_quality(), "long_term", None) or LongTermSettings()
        #: The frames of the stream watched: time to good, the start gate, cues, alerts, stalls.
        self.vigil = FrameVigil(config.ready_hold_s, config.stale_after_s, long_term.alert_after_s,
                                long_term.skin_check_s)
        self.impedances = ImpedanceBook()  # typed in the Log view, and the amplifier's
        self.bell_on = self.config.bell
        #: The department profile (bedside.checks.profiles.Profile) once loaded, by name.
        self.profile_name = config.profile
        self.profile: Any = None
        self._leaving = False
        self._pending_pick: tuple[list[StreamIdentity], str, bool] | None = None
        self._view: str = config.start_view
        self._others_seen: set[StreamIdentity] = set()
        #: The channels screen is waiting to open on Watch (a new stream to confirm).
        self._pending_confirm = False
        #: What became of the setup log, said once the app has closed (the CLI prints it).
        self.log_outcome = ""

    # The vigil's state, as the screens and tests read it.
    @property
    def latest_frame(self) -> QualityFrame | None:
        return self.vigil.latest

    @latest_frame.setter
    def latest_frame(self, frame: QualityFrame | None) -> None:
        self.vigil.latest = frame

    @property
    def progress(self) -> Progress | None:
        return self.vigil.progress

    @property
    def ready_state(self) -> ReadyState | None:
        return self.vigil.ready_state

    @property
    def ready_gate(self) -> ReadyGate:
        return self.vigil.ready_gate

    @property
    def tracker(self) -> GoodTracker:
        return self.vigil.tracker

    @property
    def typed_impedances(self) -> dict[str, float]:
        return self.impedances.typed

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
        # Leaving by any other way than q/Ctrl-C (e.g. an error): still stop and save.
        for problem in self.live.close(timeout_s=3.0):
            log.error("%s", problem)
        self.connection = None
        gate, self.recorder = self.recorder, None
        if gate is not None and not self._leaving:
            try:
                self.log_outcome = self._close_log(gate)
            except BedsideError as exc:
                log.error("setup log: %s", exc)
            gate.stop()

    def action_leave(self) -> None:
        if self._leaving:
            return
        self._leaving = True
        self.live.end_look()
        self.notify("saving the log and closing…", timeout=3)
        self._close_down(self.recorder)

    @work(thread=True, exclusive=True, group="close-down", exit_on_error=False)
    def _close_down(self, gate: LogWorker[Any] | None) -> None:
        problems = self.live.close()
        outcome = ""
        if gate is not None:
            gate.drain(3.0)
            try:
                outcome = self._close_log(gate)
            except BedsideError as exc:
                problems.append(f"setup log: {exc}")
            gate.stop()
        self.post_message(ShutdownDone(problems, outcome))

    def _close_log(self, gate: LogWorker[Any]) -> str:
        """Save and close the log (any thread); what became of it, in words."""
        gate.call(lambda r: r.save_now())
        if self.config.discard_empty_log:
            gate.call(lambda r: r.close(True))
        else:
            gate.call(lambda r: r.close())
        if getattr(gate.recorder, "discarded", False):
            return "nothing was recorded, so no setup log was kept"
        path = getattr(gate.recorder, "path", None) or self.config.log_path
        return f"setup log saved to {path}"

    def on_shutdown_done(self, message: ShutdownDone) -> None:
        self.connection, self.recorder = None, None
        self.log_outcome = message.outcome or self.log_outcome
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

    # --- stream: the live session's requests and answers -----------------------------
    def discover(self, force_picker: bool) -> None:
        """Look for streams (Watch: p for the picker, r to look again). The look answers
        as streams reply: the picker opens at once (p) or as soon as two candidates are
        heard, and fills as more answer; only pinning the one stream waits the full look."""
        self.status_note = "looking for streams…"
        self._refresh_watch_status()
        self.live.discover(force_picker)

    def _connect(self, identity: StreamIdentity | None, source: Source | None) -> None:
        """Start watching: forget the old stream's state; the session stops it and connects."""
        self._forget_frames()
        self._pending_confirm = False
        self.connection = None
        self.live.connect(identity, source, self.profile_name)

    def on_live_message(self, message: LiveMessage) -> None:
        event = message.event
        if not self.live.accept(event):
            return  # an older look's or request's: dropped
        if isinstance(event, StreamsFound):
            self._streams_found(event)
        elif isinstance(event, StreamsSeen):
            if isinstance(self.screen, StreamPicker):
                self.screen.update_streams(event.streams, event.still_looking)
            elif self._pending_pick is not None:
                self._pending_pick = (event.streams, self._pending_pick[1], event.still_looking)
        elif isinstance(event, Connected):
            self._connected(event)
        elif isinstance(event, ConnectFailed):
            self._say_problem(event.text)
        elif isinstance(event, ReconnectRefused):
            self.notify(event.text, severity="error", timeout=10)
        elif isinstance(event, MonitorStopped):
            self.status_note = f"checks stopped: {event.text}"
            self.notify(self.status_note, severity="error", timeout=10)

    def _streams_found(self, event: StreamsFound) -> None:
        self.status_note = event.note
        if event.pinned is not None:
            self.status_note = "connecting…"
            self._connect(event.pinned, None)
        elif event.ambiguous:
            # The picker opens on Watch; elsewhere it waits (it would take the keys
            # of someone typing measurements or notes).
            self._pending_pick = (event.streams, event.note, event.still_looking)
            if self.current_view == "watch":
                self._open_picker()
            else:
                self.status_note = f"{streams_visible(len(event.streams))}: choose one in Watch (F3)"
                self.notify(self.status_note, timeout=6)
        self._refresh_watch_status()

    def _open_picker(self) -> None:
        if self._pending_pick is None or isinstance(self.screen, StreamPicker):
            return
        streams, note, still_looking = self._pending_pick
        self._pending_pick = None
        self.push_screen(StreamPicker(streams, note, current=self.identity, still_looking=still_looking),
                         self._picked)

    def _picked(self, identity: StreamIdentity | None) -> None:
        self.live.end_look()
        if identity is not None:
            self.status_note = "connecting…"
            self._connect(identity, None)
        self._refresh_watch_status()

    def _forget_frames(self) -> None:
        self.vigil.forget(over_limit(self.impedance_verdicts))

    def _connected(self, message: Connected) -> None:
        conn = message.connection
        if message.confirmed:  # the new channel set: the old one's verdicts are void
            self._forget_frames()
        self.connection = conn
        self.identity = conn.identity
        self.vigil.watch(conn.identity, conn.channels)
        if conn.profile is not None:
            self._use_profile(conn.profile)
        if any(c.impedance_kohm is not None for c in conn.channels):
            self.impedances.at = time.time()  # the amplifier's values, as of this opening
        self._judge_impedances()
        self.places = message.places if isinstance(message.places, MapPlaces) else MapPlaces({})
        self.vigil.connected_at = time.monotonic()
        self.status_note = ""
        if self.recorder is not None:
            self.recorder.submit(lambda r: r.set_stream(conn.identity, conn.channels), self._log_done("stream"))
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
        """The screen's answer (UI thread). None: cancelled, nothing changes. A changed
        set reopens the stream with it (the old one runs on until the new one is open)."""
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
        self.live.reconnect(preview.choices, self.profile_name, refused="channels not changed",
                            with_what="the new channels",
                            note=lambda new: self._saved_note(new.identity.source_id, preview))

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

    # --- frames --------------------------------------------------------------------
    def _frame_recorder(self) -> Callable[[QualityFrame], None] | None:
        """The log's on_frame (read on the monitor's thread; the recorder locks itself)."""
        worker = self.recorder
        return worker.recorder.on_frame if worker is not None else None

    def on_frame_arrived(self, message: FrameArrived) -> None:
        if not self.live.is_current(message.generation):
            return  # from a connection that has been replaced
        frame = message.frame
        news = self.vigil.take(frame)
        if news.ready is not None and self.recorder is not None:  # the log gets the first ready time
            ready = news.ready
            self.recorder.submit(lambda r: r.set_ready(ready.hold_s, ready.accepted, "app"), self._log_done("ready"))
        if news.ring and self.bell_on:  # ready, or a new fault
            self.bell()
        for text in news.alerts:  # long recordings: an electrode that degraded and stayed so
            self.notify(text, severity="warning", timeout=30)
            if self.bell_on:
                self.bell()
        if news.reminder is not None:
            self.notify(news.reminder, timeout=60)
        self._update_subtitle()
        # Handed straight to Watch (not through a reactive): the hot path, 4 per second.
        if self.current_view == "watch":
            self.views["watch"].show_frame(frame, self.progress, live=self.is_live())

    def toggle_bell(self) -> None:
        self.bell_on = not self.bell_on
        self.notify("sound cue on: a bell when ready and when a new fault appears" if self.bell_on
                    else "sound cue off", timeout=3)

    def show_frame(self, frame: QualityFrame) -> None:
        """Show a frame as if the monitor had sent it (tests, replays)."""
        self.post_message(FrameArrived(frame))

    def on_feed_problem(self, message: FeedProblem) -> None:
        self._say_problem(message.text)

    def _say_problem(self, text: str) -> None:
        self.status_note = text
        self.notify(text, severity="error", timeout=8)
        self._refresh_watch_status()

    def stalled_for(self) -> float | None:
        """Seconds since the last frame, when frames stopped (None while they flow)."""
        return self.vigil.stalled_for(self.connection is not None)

    def is_live(self) -> bool:
        frame = self.latest_frame
        return frame is not None and frame.live and self.stalled_for() is None

    def _watchdog(self) -> None:
        """Every 0.5 s: the header, another stream under this name, frames stopped."""
        self._update_subtitle()
        conn = self.connection
        if conn is not None:
            others = [o for o in conn.tee.other_candidates() if o not in self._others_seen]
            if others:
                self._others_seen.update(others)
                ids = ", ".join(o.source_id for o in others)
                self.status_note = (f"another stream named {conn.identity.name!r} appeared (id {ids}); "
                                    "not trusted unless you pick it: press p")
                self.notify(self.status_note, severity="warning", timeout=10)
        stalled = self.stalled_for()
        if stalled is not None and not self.vigil.shown_stalled and self._watch_ready():
            self.vigil.shown_stalled = True
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
            self._remap(self.connection, plan)

    @work(thread=True, exclusive=True, group="remap", exit_on_error=False)
    def _remap(self, conn: Connection, plan: PlacementPlan) -> None:
        """The head map follows this head's plan once it is measured."""
        self.post_message(MapPoints(conn, map_places(self.services, conn.channels, plan)))

    def on_map_points(self, message: MapPoints) -> None:
        if message.connection is self.connection:
            self.places = message.places  # Watch watches it

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
        typed, typed_at = recorder.typed_impedances()
        self.post_message(LogOpened(LogWorker(recorder), typed=typed, typed_at=typed_at))

    def on_log_opened(self, message: LogOpened) -> None:
        if message.gate is None:
            self._log_error = message.error
            self.notify(f"setup log not open: {message.error}", severity="error", timeout=10)
            return
        self.recorder = message.gate  # the Log view watches it: its status line and file name, now
        if self.impedances.resume(message.typed, message.typed_at):
            self._judge_impedances()  # the earlier session's typed values, judged as if typed now
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
            self._rejudge_with_profile()

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

    def _rejudge_with_profile(self) -> None:
        """The engine takes the new profile's thresholds: the stream is opened again as
        the channels screen does (a stream given in-process cannot be: said)."""
        name = self.profile_name
        if self._given_source is not None:
            self.notify(f"profile {name}: impedance limit in use now; its quality "
                        "thresholds apply when the stream is opened again", timeout=8)
            return
        self.live.reconnect(None, name, refused="profile thresholds not applied", with_what="the new profile",
                            note=lambda new: f"profile {name}: its thresholds are in use")

    def impedance_typed(self, electrode: str, kohm: float) -> tuple[str, float]:
        """A typed impedance (Log view): checked (0 or less, over 1 000 kΩ, or an electrode
        the stream does not have: InputError with the reason), kept, judged at once."""
        name, value = self.impedances.type_in(electrode, kohm, self.known_electrodes())
        self._judge_impedances()
        return name, value

    def _judge_impedances(self) -> None:
        """Judged again (the gate holds the electrodes over the limit); Watch watches the verdicts."""
        conn = self.connection
        verdicts = self.impedances.judge(conn.channels if conn is not None else (), self.profile)
        self.ready_gate.set_blocked(over_limit(verdicts))
        self.impedance_verdicts = verdicts

    def impedance_view(self) -> ImpedanceView | None:
        """The Watch impedance line (None until a profile is loaded)."""
        profile, conn = self.profile, self.connection
        if profile is None:
            return None
        electrodes = [c.name for c in conn.channels if c.is_scalp] if conn is not None else list(self.typed_impedances)
        return ImpedanceView(self.impedance_verdicts, electrodes, profile.impedance.limit_kohm, profile.name,
                             self.impedances.due(profile.recheck_h))

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
    app = BedsideApp(config or AppConfig(), services or default_services(), source)
    host: BedsideHost = app  # noqa: F841 - the type checker holds the app to what its screens use
    return app
