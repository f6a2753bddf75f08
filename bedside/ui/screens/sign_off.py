"""Sign-off while electrodes are not good: a typed reason for each, or no sign-off.

The Log view opens this when the newest frame has scalp electrodes that are not good
(check, bad, no data, or named by a finding). Each gets its own field; Enter on the
last field (or ctrl+o) signs off only when every field has a reason. Esc signs nothing.
"""

from __future__ import annotations

from rich.text import Text
from textual.app import ComposeResult
from textual.binding import Binding
from textual.containers import Horizontal, Vertical, VerticalScroll
from textual.screen import ModalScreen
from textual.widgets import Input, Label, Static

from bedside.checks.ready import Accepted


class SignOffReasons(ModalScreen[tuple[Accepted, ...] | None]):
    """``electrodes``: (name, what is wrong now) in table order."""

    BINDINGS = [Binding("escape", "cancel", "Cancel"), Binding("ctrl+o", "confirm", "Sign off")]

    def __init__(self, electrodes: list[tuple[str, str]]) -> None:
        super().__init__()
        self.electrodes = electrodes

    def compose(self) -> ComposeResult:
        names = ", ".join(n for n, _ in self.electrodes)
        with Vertical(id="sign-off-box"):
            yield Static(Text(f"Not good now: {names}. Sign off only with a reason for each "
                              "(it goes into the setup log), or Esc and fix them first.", style="bold"),
                         id="sign-off-title")
            with VerticalScroll(id="sign-off-fields"):
                for i, (name, why) in enumerate(self.electrodes):
                    with Horizontal(classes="form-row"):
                        yield Label(name, classes="form-label")
                        yield Input(placeholder=f"reason ({why})"[:70], compact=True, id=f"reason-{i}")
            yield Static("", id="sign-off-message")
            yield Static(Text("Enter: next field / sign off   ctrl+o: sign off   Esc: cancel", style="grey62"))

    def on_mount(self) -> None:
        self.query_one("#reason-0", Input).focus()

    def on_input_submitted(self, event: Input.Submitted) -> None:
        index = int((event.input.id or "reason-0").split("-")[1])
        if index + 1 < len(self.electrodes):
            self.query_one(f"#reason-{index + 1}", Input).focus()
        else:
            self.action_confirm()

    def action_confirm(self) -> None:
        reasons = [" ".join(self.query_one(f"#reason-{i}", Input).value.split()) for i in range(len(self.electrodes))]
        missing = [n for (n, _), r in zip(self.electrodes, reasons, strict=True) if not r]
        if missing:
            self.query_one("#sign-off-message", Static).update(
                Text(f"✖ a reason is still missing for {', '.join(missing)}", style="bold red"))
            first = next(i for i, r in enumerate(reasons) if not r)
            self.query_one(f"#reason-{first}", Input).focus()
            return
        self.dismiss(tuple(Accepted(n, r) for (n, _), r in zip(self.electrodes, reasons, strict=True)))

    def action_cancel(self) -> None:
        self.dismiss(None)
