"""The Watch view fed fixed frames (no live stream): what a technologist sees.

Frames come from stand-ins (tests/ui/standins.py); the live path is in test_live_lsl.py.
The rule checked throughout: a level is always a symbol *and* a colour, and without
live data nothing shows a level at all (common practice for alarms: never colour alone,
never stale values shown as live).
"""

from __future__ import annotations

import math
from typing import Any

import pytest
import standins as si

from bedside.checks.types import ChannelQuality, Level, QualityFrame
from bedside.stream.types import ChannelInfo, StreamIdentity
from bedside.ui.app import make_app
from bedside.ui.config import AppConfig
from bedside.ui.screens.picker import StreamPicker
from bedside.ui.widgets.channel_table import ChannelTable
from bedside.ui.widgets.head_map import HeadMap

pytestmark = pytest.mark.asyncio


_until = si.until


def _state(app: Any, name: str) -> Any:
    table = app.views["watch"].query_one(ChannelTable)
    return table.get_cell(name, "state")


async def test_levels_are_symbol_and_colour_and_bridge_is_drawn() -> None:
    app = make_app(AppConfig(discover=False), source=si.FixedSource(), services=si.services())
    async with app.run_test(size=(100, 40)) as pilot:
        assert await _until(pilot, lambda: app.latest_frame is not None and "✖T7" in si.screen_text(app))
        text = si.screen_text(app)
        t7 = _state(app, "T7")
        assert t7.plain == "✖ bad" and Level.BAD.colour in str(t7.style)
        o2 = _state(app, "O2")
        assert o2.plain == "▲ check" and Level.CHECK.colour in str(o2.style)
        assert _state(app, "Cz").plain == "● good"
        # Names sit beside their symbol: left half "●Cz", right half "O2▲" (mirrored).
        assert "O2▲" in text and "●Cz" in text
        assert "bridge a F3 + C3" in text  # the bridge finding names both electrodes and their tag
        assert "2 of 19 not good yet: T7 O2" in text  # ECG is not a scalp electrode
        assert "250 Hz set / 249.6 Hz seen" in text and "gaps 1" in text
        assert "standin-bed" in text and "standin-bed-sid" in text  # pinned identity
        # The reason is shown beside the level.
        assert "mains 24.0 µV at 50 Hz" in str(app.views["watch"].query_one(ChannelTable).get_cell("T7", "reason"))
        # Still readable at 80×24.
        await pilot.resize_terminal(80, 24)
        assert await _until(pilot, lambda: app.size == (80, 24) and "✖T7" in si.screen_text(app))
        small = si.screen_text(app)
        assert "✖T7" in small and "✖ bad" in small and "live" in small


async def test_lost_stream_shows_no_data_not_old_colours() -> None:
    frames = [si.frame(), si.frame(), si.frame(state="lost")]
    app = make_app(AppConfig(discover=False, update_hz=10), source=si.FixedSource(),
                   services=si.services(frames=frames))
    async with app.run_test(size=(100, 40)) as pilot:
        assert await _until(pilot, lambda: app.latest_frame is not None and not app.latest_frame.live)
        assert await _until(pilot, lambda: "lost" in si.screen_text(app) and "no live data" in si.screen_text(app))
        text = si.screen_text(app)
        assert "lost" in text
        map_text = app.views["watch"].query_one(HeadMap).render().plain
        assert "?T7" in map_text and "✖" not in map_text and "●" not in map_text
        assert _state(app, "T7").plain == "? no data"
        assert "no live data" in text
        # Other views keep the stream's state in view too.
        await pilot.press("f2")
        assert await _until(pilot, lambda: "Measure · ✖ lost standin-bed" in si.screen_text(app))


class _OneFrameMonitor(si.ScriptedMonitor):
    """Sends one frame, then nothing (a monitor that stalled)."""

    def _run(self) -> None:
        self.on_frame(self.frames[0])
        self._stop.wait()


