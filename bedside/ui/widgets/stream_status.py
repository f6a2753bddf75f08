"""The stream bar, always on screen: which stream is pinned and how it is doing."""

from __future__ import annotations

from rich.text import Text
from textual.widgets import Static

from bedside.stream.types import StreamHealth, StreamIdentity
from bedside.ui.widgets.findings import same_text

#: state → (symbol, colour, words). Symbol and word always come with the colour.
STATE_LOOK = {
    "connecting": ("◌", "cyan", "connecting"),
    "live": ("◉", "green", "live"),
    "stale": ("◐", "yellow", "stale — no new samples"),
    "lost": ("✖", "red", "lost — the stream is gone"),
    "none": ("○", "grey50", "no stream"),
    "stalled": ("◐", "yellow", "no update from the checks"),
}


def status_text(
    identity: StreamIdentity | None,
    health: StreamHealth | None,
    *,
    stalled_s: float | None = None,
    note: str = "",
) -> Text:
    """Two lines: identity (pinned) and health. ``stalled_s``: no frame for that long."""
    out = Text(no_wrap=True, overflow="ellipsis")
    if identity is None:
        sym, colour, words = STATE_LOOK["none"]
        out.append(f"{sym} {words}", style=f"bold {colour}")
        out.append(f"  {note}" if note else "  press p to pick a stream, r to look again")
        return out
    out.append("stream ", style="grey62")
    out.append(identity.name, style="bold")
    out.append(f" @ {identity.hostname or '?'}", style="")
    out.append(f"  id {identity.source_id or '—'}", style="grey62")
    out.append(f"  {identity.n_channels} ch  {identity.type}", style="grey62")
    out.append("\n")
    if stalled_s is not None:
        state = "stalled"
    elif health is None:
        state = "connecting"
    else:
        state = health.state
    sym, colour, words = STATE_LOOK.get(state, STATE_LOOK["connecting"])
    out.append(f"{sym} {words}", style=f"bold {colour}")
    if stalled_s is not None:
        out.append(f" for {stalled_s:.0f} s — levels hidden", style=colour)
    nominal = health.nominal_rate_hz if health else identity.nominal_rate_hz
    out.append(f"  rate {nominal:g} Hz set")
    if health is not None:
        out.append(f" / {health.effective_rate_hz:.1f} Hz seen")
        out.append(f"  gaps {health.gaps}")
        if health.dropped_samples:
            out.append(f" ({health.dropped_samples} samples)")
        if health.state != "live":
            out.append(f"  last data {health.seconds_since_data:.0f} s ago", style=colour)
        if health.reconnects:
            out.append(f"  reconnects {health.reconnects}")
    for text in health.notes[-1:] if health is not None else ():
        out.append(f"  ▲ {text}", style="yellow")  # the stream package's own words
    if note:
        out.append(f"  {note}", style="grey62")
    return out


class StreamStatus(Static):
    """Shows :func:`status_text`; the watch screen calls :meth:`show` on every frame.

    Its height is fixed (two lines, app.tcss), so a change repaints in place without
    a new layout; an unchanged text is not repainted at all.
    """

    _shown: Text | None = None

    def show(
        self,
        identity: StreamIdentity | None,
        health: StreamHealth | None,
        *,
        stalled_s: float | None = None,
        note: str = "",
    ) -> None:
        text = status_text(identity, health, stalled_s=stalled_s, note=note)
        if same_text(self._shown, text):
            return
        first = self._shown is None
        self._shown = text
        self.update(text, layout=first)
