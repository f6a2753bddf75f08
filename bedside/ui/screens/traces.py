"""The page of traces: every scalp channel stacked, as a technologist reads a recording.

A fixed timebase (``AppConfig.page_s``, 10 s across the screen) and a fixed
sensitivity the technologist chooses (µV per text row; ``+`` bigger, ``-`` smaller),
never auto-scaled, so a quiet and a noisy electrode look as different as they are.
``m`` cycles the montage: as recorded, average reference, and the standard
longitudinal and transverse bipolar chains (bedside.montage, through
``Services.plan_montage`` / ``derive_montage``; the UI derives nothing itself). Each
row shows its electrodes' verdict symbols beside its name; the selected electrode's
rows are highlighted and its full verdict is on the top line. ``↑``/``↓`` move the
selection and the page scrolls with it; PgUp/PgDn turn a page (256 channels are
paged); Esc goes back to Watch with the selection kept.
"""

from __future__ import annotations

import dataclasses
from dataclasses import dataclass
from typing import Any, cast

from rich.text import Text
from textual import work
from textual.app import ComposeResult
from textual.binding import Binding
from textual.css.query import NoMatches
from textual.message import Message
from textual.screen import Screen
from textual.widgets import Footer, Header, Static

from bedside.checks.types import NO_DATA_COLOUR, NO_DATA_SYMBOL, NO_DATA_WORD, Level
from bedside.ui.host import HostedScreen
from bedside.ui.plots import lane_lines

#: The montages the page offers, in the order ``m`` cycles them (bedside.montage.MONTAGES).
MONTAGES = ("recorded", "average", "longitudinal", "transverse")
MONTAGE_WORDS = {
    "recorded": "as recorded",
    "average": "average reference",
    "longitudinal": "longitudinal bipolar",
    "transverse": "transverse bipolar",
}
#: Sensitivities offered, µV per text row (ours: the usual 1-2-3-5-7 steps of a paper
#: sensitivity knob, common practice, scaled to a text row).
SENSITIVITIES_UV = (2.0, 3.0, 5.0, 7.0, 10.0, 15.0, 20.0, 30.0, 50.0, 70.0, 100.0, 150.0,
                    200.0, 300.0, 500.0, 1000.0)
#: Label column: two verdict symbols, a space, the derivation's name (cut to fit), a space.
LABEL_W = 12
#: Text rows per channel: as many as fit, at most this many.
MAX_LANE_ROWS = 3


@dataclass(frozen=True)
class PageRequest:
    montage: str
    first: int
    count: int
    lane_rows: int
    width: int
    uv_per_row: float
    page_s: float
    generation: int


class PageReady(Message):
    """A drawn page (replaces an older one): the derivations shown and their lanes."""

    def __init__(self, request: PageRequest, plan: Any, lanes: list[list[str]], clipped: list[bool],
                 seconds_held: float) -> None:
        super().__init__()
        self.request = request
        self.plan = plan
        self.lanes = lanes
        self.clipped = clipped
        self.seconds_held = seconds_held

    def can_replace(self, message: Message) -> bool:
        return isinstance(message, PageReady)


