"""Choose the department profile (Watch: d): adult, paediatric, neonatal, ICU long-term,
research high-density — each a set of thresholds and limits from configs/profiles/."""

from __future__ import annotations

import math

from rich.text import Text
from textual.app import ComposeResult
from textual.binding import Binding
from textual.containers import Vertical
from textual.screen import ModalScreen
from textual.widgets import OptionList, Static
from textual.widgets.option_list import Option

#: (name, title, impedance limit kΩ, re-check hours or None), as Services.profile_choices gives.
Choice = tuple[str, str, float, float | None]


def describe(choice: Choice, current: str) -> Text:
    name, title, limit, recheck = choice
    out = Text("● in use: " if name == current else "  ")
    out.append(name, style="bold")
    out.append(f"  {title}")
    if math.isfinite(limit):
        words = f"impedance limit {limit:g} kΩ" + (f", re-check every {recheck:g} h" if recheck else "")
        out.append(f"\n  {words}", style="grey62")
    return out


class ProfilePicker(ModalScreen[str | None]):
    """Enter takes the highlighted profile; Esc keeps the one in use."""

    BINDINGS = [Binding("escape", "cancel", "Cancel")]

    def __init__(self, choices: list[Choice], current: str) -> None:
        super().__init__()
        self.choices = list(choices)
        self.current = current

    def compose(self) -> ComposeResult:
        with Vertical(id="profile-box"):
            yield Static(Text("Department profile — the limits this recording is judged by", style="bold"),
                         id="profile-title")
            yield OptionList(*[Option(describe(c, self.current), id=c[0]) for c in self.choices],
                             id="profile-list")
            yield Static(Text("Enter: use this profile (the log records it)   Esc: cancel", style="grey62"))

    def on_mount(self) -> None:
        options = self.query_one(OptionList)
        options.focus()
        names = [c[0] for c in self.choices]
        if self.current in names:
            options.highlighted = names.index(self.current)

    def on_option_list_option_selected(self, event: OptionList.OptionSelected) -> None:
        name = event.option.id
        usable = {c[0] for c in self.choices if math.isfinite(c[2])}
        if name not in usable:
            self.notify(f"profile {name} cannot be used (see its line)", severity="error", timeout=6)
            return
        self.dismiss(name)

    def action_cancel(self) -> None:
        self.dismiss(None)
