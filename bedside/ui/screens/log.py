"""Log: who set up, for which (pseudonymous) subject, notes, impedances, sign-off, save.

Every call into the setup log runs in a worker thread; results and errors come back
as :class:`LogResult` and are shown on the status line (a failed save is said
plainly; the log stays in memory and is retried).
"""

from __future__ import annotations

import math
import time
from collections.abc import Callable
from typing import TYPE_CHECKING, Any, cast

from rich.text import Text
from textual import work
from textual.app import ComposeResult
from textual.binding import Binding
from textual.containers import Horizontal, Vertical
from textual.css.query import NoMatches
from textual.message import Message
from textual.screen import Screen
from textual.widgets import Button, DataTable, Footer, Header, Input, Label, Static

from bedside.checks.impedance import over_limit
from bedside.checks.ready import Accepted, not_good_electrodes
from bedside.errors import BedsideError
from bedside.ui.screens.sign_off import SignOffReasons

if TYPE_CHECKING:
    from bedside.ui.app import BedsideApp


class LogResult(Message):
    """The outcome of one call into the setup log (ok, or the error in words)."""

    def __init__(self, action: str, ok: bool, text: str, status: Any = None) -> None:
        super().__init__()
        self.action = action
        self.ok = ok
        self.text = text
        self.status = status


def parse_kohm(text: str) -> float:
    """A typed impedance in kΩ as a number (what the amplifier's meter shows); whether it
    can be a contact (more than 0, at most 1 000 kΩ) is judged by
    :func:`bedside.checks.impedance.check_entry`."""
    cleaned = text.strip().lower().removesuffix("kω").removesuffix("kohm").removesuffix("k").strip()
    try:
        value = float(cleaned.replace(",", "."))
    except ValueError:
        raise ValueError(f"impedance must be a number of kΩ (e.g. 4.5), got {text!r}") from None
    if not math.isfinite(value):
        raise ValueError(f"impedance must be a number of kΩ (e.g. 4.5), got {text!r}")
    return value


def status_words(status: Any, signed: str = "") -> Text:
    """The log's status (bedside.record.session.RecorderStatus) in plain words."""
    if status is None:
        return Text("no setup log is being kept", style="grey62")
    error = getattr(status, "error", None)
    saved = getattr(status, "last_saved", None)
    notice = getattr(status, "notice", None)
    out = Text()
    if error:
        out.append(f"✖ not saved: {error} — kept in memory, retrying", style="bold red")
    elif saved is None:
        out.append("◌ not saved yet", style="yellow")
    else:
        when = saved.strftime("%H:%M:%S") if hasattr(saved, "strftime") else str(saved)
        out.append(f"● saved {when}", style="bold green")
        if getattr(status, "unsaved_changes", False):
            out.append(" (newer changes pending)", style="grey62")
    if getattr(status, "closed", False):
        out.append("  closed", style="grey62")
    if signed:
        out.append(f"  ✔ signed off by {signed}", style="bold")
    if notice:
        out.append(f"  ▲ {notice}", style="yellow")
    return out


def file_words(path: Any, kept: bool = True) -> Text:
    """Where the log is kept, on its own line (the status line is too narrow for a path)."""
    if path is None or not kept:
        return Text("log file  none: no setup log is kept in this session", style="grey62")
    out = Text("log file  ", style="grey62")
    out.append(str(path), style="bold")
    return out


