"""The help screen: the keys of every view and the usual cautions."""

from __future__ import annotations

from rich.text import Text
from textual.app import ComposeResult
from textual.binding import Binding
from textual.containers import VerticalScroll
from textual.screen import ModalScreen
from textual.widgets import Static

from bedside.cautions import CAUTIONS, DISCLAIMER
from bedside.checks.types import NO_DATA_COLOUR, NO_DATA_SYMBOL, NO_DATA_WORD, Level

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
        ("e", "page of traces: every scalp channel at a fixed µV per row"),
        ("v", "trace as recorded → average reference → its bipolar chain pair"),
        ("p / r", "pick another stream / look for streams again"),
        ("c", "channels: confirm or change each channel's type and name"),
        ("b", "sound cue on/off: a bell when ready to record and when a new fault appears"),
        ("k", "tap test: touch each electrode when it is named; shows where each touch landed"),
        ("w", "back to the ward's list of beds (when started as bedside ward)"),
        ("d", "department profile: impedance limit, amplitude limits, montage, re-check interval"),
    )),
    ("Tap test", (
        ("touch, when named", "lightly, each electrode in turn; the result shows as it comes"),
        ("r / Esc", "walk again / back to Watch (a walk not finished is not logged)"),
    )),
    ("Channels", (
        ("↑ ↓, Tab", "choose a channel, then its name and type fields"),
        ("Enter", "set the field (the whole set is checked at once)"),
        ("a / Esc", "apply and save for this amplifier / leave everything as it was"),
    )),
    ("Page of traces", (
        ("m", "montage: longitudinal bipolar → transverse → as recorded → average"),
        ("+ / -", "bigger / smaller: fewer / more µV per row (never auto-scaled)"),
        ("↑ ↓ PgUp PgDn", "choose a channel; the page scrolls or turns with it"),
        ("Esc", "back to Watch, the channel chosen here selected"),
    )),
    ("Log", (
        ("Enter", "in 'note': add the note; in 'kΩ': record the impedance"),
        ("ctrl+o", "sign off (needs initials; a reason for each electrode not good)"),
    )),
)

#: What each level asks of the technologist (the words and looks: bedside.checks.types).
LEGEND = (
    (Level.GOOD.symbol, Level.GOOD.colour, f"{Level.GOOD.word} — ready to record"),
    (Level.CHECK.symbol, Level.CHECK.colour, f"{Level.CHECK.word} — look at the reason"),
    (Level.BAD.symbol, Level.BAD.colour, f"{Level.BAD.word} — re-seat, re-prepare or replace"),
    (NO_DATA_SYMBOL, NO_DATA_COLOUR, f"{NO_DATA_WORD} — no live data, nothing is known now"),
)


#: How to read the head map (bedside/ui/widgets/head_map.py).
MAP_WORDS = (
    "drawn on the three taped lines: the ring is the circumference, ┆ nasion (N) to",
    "inion (I), ┄ ear to ear (L, R); the sites sit where the Measure view marks them",
    "a small letter beside two electrodes (a, b …): a bridge between them, the same",
    "letter as in the findings line",
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
    out.append("Levels (the symbol first, the colour second)\n", style="bold underline")
    for sym, colour, words in LEGEND:
        out.append(f"  {sym} ", style=f"bold {colour}")
        out.append(words + "\n")
    out.append("\n")
    out.append("The head map\n", style="bold underline")
    for words in MAP_WORDS:
        out.append(f"  {words}\n")
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
