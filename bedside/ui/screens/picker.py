"""Choose one stream when several are visible (never guessed)."""

from __future__ import annotations

from rich.text import Text
from textual.app import ComposeResult
from textual.binding import Binding
from textual.containers import Vertical
from textual.screen import ModalScreen
from textual.widgets import OptionList, Static
from textual.widgets.option_list import Option

from bedside.stream.types import StreamIdentity


def describe(identity: StreamIdentity) -> Text:
    out = Text()
    out.append(identity.name, style="bold")
    out.append(f"  {identity.type}, {identity.n_channels} ch at {identity.nominal_rate_hz:g} Hz")
    out.append(f"\n  from {identity.hostname or '?'}, id {identity.source_id or '—'}", style="grey62")
    return out


class StreamPicker(ModalScreen[StreamIdentity | None]):
    """Lists the streams; Enter pins the highlighted one, Esc keeps things as they are."""

    BINDINGS = [Binding("escape", "cancel", "Cancel")]

    def __init__(self, streams: list[StreamIdentity], why: str = "") -> None:
        super().__init__()
        self.streams = list(streams)
        self.why = why

    def compose(self) -> ComposeResult:
        with Vertical(id="picker-box"):
            yield Static(
                Text(self.why or f"{len(self.streams)} streams are visible — choose the one for this bed",
                     style="bold"),
                id="picker-title",
            )
            yield OptionList(
                *[Option(describe(s), id=str(i)) for i, s in enumerate(self.streams)], id="picker-list"
            )
            yield Static(Text("Enter: pin this stream   Esc: cancel", style="grey62"))

    def on_mount(self) -> None:
        self.query_one(OptionList).focus()

    def on_option_list_option_selected(self, event: OptionList.OptionSelected) -> None:
        self.dismiss(self.streams[int(event.option.id or 0)])

    def action_cancel(self) -> None:
        self.dismiss(None)
