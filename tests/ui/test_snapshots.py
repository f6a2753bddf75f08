"""Screen snapshots of the main views with fixed data (no live stream, no clock).

pytest-textual-snapshot compares each screen with the SVG accepted before; after an
intended change, look at the new screens and accept them with
``pytest tests/ui/test_snapshots.py --snapshot-update``.
"""

from __future__ import annotations

from pathlib import Path
from typing import Any

import numpy as np
import pytest
import standins as si

from bedside.stream.types import Chunk
from bedside.ui.app import make_app
from bedside.ui.config import AppConfig


class OneBlockSource(si.FixedSource):
    """Gives one fixed 4 s block (10 Hz alpha-like sine, 50 Hz on T7), then nothing."""

    def __init__(self) -> None:
        super().__init__()
        self._sent = False

    def pull(self, timeout_s: float = 0.0) -> Chunk | None:
        if self._sent:
            return None
        self._sent = True
        t = np.arange(1000) / 250.0
        x = np.tile(20 * np.sin(2 * np.pi * 10 * t)[:, None], (1, len(self.channels)))
        x[:, si.NAMES_1020.index("T7")] += 40 * np.sin(2 * np.pi * 50 * t)
        return Chunk(x, t)


def _watch_app() -> Any:
    return make_app(AppConfig(discover=False, title="bedside"), source=OneBlockSource(),
                    services=si.services(frames=[si.frame()]))


async def _settle(pilot: Any) -> None:
    """Until the first frame is shown and the trace worker has drawn (at most 5 s)."""
    for _ in range(100):
        await pilot.pause(0.05)
        if pilot.app.latest_frame is not None and "as recorded" in si.screen_text(pilot.app):
            break
    await pilot.pause(0.2)


#: Every view at the smallest terminal bedside supports and at a large one.
SIZES = [(80, 24), (200, 60)]


@pytest.mark.parametrize("size", SIZES)
def test_watch_screen(snap_compare: Any, size: tuple[int, int]) -> None:
    assert snap_compare(_watch_app(), terminal_size=size, run_before=_settle)


def test_watch_screen_with_the_trace_at_80x24(snap_compare: Any) -> None:
    """The trace shown at 80×24 (t): the map still draws every electrode, apart."""
    async def with_trace(pilot: Any) -> None:
        await _settle(pilot)
        await pilot.press("t")
        for _ in range(100):
            await pilot.pause(0.05)
            if "as recorded" in si.screen_text(pilot.app):
                break
        await pilot.pause(0.2)

    assert snap_compare(_watch_app(), terminal_size=(80, 24), run_before=with_trace)


def test_watch_screen_without_live_data(snap_compare: Any) -> None:
    app = make_app(AppConfig(discover=False), source=OneBlockSource(),
                   services=si.services(frames=[si.frame(state="lost")]))
    assert snap_compare(app, terminal_size=(80, 24), run_before=_settle)


async def _page(pilot: Any) -> None:
    """Watch, then the page of traces (e) once it has drawn."""
    await _settle(pilot)
    await pilot.press("e")
    for _ in range(100):
        await pilot.pause(0.05)
        if "s page" in si.screen_text(pilot.app) and "now" in si.screen_text(pilot.app):
            break
    await pilot.pause(0.3)


@pytest.mark.parametrize("size", SIZES)
def test_traces_page(snap_compare: Any, size: tuple[int, int]) -> None:
    assert snap_compare(_watch_app(), terminal_size=size, run_before=_page)


async def _measure(pilot: Any) -> None:
    for key in ("3", "6", "tab", "3", "5", "tab", "5", "6"):
        await pilot.press(key)
    for _ in range(40):
        await pilot.pause(0.05)
        if pilot.app.screen.plan is not None:
            break
    await pilot.press("escape")
    await pilot.pause(0.2)


@pytest.mark.parametrize("size", SIZES)
def test_measure_screen(snap_compare: Any, size: tuple[int, int]) -> None:
    app = make_app(AppConfig(discover=False, start_view="measure"), services=si.services())
    assert snap_compare(app, terminal_size=size, run_before=_measure)


@pytest.mark.parametrize("size", SIZES)
def test_log_screen(snap_compare: Any, tmp_path: Any, size: tuple[int, int]) -> None:
    # A fixed relative path (the memory log writes nothing): the screen names the log's file.
    where = Path("bedside-logs") / "W3-017-20261204-090000.yaml"
    rec = si.MemoryRecorder(where)
    app = make_app(AppConfig(discover=False, start_view="log", log_path=where,
                             technologist="AB", subject_id="W3-017"),
                   services=si.services(recorder=rec))

    async def note(pilot: Any) -> None:
        # The log opens in a worker: wait for it (on a loaded machine 0.2 s is not enough).
        assert await si.until(pilot, lambda: app.recorder is not None and "log file" in si.screen_text(app))
        await pilot.press("tab", "tab")
        for ch in "gel":
            await pilot.press(ch)
        assert await si.until(pilot, lambda: "gel" in si.screen_text(app))
        await pilot.pause(0.2)

    assert snap_compare(app, terminal_size=size, run_before=note)


@pytest.mark.parametrize("size", SIZES)
def test_help_screen(snap_compare: Any, size: tuple[int, int]) -> None:
    app = make_app(AppConfig(discover=False, start_view="measure"), services=si.services())
    assert snap_compare(app, terminal_size=size, press=["f1"])