class LogScreen(Screen[None]):
    BINDINGS = [
        Binding("ctrl+s", "save", "Save"),
        Binding("ctrl+o", "sign_off", "Sign off"),
        Binding("escape", "leave_field", "Leave field", show=False),
    ]

    def __init__(self) -> None:
        super().__init__(name="log")
        self.notes: list[tuple[str, str]] = []
        self.impedances: dict[str, float] = {}
        self.signed = ""  # "JM at 20:16:52" once the log accepted the sign-off

    @property
    def bedside(self) -> BedsideApp:
        return cast("BedsideApp", self.app)

    def compose(self) -> ComposeResult:
        cfg = self.bedside.config
        yield Header(show_clock=False)
        with Vertical(id="log-form"):
            with Horizontal(classes="form-row"):
                yield Label("initials", classes="form-label")
                yield Input(cfg.technologist, placeholder="technologist, e.g. AB", compact=True, id="tech", max_length=6)
                yield Label("subject ID", classes="form-label")
                yield Input(cfg.subject_id, placeholder="pseudonymous, no names", compact=True, id="subject")
            with Horizontal(classes="form-row"):
                yield Label("note", classes="form-label")
                yield Input(placeholder="type a note, Enter adds it", compact=True, id="note")
            with Horizontal(classes="form-row"):
                yield Label("impedance", classes="form-label")
                yield Input(placeholder="electrode", compact=True, id="imp-electrode")
                yield Input(placeholder="kΩ from the amplifier", compact=True, id="imp-kohm")
            yield Static("", id="log-message")
        with Horizontal(id="log-lists"):
            yield DataTable(id="impedance-table", cursor_type="row")
            yield DataTable(id="note-table", cursor_type="row")
        with Horizontal(id="log-actions"):
            yield Button("Save  ctrl+s", id="save", compact=True)
            yield Button("Sign off  ctrl+o", id="sign-off", compact=True)
            yield Static(status_words(None) if cfg.log_path is None else Text("◌ opening the log…", style="yellow"),
                         id="save-status")
        yield Static(file_words(cfg.log_path), id="log-file")
        yield Footer(compact=True)  # compact: every key, the views' too, fits 80 columns

    def on_mount(self) -> None:
        imp = self.query_one("#impedance-table", DataTable)
        imp.add_column("electrode", key="name", width=9)
        imp.add_column("kΩ", key="kohm", width=6)
        imp.add_column("at", key="at", width=8)
        notes = self.query_one("#note-table", DataTable)
        notes.add_column("at", key="at", width=8)
        notes.add_column("note", key="text", width=60)
        self.query_one("#tech", Input).focus()
        self.set_interval(2.0, self.refresh_status)
        self.refresh_status()

    # --- talking to the log (worker threads) ----------------------------------
    def _call(self, action: str, call: Callable[[Any], object]) -> None:
        """Queue one call into the log (ordered, off the UI thread)."""
        gate = self.bedside.recorder
        if gate is None:
            self.post_message(LogResult(action, False, self.bedside.log_unavailable_reason()))
            return

        def done(ok: bool, text: str, status: Any) -> None:
            self.post_message(LogResult(action, ok, text, status))

        gate.submit(call, done)

    @work(thread=True, exclusive=True, group="log-status", exit_on_error=False)
    def refresh_status(self) -> None:
        gate = self.bedside.recorder
        if gate is None:
            return
        try:
            status = gate.status()
        except BedsideError as exc:
            self.post_message(LogResult("status", False, str(exc)))
            return
        self.post_message(LogResult("status", True, "", status))

    def on_log_result(self, message: LogResult) -> None:
        if not self.is_mounted:
            return
        try:
            self._show_result(message)
        except NoMatches:  # the app is closing; the result is in the log file already
            return

    def _show_result(self, message: LogResult) -> None:
        if message.action == "signed off" and message.ok:
            initials = self.query_one("#tech", Input).value.strip().upper()
            self.signed = f"{initials} at {time.strftime('%H:%M:%S')}"
        if message.status is not None:
            self.query_one("#save-status", Static).update(status_words(message.status, self.signed))
            path = getattr(message.status, "path", None)
            if path is not None:  # the log follows a new subject ID: show its name now
                self.query_one("#log-file", Static).update(file_words(path))
        if message.ok:
            if message.action not in ("status",):
                self._say(f"● {message.action}", "green")
        else:
            self._say(f"✖ {message.action}: {message.text}", "bold red")

    def _say(self, text: str, style: str) -> None:
        self.query_one("#log-message", Static).update(Text(text, style=style))

    # --- input ------------------------------------------------------------------
    def on_input_submitted(self, event: Input.Submitted) -> None:
        field = event.input.id
        value = event.value.strip()
        if field == "tech":
            self._call("initials set", lambda r: r.set_technologist(value))
        elif field == "subject":
            self._set_subject(value)
        elif field == "note":
            if not value:
                self._say("a note needs some text", "yellow")
                return
            self.add_note(value)
            event.input.value = ""
        elif field == "imp-electrode":
            self.query_one("#imp-kohm", Input).focus()
        elif field == "imp-kohm":
            self._impedance()

    def _set_subject(self, subject: str) -> None:
        # A log bedside named after the subject is renamed with it (the new path is shown).
        rename = self.bedside.config.rename_log_with_subject
        self._call("subject ID set", lambda r: r.set_subject(subject, rename))

    def add_note(self, text: str) -> None:
        at = time.strftime("%H:%M:%S")
        self.notes.append((at, text))
        self.query_one("#note-table", DataTable).add_row(at, text)
        self._call("note added", lambda r: r.add_note(text))

    def _impedance(self) -> None:
        e_in, k_in = self.query_one("#imp-electrode", Input), self.query_one("#imp-kohm", Input)
        electrode = e_in.value.strip()
        known = self.bedside.known_electrodes()
        if not electrode:
            self._say("type the electrode's name first (e.g. Fp1)", "yellow")
            e_in.focus()
            return
        match = {n.lower(): n for n in known}.get(electrode.lower())
        if known and match is None:
            where = "in the stream being watched" if self.bedside.connection is not None else "in the plan"
            self._say(f"✖ {electrode!r} is not {where}; accepted: {', '.join(sorted(known)[:30])}", "bold red")
            e_in.focus()
            return
        try:
            kohm = parse_kohm(k_in.value)
            # Refused with the reason: 0 or less, over 1 000 kΩ (bedside.checks.impedance).
            electrode, kohm = self.bedside.impedance_typed(match or electrode, kohm)
        except (ValueError, BedsideError) as exc:
            self._say(f"✖ {exc}", "bold red")
            k_in.focus()
            return
        verdict = self.bedside.impedance_verdicts.get(electrode)
        table = self.query_one("#impedance-table", DataTable)
        at = time.strftime("%H:%M:%S")
        if electrode in self.impedances:
            table.update_cell(electrode, "kohm", f"{kohm:g}")
            table.update_cell(electrode, "at", at)
        else:
            table.add_row(electrode, f"{kohm:g}", at, key=electrode)
        self.impedances[electrode] = kohm
        self._call(f"impedance {electrode} {kohm:g} kΩ", lambda r: r.set_impedance(electrode, kohm))
        if verdict is not None and verdict.level != "good":  # said, beside the log's "●"
            self.notify(f"{electrode}: {verdict.reason}", severity="warning", timeout=8)
        e_in.value, k_in.value = "", ""
        e_in.focus()

    def _push_identity(self) -> None:
        tech = self.query_one("#tech", Input).value.strip()
        subject = self.query_one("#subject", Input).value.strip()
        if tech:
            self._call("initials set", lambda r: r.set_technologist(tech))
        if subject:
            self._set_subject(subject)

    def on_button_pressed(self, event: Button.Pressed) -> None:
        if event.button.id == "save":
            self.action_save()
        elif event.button.id == "sign-off":
            self.action_sign_off()

    def action_save(self) -> None:
        self._push_identity()
        self._call("saved", lambda r: r.save_now())

    def action_sign_off(self) -> None:
        if not self.query_one("#tech", Input).value.strip():
            self._say("✖ sign-off needs the technologist's initials", "bold red")
            self.query_one("#tech", Input).focus()
            return
        frame = self.bedside.latest_frame
        held = over_limit(self.bedside.impedance_verdicts)  # impedance over the profile's limit
        not_good = not_good_electrodes(frame, held) if frame is not None else ()
        if not_good:  # refused unless each one gets a typed reason
            why = {c.name: (c.reasons[0] if c.reasons else c.level_key) for c in frame.channels}  # type: ignore[union-attr]
            why.update({n: r for n, r in held.items() if why.get(n) in (None, "good")})
            self.app.push_screen(SignOffReasons([(n, why.get(n, "not good")) for n in not_good]),
                                 self._signed_with_reasons)
            return
        self._sign_off(())

    def _signed_with_reasons(self, exceptions: tuple[Accepted, ...] | None) -> None:
        if exceptions is None:
            self._say("✖ not signed off: electrodes are not good and no reason was given for each", "bold red")
            return
        self._sign_off(exceptions)

    def _sign_off(self, exceptions: tuple[Accepted, ...]) -> None:
        self._push_identity()
        initials = self.query_one("#tech", Input).value.strip()
        self._call("signed off", lambda r: r.sign_off(initials, exceptions))
        self._call("saved", lambda r: r.save_now())

    def action_leave_field(self) -> None:
        self.query_one("#save", Button).focus()
