"""The selected channel: a short trace and its spectrum with mains marked.

Drawing is display only and runs in a worker thread (:meth:`TraceView.request`);
the finished picture comes back as a :class:`TraceReady` message.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from rich.text import Text
from textual import work
from textual.app import ComposeResult
from textual.containers import Horizontal
from textual.css.query import NoMatches
from textual.message import Message
from textual.widgets import Static

from bedside.stream.ring import RingBuffer
from bedside.ui.plots import (
    DERIVATION_LABEL,
    Derivation,
    SpectrumPicture,
    amplitude_spectrum_db,
    derive,
    spectrum_lines,
    trace_lines,
)


@dataclass(frozen=True)
class TraceRequest:
    """What to draw: channel ``index`` of the buffer in ``mode`` (partner for bipolar)."""

    name: str
    index: int
    mode: Derivation
    partner_name: str | None
    partner: int | None
    scalp_mask: tuple[bool, ...]
    trace_s: float
    mains_hz: tuple[float, ...]
    width: int
    height: int


class TraceReady(Message):
    """A finished picture for the selected channel (replaces an older one)."""

    def __init__(self, request: TraceRequest, trace: list[str], half_uv: float,
                 spectrum: SpectrumPicture) -> None:
        super().__init__()
        self.request = request
        self.trace = trace
        self.half_uv = half_uv
        self.spectrum = spectrum

    def can_replace(self, message: Message) -> bool:
        return isinstance(message, TraceReady)


def draw(buffer_window: np.ndarray, rate_hz: float, req: TraceRequest) -> TraceReady:
    """Make the picture (pure; called in the worker). window: (n_samples, n_channels) µV."""
    half_w = max(8, req.width // 2 - 2)
    rows = max(1, req.height - 1)
    if buffer_window.shape[0] < 8 or req.index >= buffer_window.shape[1]:
        blank = [" " * half_w] * rows
        return TraceReady(req, blank, 0.0, SpectrumPicture(blank, 0.0, {}, 0.0))
    x = derive(buffer_window, req.index, req.mode, np.array(req.scalp_mask, dtype=bool), req.partner)
    n_trace = int(round(req.trace_s * rate_hz))
    trace, half = trace_lines(x[-n_trace:], half_w, rows)
    freqs, level_db = amplitude_spectrum_db(x, rate_hz)
    top = max(req.mains_hz) if req.mains_hz else 50.0
    max_hz = float(min(rate_hz / 2.0, 2 * top + 10))
    marks = tuple(h * k for h in req.mains_hz for k in (1, 2))
    pic = spectrum_lines(freqs, level_db, half_w, rows, max_hz, marks)
    return TraceReady(req, trace, half, pic)


class TraceView(Horizontal):
    """Two panes side by side: trace (left) and spectrum (right)."""

    def compose(self) -> ComposeResult:
        yield Static(id="trace-plot")
        yield Static(id="spectrum-plot")

    def _panes(self) -> tuple[Static, Static] | None:
        """The two panes, or None while they are not mounted (e.g. the app is closing)."""
        try:
            return self.query_one("#trace-plot", Static), self.query_one("#spectrum-plot", Static)
        except NoMatches:
            return None

    def clear(self, why: str) -> None:
        panes = self._panes()
        if panes is not None:
            panes[0].update(Text(why, style="grey50"))
            panes[1].update("")

    @work(thread=True, exclusive=True, group="trace", exit_on_error=False)
    def request(self, buffer: RingBuffer, req: TraceRequest) -> None:
        """Draw in a worker thread and post the result back."""
        # The trace's seconds and at least 4 s for the spectrum, not the page's 10 s.
        n = int(round(max(req.trace_s, 4.0) * buffer.rate_hz))
        self.post_message(draw(buffer.window(n), buffer.rate_hz, req))

    def on_trace_ready(self, message: TraceReady) -> None:
        panes = self._panes()
        if panes is None:
            return
        trace_pane, spectrum_pane = panes
        req = message.request
        title = Text()
        if req.mode == "bipolar" and req.partner_name:
            title.append(f"{req.name}−{req.partner_name} ", style="bold")
            mode = "longitudinal bipolar"
        else:
            title.append(f"{req.name} ", style="bold")
            mode = DERIVATION_LABEL[req.mode]
            if req.mode == "bipolar":
                mode = "bipolar: not on a chain, as recorded"
        title.append(f"{mode}, last {req.trace_s:g} s, ±{message.half_uv:.0f} µV", style="grey62")
        body = Text(no_wrap=True, overflow="crop")
        body.append_text(title)
        for line in message.trace:
            body.append("\n" + line, style="cyan")
        trace_pane.update(body)

        pic = message.spectrum
        spec = Text(no_wrap=True, overflow="crop")
        head = f"spectrum 0–{pic.max_hz:.0f} Hz"
        marks = sorted(set(pic.mark_columns))
        spec.append(head, style="grey62")
        if marks:
            spec.append("  ┆ mains " + ", ".join(f"{m:g}" for m in marks) + " Hz", style="magenta")
        mark_cols = set(pic.mark_columns.values())
        for row in pic.rows:
            spec.append("\n")
            for c, ch in enumerate(row):
                if c in mark_cols:
                    spec.append(ch if ch != " " else "┆", style="bold magenta")
                else:
                    spec.append(ch, style="blue")
        spectrum_pane.update(spec)
