"""The help screen: the keys of every view and the usual cautions."""

from __future__ import annotations

from rich.text import Text
from textual.app import ComposeResult
from textual.binding import Binding
from textual.containers import VerticalScroll
from textual.screen import ModalScreen
from textual.widgets import Static

from bedside.cautions import CAUTIONS, DISCLAIMER

KEYS = (
    ("Everywhere", (
        ("F2 / F3 / F4", "Measure / Watch / Log"),
        ("F1 or ?", "this help"),
        ("ctrl+s", "save the setup log now"),
        ("ctrl+q, ctrl+c, q", "save the log and leave (q when not typing)"),
        ("Tab / shift+Tab", "next / previous field"),
    )),
    ("Measure", (
        ("type, Enter", "the three measurements; marks appear as soon as they are valid"),
        ("F5", "save the marking sheet as a text file (for printing)"),
        ("F6", "copy the marking sheet to the clipboard"),
        ("F7", "diagram or table first (they take turns on short terminals)"),
    )),
    ("Watch", (
        ("↑ ↓ PgUp PgDn", "choose a channel (the map and trace follow)"),
        ("n", "jump to the next electrode that is not good yet"),
        ("t", "show or hide the trace and spectrum (hidden at first on short terminals)"),
        ("v", "trace as recorded → average reference → bipolar"),
        ("p / r", "pick another stream / look for streams again"),
        ("c", "channels: confirm or change each channel's type and name"),
        ("b", "sound cue on/off: a bell when ready to record and when a new fault appears"),
        ("d", "department profile: impedance limit, amplitude limits, montage, re-check interval"),
    )),
    ("Channels", (
        ("↑ ↓, Tab", "choose a channel, then its name and type fields"),
        ("Enter", "set the field (the whole set is checked at once)"),
        ("a / Esc", "apply and save for this amplifier / leave everything as it was"),
    )),
    ("Log", (
        ("Enter", "in 'note': add the note; in 'kΩ': record the impedance"),
        ("ctrl+o", "sign off (needs initials; a reason for each electrode not good)"),
    )),
)

LEGEND = (
    ("●", "green", "good — ready to record"),
    ("▲", "yellow", "check — look at the reason"),
    ("✖", "red", "fix — re-seat, re-prepare or replace"),
    ("?", "grey50", "no live data — nothing is known now"),
)


def help_text() -> Text:
    out = Text()
    out.append("bedside — help", style="bold")
    out.append("   (Esc closes)\n\n", style="grey62")
    for section, rows in KEYS:
        out.append(section + "\n", style="bold underline")
        for key, what in rows:
            out.append(f"  {key:<20}", style="bold cyan")
            out.append(what + "\n")
        out.append("\n")
    out.append("Levels (symbol and colour together)\n", style="bold underline")
    for sym, colour, words in LEGEND:
        out.append(f"  {sym} ", style=f"bold {colour}")
        out.append(words + "\n")
    out.append("\n")
    out.append(CAUTIONS + "\n\n")
    out.append(DISCLAIMER, style="italic")
    return out


class HelpScreen(ModalScreen[None]):
    BINDINGS = [
        Binding("escape", "dismiss", "Close"),
        Binding("question_mark", "dismiss", "Close", show=False),
        Binding("f1", "dismiss", "Close", show=False),
    ]

    def compose(self) -> ComposeResult:
        with VerticalScroll(id="help-box"):
            yield Static(help_text(), id="help-text")

    async def action_dismiss(self, result: None = None) -> None:
        self.dismiss(None)
