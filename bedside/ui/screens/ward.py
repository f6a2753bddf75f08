"""The ward: every visible EEG stream, one line per bed (``bedside ward``).

A core :class:`bedside.ward.Ward` watches every bed in one process; this screen only
shows its summaries (the UI computes no metric). Enter opens the highlighted bed in the
Watch view (the app connects to that stream); ``w`` on Watch comes back here. Beds come
and go live: the list is refreshed every second from a worker thread.
"""

from __future__ import annotations

import threading
from typing import Any

from rich.text import Text
from textual import work
from textual.app import ComposeResult
from textual.binding import Binding
from textual.containers import Vertical
from textual.message import Message
from textual.screen import Screen
from textual.widgets import DataTable, Footer, Static

from bedside.stream.types import StreamIdentity
from bedside.ward import BedSummary

#: The states and counts in words and symbols of the app (symbols carry the meaning).
STATE_WORDS = {"live": "● live", "stale": "▲ stale", "lost": "✖ lost", "refused": "✖ refused",
               "connecting": "? connecting"}
COLUMNS = ("bed (stream)", "host", "state", "scalp", "good", "check", "bad", "worst")


class BedsSeen(Message):
    def __init__(self, beds: list[BedSummary], identities: list[StreamIdentity]) -> None:
        super().__init__()
        self.beds = beds
        self.identities = identities


class WardScreen(Screen[None]):
    """Lists the beds; Enter opens one in Watch."""

    BINDINGS = [Binding("enter", "open_bed", "Open in Watch", show=True)]

    def __init__(self, ward: Any) -> None:
        super().__init__(name="ward")
        self.ward = ward
        self.beds: list[BedSummary] = []
        self.identities: list[StreamIdentity] = []
        self._stop = threading.Event()

    def compose(self) -> ComposeResult:
        with Vertical():
            yield Static(Text("Ward — every EEG stream visible, one line per bed (looking…)", style="bold"),
                         id="ward-title")
            table: DataTable[Any] = DataTable(id="ward-table", cursor_type="row", zebra_stripes=True)
            yield table
            yield Static(Text("Enter: open the bed in Watch (w there comes back)   q: save & quit",
                              style="grey62"))
        yield Footer()

    def on_mount(self) -> None:
        table = self.query_one("#ward-table", DataTable)
        table.add_columns(*COLUMNS)
        self._poll()

    def on_unmount(self) -> None:
        self._stop.set()

    @work(thread=True, exclusive=True, group="ward", exit_on_error=False)
    def _poll(self) -> None:
        while not self._stop.is_set():
            try:
                beds = self.ward.poll()
                identities = [b.identity for _k, b in sorted(self.ward.beds.items())]
            except Exception as exc:  # noqa: BLE001 - the list says what went wrong, the app stays
                self.app.call_from_thread(self.notify, f"the ward's look failed: {exc}", severity="error")
                beds, identities = [], []
            self.post_message(BedsSeen(beds, identities))
            self._stop.wait(1.0)

    def on_beds_seen(self, message: BedsSeen) -> None:
        self.beds, self.identities = message.beds, message.identities
        table = self.query_one("#ward-table", DataTable)
        row = table.cursor_row
        table.clear()
        for b in self.beds:
            table.add_row(b.name, b.hostname, STATE_WORDS.get(b.state, b.state), str(b.n_scalp),
                          str(b.good), str(b.check), str(b.bad), b.worst[:60])
        if self.beds:
            table.move_cursor(row=min(max(row, 0), len(self.beds) - 1))
        n = len(self.beds)
        words = "no EEG stream visible yet (still looking)" if not n else f"{n} bed{'s' if n != 1 else ''}"
        self.query_one("#ward-title", Static).update(
            Text(f"Ward — every EEG stream visible, one line per bed: {words}", style="bold"))

    def on_data_table_row_selected(self, _message: DataTable.RowSelected) -> None:
        self.action_open_bed()

    def action_open_bed(self) -> None:
        table = self.query_one("#ward-table", DataTable)
        i = table.cursor_row
        if not self.identities or not 0 <= i < len(self.identities):
            self.notify("no bed to open yet", timeout=3)
            return
        open_bed = getattr(self.app, "open_bed", None)
        if open_bed is not None:
            open_bed(self.identities[i])
