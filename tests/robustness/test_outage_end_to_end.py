"""The amplifier goes away and comes back, seen from the app, on real LSL (issue 8).

Everything on the main path is real: the simulator's outlets (bedside.sim.publish), the
reader (bedside.stream.reader, a pylsl inlet), the monitor and checks engine with
configs/quality.yaml, the Textual app, and the setup log (bedside.record). In order:

1. bed A's stream is watched until verdicts are live;
2. a second outlet with the same name but a new source_id appears: the app says so and
   does not trust it (it keeps reading A);
3. A's outlet closes (amplifier off): within ~2 s every electrode shows "no data", never
   the last colours — and the app does not quietly move to the newcomer;
4. A comes back with its own source_id: the app reconnects by itself and is live again;
5. the outage is in the setup log on disk.

The 2 s bound is issue 8's; 1 s of slack covers the app's own 4-per-second frames and a
busy 2-core machine.
"""

from __future__ import annotations

import io
import time
import uuid
from collections.abc import Callable
from pathlib import Path
from typing import Any

import pytest

from bedside.record.log import load_log
from bedside.sim.publish import run_in_background
from bedside.ui.app import make_app
from bedside.ui.config import AppConfig
from bedside.ui.widgets.channel_table import ChannelTable

pytestmark = [pytest.mark.asyncio, pytest.mark.lsl]


def _screen(app: Any) -> str:
    from rich.console import Console

    width, height = app.size
    console = Console(width=width, height=height, file=io.StringIO(), force_terminal=True, record=True)
    console.print(app.screen._compositor.render_update(full=True, screen_stack=app._background_screens))
    return console.export_text()


async def _until(pilot: Any, cond: Callable[[], bool], limit_s: float) -> float | None:
    """Seconds until ``cond`` held, or None if it never did within ``limit_s``."""
    t0 = time.monotonic()
    while time.monotonic() - t0 < limit_s:
        if cond():
            return time.monotonic() - t0
        await pilot.pause(0.05)
    return None


def _cell(app: Any, name: str) -> str:
    return str(app.views["watch"].query_one(ChannelTable).get_cell(name, "state").plain)


async def test_outlet_vanishes_newcomer_is_not_trusted_and_the_same_source_returns(tmp_path: Path) -> None:
    tag = uuid.uuid4().hex[:8]
    name, sid_a, sid_b = f"bedside-test-robust-{tag}", f"amp-A-{tag}", f"amp-B-{tag}"
    log_path = tmp_path / "W3-017.yaml"
    cfg = AppConfig(stream_name=name, wait_s=1.5, log_path=log_path, subject_id="W3-017", technologist="JMK")
    a = run_in_background("clean", name=name, source_id=sid_a)
    b = None
    try:
        app = make_app(cfg)
        async with app.run_test(size=(110, 40)) as pilot:

            def live_levels() -> bool:
                f = app.latest_frame
                return f is not None and f.live and all(c.level is not None for c in f.channels if c.name == "Cz")

            assert await _until(pilot, live_levels, 15.0) is not None, "never live"
            assert _cell(app, "Cz") != "? no data"

            # 2. The newcomer: named, not used.
            b = run_in_background("clean", name=name, source_id=sid_b)
            note = await _until(pilot, lambda: sid_b in app.status_note, 8.0)
            assert note is not None, app.status_note
            assert "not trusted unless you pick it" in app.status_note
            assert app.connection is not None and app.connection.identity.source_id == sid_a

            # 3. A goes away.
            a.stop()
            took = await _until(pilot, lambda: not app.is_live() and _cell(app, "Cz") == "? no data", 6.0)
            assert took is not None and took <= 3.0, took
            print(f"\n'no data' on screen {took:.2f} s after the outlet closed")
            await pilot.pause(2.0)
            assert app.connection is not None and app.connection.identity.source_id == sid_a  # not moved to B
            assert _cell(app, "Cz") == "? no data"

            # 4. A comes back (same source_id): reconnects by itself.
            a = run_in_background("clean", name=name, source_id=sid_a)
            back = await _until(pilot, live_levels, 15.0)
            assert back is not None, "never live again"
            print(f"live again {back:.2f} s after the outlet returned")
            assert _cell(app, "Cz") != "? no data"
            await pilot.press("ctrl+q")
            await pilot.pause(0.5)
    finally:
        a.stop()
        if b is not None:
            b.stop()

    # 5. The outage is in the setup log on disk.
    saved = load_log(log_path)
    states = [e.detail for e in saved.events if e.kind == "stream_state"]
    assert any(d.startswith("live → ") for d in states), states
    assert any(d.endswith("→ live") and not d.startswith("live") for d in states), states
