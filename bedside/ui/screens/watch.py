"""Watch: the live view while electrodes go on.

It only shows what frames say; the app hands it each frame (:meth:`show_frame`).
With no live data (stream stale or lost, or frames stopped) every electrode shows
"?" in grey — never the last colours as if they were live.
"""

from __future__ import annotations

import functools
from collections.abc import Callable
from typing import Any, TypeVar, cast

from textual.app import ComposeResult
from textual.binding import Binding
from textual.containers import Horizontal
from textual.css.query import NoMatches
from textual.screen import Screen
from textual.widgets import Footer, Header

from bedside.checks.types import Level, QualityFrame
from bedside.ui.host import HostedScreen
from bedside.ui.live import MapPlaces
from bedside.ui.plots import DERIVATIONS, Derivation
from bedside.ui.progress import Progress
from bedside.ui.screens.traces import TracesScreen
from bedside.ui.widgets.channel_table import ChannelTable
from bedside.ui.widgets.findings import Findings, ProgressLine
from bedside.ui.widgets.head_map import Bridge, HeadMap
from bedside.ui.widgets.impedance_line import ImpedanceLine
from bedside.ui.widgets.ready_line import ReadyLine
from bedside.ui.widgets.stream_status import StreamStatus
from bedside.ui.widgets.trace_view import TraceRequest, TraceView

F = TypeVar("F", bound=Callable[..., None])


def while_mounted(method: F) -> F:
    """Frames and timers may still arrive while the screen is being taken down: skip them."""

    @functools.wraps(method)
    def wrapper(self: WatchScreen, *args: Any, **kwargs: Any) -> None:
        if not self._ready:
            return
        try:
            method(self, *args, **kwargs)
        except NoMatches:
            return

    return cast(F, wrapper)


