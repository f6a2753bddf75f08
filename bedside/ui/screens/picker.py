"""Choose one stream when several are visible (never guessed)."""

from __future__ import annotations

import time

from rich.text import Text
from textual.app import ComposeResult
from textual.binding import Binding
from textual.containers import Vertical
from textual.css.query import NoMatches
from textual.screen import ModalScreen
from textual.widgets import OptionList, Static
from textual.widgets.option_list import Option

from bedside.stream.types import StreamIdentity


def describe(identity: StreamIdentity) -> Text:
    out = Text()
    out.append(identity.name, style="bold")
    out.append(f"  {identity.type}, {identity.n_channels} ch at {identity.nominal_rate_hz:g} Hz")
    out.append(f"\n  from {identity.hostname or '?'}, id {identity.source_id or '—'}", style="grey62")
    if identity.uid:  # equal outlets (two copies of one program) differ only here
        started = (", started " + time.strftime("%H:%M:%S", time.localtime(identity.started_wall))
                   if identity.started_wall > 0 else "")
        out.append(f"\n  outlet {identity.uid[:8]}…{started}", style="grey62")
    return out


class StreamPicker(ModalScreen[StreamIdentity | None]):
    """Lists the streams; Enter pins the highlighted one, Esc keeps things as they are.

    It opens as soon as there is something to choose and fills as more streams answer
    (:meth:`update_streams`); the title says while the look goes on."""

    BINDINGS = [Binding("escape", "cancel", "Cancel")]

    def __init__(self, streams: list[StreamIdentity], why: str = "",
                 current: StreamIdentity | None = None, still_looking: bool = False) -> None:
        super().__init__()
        self.streams = list(streams)
        self.why = why
        self.current = current
        self.still_looking = still_looking

    def compose(self) -> ComposeResult:
        with Vertical(id="picker-box"):
            yield Static(self._title(), id="picker-title")
            yield OptionList(*self._options(), id="picker-list")
            yield Static(Text("Enter: pin this stream   Esc: cancel", style="grey62"))

    def _title(self) -> Text:
        n = len(self.streams)
        if self.why:
            return Text(self.why, style="bold")
        if n == 0:
            text = ("looking for streams…" if self.still_looking else
                    "no EEG streams visible yet; is the amplifier's LSL program running? (still listening)")
            return Text(text, style="bold")
        out = Text(f"{streams_visible(n)} — choose the one for this bed", style="bold")
        if self.still_looking:
            out.append("  (still looking…)", style="grey62")
        return out

    def _options(self) -> list[Option]:
        return [Option(Text.assemble("● watching now: " if s == self.current else "  ", describe(s)), id=str(i))
                for i, s in enumerate(self.streams)]

    def on_mount(self) -> None:
        options = self.query_one(OptionList)
        options.focus()
        if self.current in self.streams:
            options.highlighted = self.streams.index(self.current)  # type: ignore[arg-type]

    def update_streams(self, streams: list[StreamIdentity], still_looking: bool) -> None:
        """A newer list from the look: the highlighted stream stays highlighted."""
        try:
            options = self.query_one(OptionList)
        except NoMatches:  # not mounted, or mounted but not yet composed: on_mount shows these
            self.streams, self.still_looking = list(streams), still_looking
            return
        at = options.highlighted
        keep = self.streams[at] if at is not None and 0 <= at < len(self.streams) else self.current
        changed = list(streams) != self.streams
        self.streams, self.still_looking = list(streams), still_looking
        self.query_one("#picker-title", Static).update(self._title())
        if not changed:
            return
        options.clear_options()
        options.add_options(self._options())
        if keep in self.streams:
            options.highlighted = self.streams.index(keep)  # type: ignore[arg-type]
        elif self.streams:
            options.highlighted = 0

    def on_option_list_option_selected(self, event: OptionList.OptionSelected) -> None:
        self.dismiss(self.streams[int(event.option.id or 0)])

    def action_cancel(self) -> None:
        self.dismiss(None)


def streams_visible(n: int) -> str:
    return "1 stream is visible" if n == 1 else f"{n} streams are visible"
