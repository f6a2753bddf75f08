"""One line on Watch: the countdown to "ready to record" (the start gate of
:mod:`bedside.checks.ready`; the app feeds it). Shape and words as well as colour."""

from __future__ import annotations

import time

from rich.text import Text
from textual.widgets import Static

from bedside.checks.ready import ReadyState


def ready_text(state: ReadyState | None, live: bool = True) -> Text:
    if state is None:
        return Text("ready count: no stream yet", style="grey62")
    if not live:  # never the last state as if live
        return Text("◷ ready count: no live data (it starts again with the data)", style="grey62")
    words = state.text()
    if state.good_now:
        at = time.strftime("%H:%M:%S", time.localtime(state.ready_at_s)) if state.ready_at_s else ""
        return Text(f"✔ {words}" + (f" (since {at})" if at else ""), style="bold green")
    if not state.judged:
        return Text(f"◷ {words}", style="grey62")
    if state.waiting:
        return Text(f"◷ {words}", style="yellow")
    return Text(f"◷ {words}", style="bold")


class ReadyLine(Static):
    """Fixed height (app.tcss); repainted only when its words change."""

    _shown: str | None = None

    def show(self, state: ReadyState | None, live: bool = True) -> None:
        text = ready_text(state, live)
        if text.plain == self._shown:
            return
        self._shown = text.plain
        self.update(text)