class WatchScreen(HostedScreen, Screen[None]):
    BINDINGS = [
        Binding("t", "toggle_trace", "Trace"),
        # Shown in the footer: what fits 80 columns beside the views' keys; the rest is
        # in the help (F1).
        Binding("v", "cycle_derivation", "Derivation", show=False),
        Binding("n", "next_not_good", "Next"),
        Binding("e", "page", "Page"),
        Binding("c", "channels", "Channels", show=False),
        Binding("p", "pick_stream", "Streams", show=False),
        Binding("r", "rescan", "Look again", show=False),
        Binding("b", "toggle_bell", "Bell", show=False),
        Binding("k", "tap_test", "Tap test", show=False),
        Binding("d", "profiles", "Profile", show=False),
    ]

    def __init__(self) -> None:
        super().__init__(name="watch")
        self.derivation: Derivation = "referential"
        self.selected: str | None = None
        self._frame: QualityFrame | None = None
        self._live = False
        self._ready = False  # set once the widgets are mounted (frames may come sooner)
        self._trace_wanted: bool | None = None  # None: decided by the terminal's height

    def compose(self) -> ComposeResult:
        yield Header(show_clock=False)
        yield StreamStatus(id="stream-status")
        with Horizontal(id="watch-body"):
            # The list first (where the eye starts), the map beside it on the right.
            yield ChannelTable(id="channel-table")
            yield HeadMap(id="head-map")
        yield TraceView(id="trace-view")
        yield Findings(id="findings")
        yield ProgressLine(id="progress")
        yield ReadyLine(id="ready-line")
        yield ImpedanceLine(id="impedance-line")
        yield Footer(compact=True)

    def on_mount(self) -> None:
        self.query_one(ChannelTable).focus()
        self.set_interval(0.5, self._request_trace)
        self.query_one(TraceView).clear("select a channel (↑/↓) to see its trace")
        self._ready = True
        # The app's state this screen follows (bedside.ui.host): set now, then on each change.
        self.watch(self.app, "places", self._places_changed)
        self.watch(self.app, "status_note", lambda: self.refresh_status())
        self.watch(self.app, "impedance_verdicts", lambda: self.show_impedances())
        if self.bedside.latest_frame is not None:
            self.show_frame(self.bedside.latest_frame, self.bedside.progress, live=self.bedside.is_live())

    def on_resize(self) -> None:
        # A short terminal (80×24) gives the map and table the room; t shows the trace.
        short = self.size.height < 32
        self.set_class(short, "-short")
        self._apply_trace(self._trace_wanted if self._trace_wanted is not None else not short)

    def _apply_trace(self, show: bool) -> None:
        self.set_class(not show, "-no-trace")

    def action_toggle_trace(self) -> None:
        self._trace_wanted = self.has_class("-no-trace")
        self._apply_trace(self._trace_wanted)
        self._request_trace()

    def on_unmount(self) -> None:
        self._ready = False

    def on_screen_resume(self) -> None:
        self.bedside.open_pending_confirm()  # a new stream's channels, if they wait
        self.refresh_status()
        app = self.bedside
        if app.latest_frame is not None:
            self.show_frame(app.latest_frame, app.progress, live=app.is_live())

    # --- fed by the app -------------------------------------------------------
    def _places_changed(self, places: MapPlaces) -> None:
        self.set_points(places.points, places.unplaced)

    @while_mounted
    def set_points(self, points: dict[str, tuple[float, float]], unplaced: tuple[str, ...] = ()) -> None:
        """Where the head map draws (the app's ``places``; ``bedside bench`` sets its own)."""
        self.query_one(HeadMap).set_points(points, unplaced)

    @while_mounted
    def refresh_status(self, note: str = "") -> None:
        app = self.bedside
        frame = app.latest_frame
        health = frame.stream_health if frame is not None else None
        self.query_one(StreamStatus).show(
            app.identity, health, stalled_s=app.stalled_for(), note=note or app.status_note
        )

    @while_mounted
    def show_frame(self, frame: QualityFrame, progress: Progress | None, *, live: bool) -> None:
        self._frame, self._live = frame, live
        levels: dict[str, Level | None] = {ch.name: ch.level for ch in frame.channels}
        bridges = tuple(
            Bridge(f.electrodes[0], f.electrodes[1], f.level)
            for f in frame.findings
            if f.kind == "bridge" and len(f.electrodes) >= 2
        )
        table = self.query_one(ChannelTable)
        ttg = progress.time_to_good_s if progress else {}
        table.show(frame, live, ttg)
        if self.selected is None and table.names:
            self.selected = table.selected_name()
        self.query_one(HeadMap).show(levels, live=live, bridges=bridges if live else (), selected=self.selected)
        self._show_findings()
        self.query_one(ProgressLine).show(progress)
        self.query_one(ReadyLine).show(self.bedside.ready_state, live)
        self.show_impedances()
        self.refresh_status()

    @while_mounted
    def show_impedances(self) -> None:
        """The impedance line (the app judged them; typed values, the amplifier's)."""
        self.query_one(ImpedanceLine).show(self.bedside.impedance_view(), self.selected)

    @while_mounted
    def _show_findings(self) -> None:
        frame = self._frame
        if frame is None:
            return
        chosen = next((ch for ch in frame.channels if ch.name == self.selected), None)
        self.query_one(Findings).show(frame.findings, self._live, chosen)

    def show_no_data(self) -> None:
        """Frames stopped: grey everything out now (the app's watchdog calls this)."""
        if self._frame is not None:
            self.show_frame(self._frame, self.bedside.progress, live=False)
        else:
            self.refresh_status()

    # --- interaction ------------------------------------------------------------
    def on_data_table_row_highlighted(self, event: ChannelTable.RowHighlighted) -> None:
        if event.data_table.id != "channel-table" or event.row_key.value is None:
            return
        self.selected = str(event.row_key.value)
        self.query_one(HeadMap).select(self.selected)
        if self._ready:
            self._show_findings()
            self.show_impedances()
        self._request_trace()

    @while_mounted
    def _request_trace(self) -> None:
        app = self.bedside
        conn = app.connection
        view = self.query_one(TraceView)
        if conn is None or self.selected is None or self.has_class("-no-trace"):
            return
        names = [ch.name for ch in conn.channels]
        if self.selected not in names:
            return
        index = names.index(self.selected)
        partner_name = app.bipolar_partner(self.selected) if self.derivation == "bipolar" else None
        partner = names.index(partner_name) if partner_name in names else None
        size = view.size
        req = TraceRequest(
            name=self.selected,
            index=index,
            mode=self.derivation,
            partner_name=partner_name if partner is not None else None,
            partner=partner,
            scalp_mask=tuple(ch.is_scalp for ch in conn.channels),
            trace_s=app.config.trace_s,
            mains_hz=app.mains_hz(),
            width=max(20, size.width),
            height=max(3, size.height),
        )
        view.request(conn.tee.buffer, req)

    def action_cycle_derivation(self) -> None:
        i = DERIVATIONS.index(self.derivation)
        self.derivation = DERIVATIONS[(i + 1) % len(DERIVATIONS)]
        self.notify(f"trace: {self.derivation}", timeout=1.5)
        self._request_trace()

    def action_next_not_good(self) -> None:
        progress = self.bedside.progress
        if progress is None or not progress.not_good:
            self.notify("nothing waiting", timeout=1.5)
            return
        names = list(progress.not_good)
        nxt = names[0]
        if self.selected in names:
            nxt = names[(names.index(self.selected) + 1) % len(names)]
        self.query_one(ChannelTable).select_name(nxt)

    def action_page(self) -> None:
        """The page of traces (screens/traces.py), starting at the selected electrode."""
        self.app.push_screen(TracesScreen(self.selected), callback=self._page_closed)

    def _page_closed(self, selected: str | None) -> None:
        if selected is not None and self._ready:
            self.query_one(ChannelTable).select_name(selected)

    def action_channels(self) -> None:
        self.bedside.open_channels()

    def action_pick_stream(self) -> None:
        self.bedside.discover(force_picker=True)

    def action_profiles(self) -> None:
        self.bedside.open_profiles()

    def action_toggle_bell(self) -> None:
        self.bedside.toggle_bell()

    def action_tap_test(self) -> None:
        from bedside.ui.screens.tap_test import TapTestScreen

        self.app.push_screen(TapTestScreen())

    def action_rescan(self) -> None:
        self.bedside.discover(force_picker=False)
