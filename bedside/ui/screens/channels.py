"""Channels: what bedside took each channel to be, confirmed or changed by the technologist.

Opened when a stream connects whose channels were not confirmed before, and from
Watch with ``c``. It shows the summary ("19 scalp, 2 EOG, 1 ECG, 1 EMG, 2 not
judged") and one row per channel: the label as the stream sent it, the name shown,
the type (BIDS channels.tsv) and what decided it. A channel's name and type can be
changed; every change is checked at once by the core (off the UI thread) and a
problem is said on the screen. ``a`` applies the whole set (the app rebuilds the
engine on it and saves it for this amplifier's source_id); Esc leaves everything as
it was.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import TYPE_CHECKING

from rich.text import Text
from textual import work
from textual.app import ComposeResult
from textual.binding import Binding
from textual.containers import Horizontal, Vertical
from textual.message import Message
from textual.screen import ModalScreen
from textual.suggester import SuggestFromList
from textual.widgets import DataTable, Input, Label, Static

from bedside.errors import BedsideError
from bedside.stream.types import ChannelInfo
from bedside.ui.host import HostedScreen
from bedside.ui.services import ChannelPreview

if TYPE_CHECKING:
    from bedside.ui.live import Connection

#: What decided a channel's type (ChannelInfo.evidence), in the technologist's words.
EVIDENCE_WORDS = {
    "type": "stream's type",
    "unit": "its unit",
    "label": "its label",
    "EDF+ type": "EDF+ type word",
    "site": "electrode name",
    "assumed": "assumed: voltage, unknown label",
    "reference": "the reference",
    "technologist": "you, before",
}

#: What each kind of channel gets (the rule of the engine, said once here for the screen).
TYPE_HINT = ("Only EEG is judged as a scalp electrode; EOG, ECG, EMG get the checks of their lead; "
             "TRIG, MISC and the rest are not judged.")
KEY_HINT = "↑↓ channel · Tab its name, type · Enter set · a apply and save for this amplifier · Esc cancel"

LABEL_CHARS = 24  # a label is shown up to this long (the full one is kept)


def shown_label(label: str) -> str:
    """The stream's label as text that fits a cell: control characters as '·', cut with '…'."""
    text = "".join(ch if ch.isprintable() else "·" for ch in label[: LABEL_CHARS + 1])
    if not label.strip():
        return "(empty)"
    return text if len(label) <= LABEL_CHARS else text[: LABEL_CHARS - 1] + "…"


@dataclass
class _Row:
    channel: ChannelInfo
    kind: str
    name: str
    #: The label names this channel alone, so a choice keyed by it can be saved.
    keyable: bool

    @property
    def changed(self) -> bool:
        return (self.kind, self.name) != (self.channel.kind, self.channel.name)


class ChoicesChecked(Message):
    """The core's answer on the edited set (posted from the check worker)."""

    def __init__(self, generation: int, preview: ChannelPreview | None, error: str, apply: bool) -> None:
        super().__init__()
        self.generation, self.preview, self.error, self.apply = generation, preview, error, apply


