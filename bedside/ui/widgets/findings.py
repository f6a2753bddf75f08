"""Findings about the whole setup (reference, ground, bridges) and the count-down."""

from __future__ import annotations

from rich.text import Text
from textual.widgets import Static

from bedside.checks.types import NO_DATA_COLOUR, ChannelQuality, Finding, Level
from bedside.ui.progress import Progress
from bedside.ui.widgets.channel_table import format_seconds
from bedside.ui.widgets.head_map import bridge_tag


def selected_text(selected: ChannelQuality | None, live: bool) -> Text:
    """The selected electrode's verdict in full (the table's 'why' column may be cut)."""
    out = Text()
    if selected is None or not live or selected.level is None or selected.level is Level.GOOD:
        return out
    lv = selected.level
    out.append(f"▶ {selected.name} {lv.symbol} {lv.word}: ", style=f"bold {lv.colour}")
    out.append("; ".join(selected.reasons) or "no reason given")
    return out


def findings_text(
    findings: tuple[Finding, ...], live: bool, selected: ChannelQuality | None = None
) -> Text:
    out = selected_text(selected, live)
    if out.plain:
        out.append("\n")
    if not live:
        out.append("? no live data — findings hidden", style=NO_DATA_COLOUR)
        return out
    if not findings:
        out.append("no setup-wide findings", style="grey62")
        return out
    bridges = 0
    for i, f in enumerate(findings):
        if i:
            out.append("\n")
        out.append(f"{f.level.symbol} {f.level.word} {f.kind}", style=f"bold {f.level.colour}")
        if f.kind == "bridge" and len(f.electrodes) >= 2:
            # The same tag the head map puts on both electrodes (widgets/head_map.py).
            out.append(" ")
            out.append(bridge_tag(bridges), style=f"bold reverse {f.level.colour}")
            bridges += 1
            out.append(f" {' + '.join(f.electrodes)}", style="bold")
        elif f.electrodes:
            out.append(f" {', '.join(f.electrodes)}", style="bold")
        out.append(f": {f.reason}")
    return out


def progress_text(progress: Progress | None, *, show_names: int = 8) -> Text:
    out = Text(no_wrap=True, overflow="ellipsis")
    if progress is None:
        out.append("waiting for the first update…", style="grey62")
        return out
    if not progress.live:
        out.append(f"? {progress.total} electrodes — no live data", style=NO_DATA_COLOUR)
        return out
    left = len(progress.not_good)
    if left == 0:
        out.append(f"● all {progress.total} electrodes good", style=f"bold {Level.GOOD.colour}")
    else:
        out.append(f"{left} of {progress.total} not good yet", style="bold")
        names = list(progress.not_good[:show_names])
        more = left - len(names)
        out.append(": " + " ".join(names) + (f" +{more}" if more > 0 else ""))
    if progress.latest_good is not None:
        name, seconds = progress.latest_good
        out.append(f"   latest to good: {name} after {format_seconds(seconds)}", style="grey62")
    return out


def same_text(a: Text | None, b: Text) -> bool:
    """The same characters in the same styles (then a repaint would show nothing new)."""
    return a is not None and a.plain == b.plain and a.spans == b.spans and a.style == b.style


class Findings(Static):
    """Height follows the text (up to the CSS max): a new layout only when the line count changes."""

    _shown: Text | None = None

    def show(
        self, findings: tuple[Finding, ...], live: bool, selected: ChannelQuality | None = None
    ) -> None:
        text = findings_text(findings, live, selected)
        if same_text(self._shown, text):
            return
        old = self._shown
        self._shown = text
        layout = old is None or old.plain.count("\n") != text.plain.count("\n")
        self.update(text, layout=layout)


class ProgressLine(Static):
    """One line, fixed height (app.tcss): updated in place, no new layout."""

    _shown: Text | None = None

    def show(self, progress: Progress | None) -> None:
        text = progress_text(progress)
        if same_text(self._shown, text):
            return
        first = self._shown is None
        self._shown = text
        self.update(text, layout=first)