async def test_stalled_updates_grey_everything_out() -> None:
    services = si.services(make_monitor=lambda src, eng, cb, hz: _OneFrameMonitor(src, [si.frame()], cb, hz))
    app = make_app(AppConfig(discover=False, stale_after_s=0.6), source=si.FixedSource(), services=services)
    async with app.run_test(size=(100, 40)) as pilot:
        assert await _until(pilot, lambda: app.latest_frame is not None)
        assert await _until(pilot, lambda: "no update from the checks" in si.screen_text(app), tries=60)
        assert _state(app, "T7").plain == "? no data"
        assert not app.is_live()


async def test_picker_when_several_streams_are_visible() -> None:
    a = si.identity("bed-a")
    b = si.identity("bed-b")
    app = make_app(AppConfig(), services=si.services(streams=[a, b]))
    async with app.run_test(size=(100, 40)) as pilot:
        assert await _until(pilot, lambda: isinstance(app.screen, StreamPicker))
        # (the picker is drawn at its first layout, which may come a pause later)
        assert await _until(pilot, lambda: "bed-a" in si.screen_text(app) and "bed-b" in si.screen_text(app))
        await pilot.press("down", "enter")
        assert await _until(pilot, lambda: app.connection is not None)
        # The stand-in source reports its own identity; what was pinned is b.
        assert app.status_note == ""
        assert not isinstance(app.screen, StreamPicker)


async def test_no_stream_says_so_and_keeps_working() -> None:
    app = make_app(AppConfig(), services=si.services(streams=[]))
    async with app.run_test(size=(100, 40)) as pilot:
        assert await _until(pilot, lambda: "no EEG streams visible" in si.screen_text(app))
        await pilot.press("f2")
        assert app.screen.name == "measure"


async def test_trace_follows_selection_and_derivation() -> None:
    app = make_app(AppConfig(discover=False), source=si.FixedSource(), services=si.services())
    async with app.run_test(size=(100, 40)) as pilot:
        assert await _until(pilot, lambda: app.latest_frame is not None)
        app.views["watch"].query_one(ChannelTable).select_name("T7")
        assert await _until(pilot, lambda: "T7 as recorded" in si.screen_text(app))
        assert "mains 50, 100 Hz" in si.screen_text(app)  # the frame says mains is 50 Hz
        await pilot.press("v")
        assert await _until(pilot, lambda: "T7 average reference" in si.screen_text(app))
        await pilot.press("v")
        # Bipolar: T7 minus its nearest neighbour further back (P7 on the map).
        assert await _until(pilot, lambda: "T7−P7" in si.screen_text(app))
        await pilot.press("n")  # the next electrode that is not good (after T7: O2)
        assert await _until(pilot, lambda: app.views["watch"].selected == "O2")


def _many_channel_frame(n: int) -> tuple[tuple[ChannelInfo, ...], QualityFrame]:
    names = [f"E{i + 1}" for i in range(n)]
    chans = tuple(ChannelInfo(nm, nm, "EEG", "microvolts", 1.0, True) for nm in names)
    out = []
    for i, nm in enumerate(names):
        level = (Level.GOOD, Level.CHECK, Level.BAD)[i % 3]
        out.append(ChannelQuality(nm, level, {"mains_uv": float(i), "rms_uv": 10.0}, ("r",), True))
    return chans, QualityFrame(1.0, 1.0, tuple(out), (), si.health(), 4.0)


class _ManySource(si.FixedSource):
    def __init__(self, chans: tuple[ChannelInfo, ...]) -> None:
        super().__init__()
        self._channels = chans
        self._identity = StreamIdentity("dense-cap", "EEG", "dense-sid", "lab", len(chans), 250.0)

    def pull(self, timeout_s: float = 0.0) -> Any:
        return None


