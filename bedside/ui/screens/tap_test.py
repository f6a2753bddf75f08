"""The tap test in the app (``k`` on Watch): touch each electrode when it is named.

The walk is the core's (``bedside.checks.taptest.TapWalk``, made by
``Services.make_tap_walk``); a worker thread feeds it what the display copy of the
stream (``TeeSource.buffer``) received since the last look, every ``POLL_S``, and posts
its steps here. The few seconds already held when the screen opens only let the
detector settle: the first prompt is "now", and no touch before it counts. The screen
only shows what the walk says; at the end the results go into the setup log
(``record_tap_test``). Esc goes back to Watch (a walk not finished is not recorded);
``r`` walks again.
"""

from __future__ import annotations

import threading
import time
from typing import TYPE_CHECKING, Any, cast

from rich.text import Text
from textual import work
from textual.app import ComposeResult
from textual.binding import Binding
from textual.message import Message
from textual.screen import Screen
from textual.widgets import DataTable, Footer, Header, Static

from bedside.cautions import TAP_CAUTION
from bedside.errors import BedsideError

if TYPE_CHECKING:
    from bedside.ui.app import BedsideApp

#: How often the worker reads the new samples (s of wall clock).
POLL_S = 0.1
#: Seconds already held that the walk takes to settle before its first prompt.
SETTLE_S = 2.0

SYMBOL = {"confirmed": ("●", "green"), "elsewhere": ("✖", "red"), "shared": ("▲", "yellow"),
          "everywhere": ("▲", "yellow"), "not_found": ("?", "grey50")}


class TapSteps(Message):
    """What the walk said since the last look: its steps, the stream time now (s), and
    at the end the problems (``finished``) or why it stopped (``stopped``)."""

    def __init__(self, run: int, steps: list[Any], now_s: float, finished: bool = False,
                 problems: tuple[Any, ...] = (), stopped: str = "", timeout_s: float = 0.0) -> None:
        super().__init__()
        self.run, self.steps, self.now_s, self.timeout_s = run, steps, now_s, timeout_s
        self.finished, self.problems, self.stopped = finished, problems, stopped