class TracesScreen(HostedScreen, Screen[str | None]):
    BINDINGS = [
        Binding("escape", "back", "Watch"),
        Binding("m", "montage", "Montage"),
        Binding("plus,equals_sign", "sensitivity(-1)", "Bigger"),
        Binding("minus", "sensitivity(1)", "Smaller", show=False),
        Binding("up", "move(-1)", "Up", show=False),
        Binding("down", "move(1)", "Down", show=False),
        Binding("pageup", "move_page(-1)", "Page up", show=False),
        Binding("pagedown", "move_page(1)", "Page down", show=False),
    ]

    def __init__(self, selected: str | None = None) -> None:
        super().__init__(name="traces")
        self.montage = "longitudinal"
        self.selected = selected
        self.cursor = 0  # index of the selected derivation
        self.first = 0  # first derivation shown
        self.plan: Any = None
        self._plan_key: tuple[Any, ...] | None = None
        self._page: PageReady | None = None
        self._generation = 0
        self.uv_per_row = 50.0

    def compose(self) -> ComposeResult:
        yield Header(show_clock=False)
        yield Static(id="traces-head")
        yield Static(id="traces-body")
        yield Static(id="traces-axis")
        yield Footer(compact=True)

    def on_mount(self) -> None:
        self.uv_per_row = self.bedside.config.page_uv_per_row
        self._replan()
        if self.plan is not None and not self.plan.derivations:
            # No 10-20 names for the chains (e.g. a numbered cap): start as recorded.
            self.montage = "recorded"
            self._replan()
        self._select_electrode(self.selected)
        self.set_interval(0.5, self.request_page)
        self.request_page()

    # --- the montage's rows -----------------------------------------------------------
    def _channels(self) -> tuple[list[str], list[bool]]:
        conn = self.bedside.connection
        if conn is None:
            return [], []
        return [ch.name for ch in conn.channels], [ch.is_scalp for ch in conn.channels]

    def _replan(self) -> None:
        names, scalp = self._channels()
        key = (self.montage, tuple(names), tuple(scalp))
        if key == self._plan_key:
            return
        self._plan_key = key
        self.plan = self.bedside.services.plan_montage(names, scalp, self.montage) if names else None
        self.cursor = min(self.cursor, max(0, self._n() - 1))

    def _n(self) -> int:
        return len(self.plan.derivations) if self.plan is not None else 0

    def _select_electrode(self, name: str | None) -> None:
        """The cursor to the first row that reads ``name`` (the Watch selection)."""
        if self.plan is None or name is None:
            return
        for i, d in enumerate(self.plan.derivations):
            if name in d.electrodes:
                self.cursor = i
                return

    def _layout(self) -> tuple[int, int, int]:
        """(rows per lane, lanes shown, trace width) for the body's size now."""
        try:
            body = self.query_one("#traces-body", Static)
        except NoMatches:
            return 1, 0, 10
        height, width = max(1, body.size.height), max(LABEL_W + 10, body.size.width)
        n = max(1, self._n())
        lane_rows = max(1, min(MAX_LANE_ROWS, height // n))
        shown = max(1, height // lane_rows)
        return lane_rows, shown, width - LABEL_W

    def _keep_cursor_in_view(self, shown: int) -> None:
        if self.cursor < self.first:
            self.first = self.cursor
        elif self.cursor >= self.first + shown:
            self.first = self.cursor - shown + 1
        self.first = max(0, min(self.first, max(0, self._n() - shown)))

    def request_page(self) -> None:
        conn = self.bedside.connection
        self._replan()
        if conn is None or self.plan is None or not self.is_mounted:
            self._show_empty("no stream: the page shows a connected stream's channels")
            return
        lane_rows, shown, width = self._layout()
        self._keep_cursor_in_view(shown)
        self._generation += 1
        req = PageRequest(self.montage, self.first, shown, lane_rows, width, self.uv_per_row,
                          self.bedside.config.page_s, self._generation)
        self._draw(conn.tee.buffer, self.plan, tuple(self._channels()[1]), req)

    @work(thread=True, exclusive=True, group="page", exit_on_error=False)
    def _draw(self, buffer: Any, plan: Any, scalp: tuple[bool, ...], req: PageRequest) -> None:
        """Derive (in the core) and draw the lanes shown, in a worker thread."""
        page_samples = max(2, int(round(req.page_s * buffer.rate_hz)))
        window = buffer.window(page_samples)
        part = dataclasses.replace(plan, derivations=plan.derivations[req.first:req.first + req.count])
        lanes: list[list[str]] = []
        clipped: list[bool] = []
        rows: Any = self.bedside.services.derive_montage(window, part, scalp) if part.derivations else None
        for j in range(len(part.derivations)):
            lines, clip = lane_lines(rows[:, j], page_samples, req.width, req.lane_rows, req.uv_per_row)
            lanes.append(lines)
            clipped.append(clip)
        held = window.shape[0] / buffer.rate_hz if buffer.rate_hz > 0 else 0.0
        self.post_message(PageReady(req, part, lanes, clipped, held))

    def on_page_ready(self, message: PageReady) -> None:
        if message.request.generation != self._generation or message.request.montage != self.montage:
            return  # an older request: a newer one is on its way
        self._page = message
        self._render_page()

    # --- drawing ------------------------------------------------------------------------
    def _levels(self) -> tuple[dict[str, Level | None], dict[str, tuple[str, ...]], bool]:
        app = self.bedside
        frame = app.latest_frame
        live = app.is_live()
        if frame is None:
            return {}, {}, False
        return ({ch.name: ch.level for ch in frame.channels},
                {ch.name: tuple(ch.reasons) for ch in frame.channels}, live)

    @staticmethod
    def _symbol(level: Level | None, live: bool) -> tuple[str, str]:
        if level is None or not live:
            return NO_DATA_SYMBOL, NO_DATA_COLOUR
        return level.symbol, f"bold {level.colour}"

    def _head_text(self, levels: dict[str, Level | None], reasons: dict[str, tuple[str, ...]],
                   live: bool) -> Text:
        out = Text(no_wrap=True, overflow="ellipsis")
        n = self._n()
        page = self._page
        shown = len(page.lanes) if page is not None else 0
        out.append(f"{MONTAGE_WORDS[self.montage]}", style="bold")
        out.append(f" · {self.uv_per_row:g} µV/row · {self.bedside.config.page_s:g} s page", style="bold")
        if n:
            out.append(f" · rows {self.first + 1}–{self.first + max(shown, 1)} of {n}", style="grey62")
        if page is not None and any(page.clipped):
            out.append(f" · {sum(page.clipped)} clipped (-: smaller)", style="grey62")
        out.append("\n")
        name = self.selected
        if name is None:
            out.append("no channel selected (↑/↓)", style="grey62")
            return out
        sym, style = self._symbol(levels.get(name), live)
        word = NO_DATA_WORD if levels.get(name) is None or not live else cast(Level, levels[name]).word
        out.append(f"▶ {name} {sym} {word}", style=style)
        said = reasons.get(name, ())
        if live and said and levels.get(name) is not Level.GOOD:
            out.append(": " + "; ".join(said))
        if self.plan is not None and self.plan.missing:
            out.append(f"   not in this montage: {', '.join(self.plan.missing)}", style="grey62")
        return out

    def _render_page(self) -> None:
        try:
            head = self.query_one("#traces-head", Static)
            body = self.query_one("#traces-body", Static)
            axis = self.query_one("#traces-axis", Static)
        except NoMatches:
            return
        levels, reasons, live = self._levels()
        head.update(self._head_text(levels, reasons, live))
        page = self._page
        if page is None:
            body.update(Text("drawing…", style="grey62"))
            return
        out = Text(no_wrap=True, overflow="crop")
        for j, (d, lines) in enumerate(zip(page.plan.derivations, page.lanes, strict=True)):
            index = page.request.first + j
            chosen = index == self.cursor
            mine = self.selected in d.electrodes
            for r, line in enumerate(lines):
                if j or r:
                    out.append("\n")
                if r == 0:
                    # The verdict of each electrode the row reads (one or two).
                    for e in d.electrodes[:2]:
                        sym, style = self._symbol(levels.get(e), live)
                        out.append(sym, style=style)
                    out.append(" " * (2 - len(d.electrodes[:2])))
                    label = f" {d.label}"[: LABEL_W - 3].ljust(LABEL_W - 3)
                    out.append(label, style="bold reverse" if chosen else "bold" if mine else "")
                    out.append(" ")
                else:
                    out.append(" " * LABEL_W)
                trace_style = "bold #ffffff" if mine else ("grey70" if live else NO_DATA_COLOUR)
                out.append(line, style=trace_style)
        body.update(out)
        axis.update(self._axis(page.request.width, page.request.page_s, page.seconds_held))

    @staticmethod
    def _axis(width: int, page_s: float, held_s: float) -> Text:
        """Seconds under the traces: the page's left edge to now, a tick each second."""
        out = Text(no_wrap=True, overflow="crop")
        out.append(" " * LABEL_W)
        line = ["─"] * width
        labels: list[tuple[int, str]] = []
        for k in range(int(page_s) + 1):
            col = min(width - 1, int(round((page_s - k) / page_s * (width - 1))))
            line[col] = "┴"
            if k % 2 == 0 or page_s <= 5:
                labels.append((col, f"-{k:g}s" if k else "now"))
        for col, label in labels:  # "-10s" … "now", where they fit between ticks
            start = col - len(label) if label == "now" else col + 1
            if start >= 0 and start + len(label) <= width and all(c == "─" for c in line[start:start + len(label)]):
                line[start:start + len(label)] = list(label)
        out.append("".join(line), style="grey42")
        tail = f"  held {held_s:.0f} of {page_s:g} s" if held_s + 0.5 < page_s else ""
        out.append(tail, style="grey62")
        return out

    def _show_empty(self, why: str) -> None:
        try:
            self.query_one("#traces-body", Static).update(Text(why, style="grey62"))
            self.query_one("#traces-head", Static).update(Text(MONTAGE_WORDS[self.montage], style="bold"))
        except NoMatches:
            return

    # --- keys ---------------------------------------------------------------------------
    def action_back(self) -> None:
        """Back to Watch; it selects the electrode chosen here."""
        self.dismiss(self.selected)

    def action_montage(self) -> None:
        i = MONTAGES.index(self.montage)
        self.montage = MONTAGES[(i + 1) % len(MONTAGES)]
        self._replan()
        self.cursor = 0
        self._select_electrode(self.selected)
        self._page = None
        self.request_page()

    def action_sensitivity(self, step: int) -> None:
        i = min(range(len(SENSITIVITIES_UV)), key=lambda k: abs(SENSITIVITIES_UV[k] - self.uv_per_row))
        self.uv_per_row = SENSITIVITIES_UV[max(0, min(len(SENSITIVITIES_UV) - 1, i + step))]
        self.request_page()

    def action_move(self, step: int) -> None:
        n = self._n()
        if not n:
            return
        self.cursor = max(0, min(n - 1, self.cursor + step))
        self.selected = self.plan.derivations[self.cursor].electrodes[0]
        self.request_page()
        self._render_page()

    def action_move_page(self, step: int) -> None:
        """Turn a page: the rows shown and the selection move by a page's rows."""
        _rows, shown, _w = self._layout()
        self.first = max(0, min(self.first + step * shown, max(0, self._n() - shown)))
        self.action_move(step * shown)

    def on_resize(self) -> None:
        self.request_page()