class ChannelsScreen(HostedScreen, ModalScreen[ChannelPreview | None]):
    """Dismissed with the checked new set (a ChannelPreview), or None when cancelled."""

    BINDINGS = [
        Binding("a", "apply", "Apply"),
        Binding("escape", "cancel", "Cancel"),
    ]

    def __init__(self, connection: Connection) -> None:
        super().__init__(name="channels")
        self.connection = connection
        counts: dict[str, int] = {}
        for ch in connection.channels:
            counts[ch.label] = counts.get(ch.label, 0) + 1
        self.rows = [_Row(ch, ch.kind, ch.name, bool(ch.label.strip()) and counts[ch.label] == 1)
                     for ch in connection.channels]
        self.summary = connection.summary
        self.message = ""
        self._generation = 0
        self._checked: ChannelPreview | None = None  # the last set the core accepted

    def compose(self) -> ComposeResult:
        ident = self.connection.identity
        with Vertical(id="channels-box"):
            yield Static(Text(f"Channels of {ident.name} — what bedside took each one to be", style="bold"),
                         id="channels-title")
            yield Static(id="channels-summary")
            yield DataTable(id="channels-table", cursor_type="row", zebra_stripes=True)
            with Horizontal(id="channels-edit"):
                yield Label("name", classes="form-label")
                yield Input(id="channel-name", placeholder="name to show", select_on_focus=True, compact=True)
                yield Label("type", classes="form-label")
                yield Input(id="channel-type", placeholder="EEG, EOG, ECG, EMG, MISC…", select_on_focus=True, compact=True,
                            suggester=SuggestFromList(self.connection.channel_types, case_sensitive=False))
            yield Static(id="channels-message")
            yield Static(Text(TYPE_HINT + "\n" + KEY_HINT, style="grey62"), id="channels-hint")

    def on_mount(self) -> None:
        table = self.query_one(DataTable)
        table.add_column("#", key="index")
        table.add_column("label as sent", key="label")
        table.add_column("name", key="name")
        table.add_column("type", key="type")
        table.add_column("decided by", key="evidence")
        for i, row in enumerate(self.rows):
            table.add_row(*self._cells(i, row), key=str(i))
        table.focus()
        self._show_summary()
        self._fill_inputs(0)

    # --- what is shown ------------------------------------------------------------
    def _cells(self, i: int, row: _Row) -> tuple[Text | str, ...]:
        mark = "✎ " if row.changed else ""
        style = "bold" if row.kind == "EEG" else "italic"
        evidence = "you, now" if row.changed else EVIDENCE_WORDS.get(row.channel.evidence, row.channel.evidence)
        return (str(i + 1), shown_label(row.channel.label), Text(mark + row.name, style=style),
                Text(row.kind, style=style), evidence if row.keyable else "label repeats: cannot be changed")

    def _refresh_row(self, i: int) -> None:
        table = self.query_one(DataTable)
        for column, value in zip(("index", "label", "name", "type", "evidence"), self._cells(i, self.rows[i]),
                                 strict=True):
            table.update_cell(str(i), column, value)

    def _show_summary(self) -> None:
        text = Text(self.summary, style="bold")
        if self.connection.geometry_note:
            text.append(f"  · {self.connection.geometry_note}", style="grey62")
        self.query_one("#channels-summary", Static).update(text)
        changed = sum(1 for r in self.rows if r.changed)
        msg = self.query_one("#channels-message", Static)
        if self.message:
            msg.update(Text(self.message, style="bold red"))
        elif changed:
            msg.update(Text(f"{changed} changed, not applied yet (a applies, Esc leaves them as they were)",
                            style="yellow"))
        else:
            msg.update("")

    def _fill_inputs(self, i: int) -> None:
        if not 0 <= i < len(self.rows):
            return
        row = self.rows[i]
        self.query_one("#channel-name", Input).value = row.name
        self.query_one("#channel-type", Input).value = row.kind

    def _highlighted(self) -> int:
        return self.query_one(DataTable).cursor_row

    # --- interaction --------------------------------------------------------------
    def on_data_table_row_highlighted(self, event: DataTable.RowHighlighted) -> None:
        self._fill_inputs(event.cursor_row)

    def on_data_table_row_selected(self, event: DataTable.RowSelected) -> None:
        """Enter (or a click) on a channel: edit its type."""
        self.query_one("#channel-type", Input).focus()

    def on_input_submitted(self, event: Input.Submitted) -> None:
        i = self._highlighted()
        if not 0 <= i < len(self.rows):
            return
        row = self.rows[i]
        if not row.keyable:
            self.message = (f"channel {i + 1}: the stream gives the label {shown_label(row.channel.label)!r} to "
                            "more than one channel (or none), so a choice for it could not be told apart; "
                            "give the channels distinct labels in the sending program")
            self._fill_inputs(i)
            self._show_summary()
            return
        name = self.query_one("#channel-name", Input).value
        kind = self.query_one("#channel-type", Input).value.strip().upper()
        row.name, row.kind = name.strip(), kind
        self._refresh_row(i)
        table = self.query_one(DataTable)
        table.focus()
        table.move_cursor(row=i)  # and scroll it into view
        self._check(apply=False)

    def action_apply(self) -> None:
        self._check(apply=True)

    def action_cancel(self) -> None:
        self.dismiss(None)

    # --- checked by the core, off the UI thread ----------------------------------
    def _check(self, apply: bool) -> None:
        self._generation += 1
        edits = {r.channel.label: (r.kind, r.name) for r in self.rows if r.keyable}
        self._check_worker(tuple(self.connection.channels), edits, self._generation, apply)

    @work(thread=True, exclusive=True, group="channel-check", exit_on_error=False)
    def _check_worker(self, channels: tuple[ChannelInfo, ...], edits: dict[str, tuple[str, str]],
                      generation: int, apply: bool) -> None:
        try:
            preview = self.bedside.services.preview_channels(channels, edits)
        except BedsideError as exc:
            self.post_message(ChoicesChecked(generation, None, str(exc), apply))
            return
        self.post_message(ChoicesChecked(generation, preview, "", apply))

    def on_choices_checked(self, message: ChoicesChecked) -> None:
        if message.generation != self._generation:
            return  # an older check; a newer one is on its way
        self._checked = message.preview
        if message.preview is None:
            self.message = message.error + ("  — nothing was applied" if message.apply else "")
        else:
            self.message = ""
            self.summary = message.preview.summary
        self._show_summary()
        if message.apply and message.preview is not None:
            self.dismiss(message.preview)