class TapTestScreen(Screen[None]):
    DEFAULT_CSS = """
    TapTestScreen #tap-caution { color: $text-muted; padding: 0 1; }
    TapTestScreen #tap-prompt { height: 3; content-align: center middle; text-style: bold; }
    TapTestScreen #tap-results { height: 1fr; }
    TapTestScreen #tap-summary { height: auto; padding: 0 1; }
    """

    BINDINGS = [
        Binding("escape", "leave", "Back to Watch"),
        Binding("r", "again", "Walk again"),
    ]

    def __init__(self) -> None:
        super().__init__(name="tap-test")
        self._run = 0
        self._stop = threading.Event()
        self._prompt: Any = None
        self._results: list[Any] = []
        self.finished = False
        self.problems: tuple[Any, ...] = ()
        self.timeout_s = 0.0

    @property
    def bedside(self) -> BedsideApp:
        return cast("BedsideApp", self.app)

    def compose(self) -> ComposeResult:
        yield Header(show_clock=False)
        yield Static(TAP_CAUTION, id="tap-caution")
        yield Static("", id="tap-prompt")
        yield DataTable(id="tap-results", cursor_type="row", zebra_stripes=False)
        yield Static("", id="tap-summary")
        yield Footer()

    def on_mount(self) -> None:
        table = self.query_one(DataTable)
        table.add_columns("electrode", "result", "shows on", "size", "× others", "said")
        self._begin()

    def on_unmount(self) -> None:
        self._stop.set()

    def action_leave(self) -> None:
        self._stop.set()
        self.app.pop_screen()

    def action_again(self) -> None:
        self._begin()

    def _begin(self) -> None:
        self._stop.set()
        self._stop = threading.Event()
        self._run += 1
        self._results, self._prompt, self.finished, self.problems = [], None, False, ()
        self.query_one(DataTable).clear()
        self.query_one("#tap-summary", Static).update("")
        conn = self.bedside.connection
        if conn is None:
            self._say_prompt(Text("no stream yet — connect on Watch (F3) first", style="bold yellow"))
            return
        self._say_prompt(Text("getting ready…"))
        self._walk(conn, self._run, self._stop)

    @work(thread=True, exclusive=True, group="tap-walk", exit_on_error=False)
    def _walk(self, conn: Any, run: int, stop: threading.Event) -> None:
        app = self.bedside
        buffer = conn.tee.buffer
        names = [c.name for c in conn.channels]
        scalp = [c.is_scalp for c in conn.channels]
        try:
            walk = app.services.make_tap_walk(names, scalp, buffer.rate_hz)
        except BedsideError as exc:
            self.post_message(TapSteps(run, [], 0.0, stopped=str(exc)))
            return
        held, total = buffer.since(0)
        held = held[-int(SETTLE_S * buffer.rate_hz):]
        steps: list[Any] = [walk.start(held.shape[0] / buffer.rate_hz)]
        steps += walk.feed(held)
        self.post_message(TapSteps(run, steps, walk.detector.now_s, timeout_s=walk.timeout_s))
        last_data = time.monotonic()
        while not walk.done and not stop.wait(POLL_S):
            new, total = buffer.since(total)
            if new.shape[0]:
                last_data = time.monotonic()
                self.post_message(TapSteps(run, walk.feed(new), walk.detector.now_s))
            elif time.monotonic() - last_data > max(5.0, walk.timeout_s) or app.connection is not conn:
                why = "the stream stopped" if app.connection is conn else "the stream was switched"
                walk.stop(why)
                self.post_message(TapSteps(run, [], walk.detector.now_s, stopped=why))
                return
        if walk.done:
            problems = app.services.summarise_taps(walk.results)
            self.post_message(TapSteps(run, [], walk.detector.now_s, finished=True, problems=problems))

    def on_tap_steps(self, message: TapSteps) -> None:
        if message.run != self._run:
            return  # an earlier walk's last words
        if message.timeout_s:
            self.timeout_s = message.timeout_s
        for step in message.steps:
            if hasattr(step, "result"):
                self._add_result(step.result)
            else:
                self._prompt = step
                if self.bedside.bell_on:
                    self.bedside.bell()
        if message.stopped:
            self._say_prompt(Text(f"stopped: {message.stopped} — r to walk again", style="bold yellow"))
        elif message.finished:
            self._finish(message.problems)
        elif self._prompt is not None:
            p = self._prompt
            left = max(0.0, p.until_s - message.now_s)
            words = Text()
            words.append(f"[{p.index + 1}/{p.total}]  ")
            words.append(f"touch {p.electrode} now", style="bold reverse")
            words.append(f"   {left:.0f} s left")
            self._say_prompt(words)

    def _say_prompt(self, text: Text) -> None:
        self.query_one("#tap-prompt", Static).update(text)

    def _add_result(self, r: Any) -> None:
        self._results.append(r)
        sym, colour = SYMBOL.get(r.outcome, ("?", "grey50"))
        shows = ", ".join(r.seen_on) if r.seen_on else ("every channel" if r.outcome == "everywhere" else "-")
        self.query_one(DataTable).add_row(
            r.electrode, Text(f"{sym} {r.outcome.replace('_', ' ')}", style=colour), shows,
            "-" if r.peak_uv is None else f"{r.peak_uv:.0f} µV",
            "-" if r.ratio is None else f"{r.ratio:.0f}", r.reason,
        )

    def _finish(self, problems: tuple[Any, ...]) -> None:
        self.finished, self.problems = True, problems
        confirmed = sum(r.outcome == "confirmed" for r in self._results)
        total = len(self._results)
        if not problems and confirmed == total:
            self._say_prompt(Text(f"all {total} electrodes confirmed — every lead in its own input",
                                  style="bold green"))
            summary = Text("r walks again; Esc goes back to Watch")
        else:
            self._say_prompt(Text(f"{confirmed} of {total} confirmed — see below", style="bold red"))
            summary = Text()
            for p in problems:
                summary.append("• " + p.words + "\n")
            summary.append("r walks again; Esc goes back to Watch")
        self.query_one("#tap-summary", Static).update(summary)
        gate = self.bedside.recorder
        if gate is not None:
            results, timeout_s = tuple(self._results), self.timeout_s
            gate.submit(lambda r: r.record_tap_test(results, problems, "app", timeout_s), self._logged)

    def _logged(self, ok: bool, text: str, status: Any) -> None:
        """Called on the log's thread: a failure is said on screen."""
        if not ok:
            from bedside.ui.feed import FeedProblem

            self.bedside.post_message(FeedProblem(f"setup log (tap test): {text}"))