def _spiral(names: Any) -> dict[str, tuple[float, float, float]]:
    """Sunflower (Vogel 1979) spiral: evenly spread points on the unit disc."""
    out = {}
    n = len(names)
    for i, nm in enumerate(names):
        r = 0.95 * math.sqrt((i + 0.5) / n)
        a = i * math.pi * (3 - math.sqrt(5))
        out[nm] = (r * math.cos(a), r * math.sin(a), 0.0)
    return out


async def test_256_channels_map_and_paged_table() -> None:
    chans, frame = _many_channel_frame(256)
    services = si.services(frames=[frame], positions_for=_spiral)
    app = make_app(AppConfig(discover=False), source=_ManySource(chans), services=services)
    async with app.run_test(size=(100, 40)) as pilot:
        table = app.views["watch"].query_one(ChannelTable)
        assert await _until(pilot, lambda: table.row_count == 256)
        hmap = app.views["watch"].query_one(HeadMap)

        def symbols() -> int:
            rendered = hmap.render().plain
            return sum(rendered.count(s) for s in ("●", "▲", "✖"))

        assert await _until(pilot, lambda: symbols() == 256)  # every electrode has its own cell
        await pilot.press("pagedown", "pagedown")
        assert table.cursor_row > 20
        # Paged: the view follows the cursor, the header stays on top.
        assert table.scroll_offset.y > 0
        assert await _until(pilot, lambda: f" {table.selected_name()} " in si.screen_text(app))
        assert "electrode" in si.screen_text(app)


async def test_picker_waits_for_watch_when_typing_elsewhere() -> None:
    """Streams found while the technologist types measurements: no pop-up until Watch."""
    app = make_app(AppConfig(start_view="measure"),
                   services=si.services(streams=[si.identity("bed-a"), si.identity("bed-b")]))
    async with app.run_test(size=(100, 40)) as pilot:
        assert await _until(pilot, lambda: "choose one in Watch" in app.status_note)
        assert not isinstance(app.screen, StreamPicker)
        await pilot.press("f3")
        assert await _until(pilot, lambda: isinstance(app.screen, StreamPicker))


async def test_selected_electrode_reason_in_full() -> None:
    app = make_app(AppConfig(discover=False), source=si.FixedSource(), services=si.services())
    async with app.run_test(size=(80, 24)) as pilot:
        assert await _until(pilot, lambda: app.latest_frame is not None)
        app.views["watch"].query_one(ChannelTable).select_name("T7")
        assert await _until(pilot, lambda: "▶ T7 ✖ bad: mains 24.0 µV at 50 Hz; 21 dB over its EEG band — re-seat" in si.screen_text(app))


async def test_trace_toggles_and_is_hidden_at_first_on_short_terminals() -> None:
    app = make_app(AppConfig(discover=False), source=si.FixedSource(), services=si.services())
    async with app.run_test(size=(80, 24)) as pilot:
        assert await _until(pilot, lambda: app.latest_frame is not None)
        assert "as recorded" not in si.screen_text(app)
        await pilot.press("t")
        assert await _until(pilot, lambda: "as recorded" in si.screen_text(app))
        await pilot.press("t")
        await pilot.pause(0.2)
        assert "as recorded" not in si.screen_text(app)


async def test_a_frame_arriving_while_the_app_shuts_down_is_taken_quietly() -> None:
    """The monitor's thread can post one more frame as the screens are taken down
    (seen as a ScreenStackError at the end of a run): it is kept, nothing raises."""
    from textual.app import ScreenStackError

    from bedside.ui.feed import FrameArrived

    app = make_app(AppConfig(discover=False), source=si.FixedSource(), services=si.services())
    async with app.run_test(size=(100, 40)) as pilot:
        assert await _until(pilot, lambda: app.latest_frame is not None)
    with pytest.raises(ScreenStackError):
        _ = app.screen  # the stack is empty now, as it is during shutdown
    last = si.frame(state="lost")
    app.on_frame_arrived(FrameArrived(last))
    assert app.latest_frame is last and app.current_view is None
