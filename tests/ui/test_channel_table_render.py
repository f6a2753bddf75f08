"""The channel table's own render paths draw exactly what DataTable's would.

Reference: Textual's DataTable itself (textual 8.2, ``DataTable._render_cell`` and
``_render_line_in_row`` through Rich's Styled/Padding pipeline). ChannelTable renders
one-line cells and plain rows on a shorter path and caches per changed cell; here
every visible line is compared, character by character with its full style, against
the same table rendered with ``fast_cells = False`` and every cache dropped — after
frames with long reasons (cut at the column), no-data rows, a moved cursor, a
scrolled view and a narrower terminal.
"""

from __future__ import annotations

from typing import Any

import pytest
import standins as si
from rich.segment import Segment
from textual.app import App, ComposeResult
from textual.strip import Strip

from bedside.checks.types import ChannelQuality, Level, QualityFrame
from bedside.ui.widgets.channel_table import ChannelTable

N = 40


def frame(j: int, live: bool = True) -> QualityFrame:
    levels = (Level.GOOD, Level.CHECK, Level.BAD, None)
    chans = tuple(
        ChannelQuality(
            f"E{i + 1}",
            levels[(i + j) % 4],
            {"mains_uv": float(i * j) / 7.0, "ptp_uv": 50.0 + j, "drift_uv_per_s": 1.0,
             "bridge_corr": 0.3, "pops": float(j % 2), "clip_fraction": 0.001 * i,
             "muscle_ratio": 0.1, "rms_uv": 12.0 + 0.37 * i * j},
            # every fifth reason is longer than the 'why' column: DataTable cuts it
            (("mains 12 dB over the EEG band — re-seat the electrode and check the gel " * (i % 5 == 0))
             or f"drift {i} µV/s",) if (i + j) % 4 else (),
            i % 7 != 0,
            {"line_noise": "bad" if (i + j) % 3 == 2 else "good", "flat": "check" if i % 11 == 0 else "good"},
        )
        for i in range(N)
    )
    return QualityFrame(float(j), float(j), chans, (), si.health(), 4.0)


class TableApp(App[None]):
    def compose(self) -> ComposeResult:
        yield ChannelTable(id="channel-table")


def cells(strip: Strip) -> list[tuple[str, Any]]:
    """One (character, style) per cell: independent of how segments are split."""
    out: list[tuple[str, Any]] = []
    for seg in strip:
        out.extend((ch, seg.style) for ch in Segment(seg.text, seg.style).text)
    return out


def compare(table: ChannelTable) -> int:
    served = 0
    own_fast_cell = table._fast_cell

    def counting(*args: Any) -> Any:
        nonlocal served
        lines = own_fast_cell(*args)
        served += lines is not None
        return lines

    table._clear_caches()
    table._fast_cell = counting  # type: ignore[method-assign,assignment]
    try:
        fast = [cells(table.render_line(y)) for y in range(table.size.height)]
    finally:
        del table._fast_cell
    assert served > 0  # the short path did draw cells
    table.fast_cells = False
    table._clear_caches()
    table._renderables.clear()
    table._row_styles.clear()
    try:
        slow = [cells(table.render_line(y)) for y in range(table.size.height)]
    finally:
        table.fast_cells = True
        table._clear_caches()
    for y, (a, b) in enumerate(zip(fast, slow, strict=True)):
        assert a == b, f"line {y} differs:\nfast {''.join(c for c, _ in a)!r}\nslow {''.join(c for c, _ in b)!r}"
    return len(fast)


@pytest.mark.asyncio
async def test_fast_paths_draw_what_datatable_draws() -> None:
    app = TableApp()
    async with app.run_test(size=(150, 30)) as pilot:
        table = app.query_one(ChannelTable)
        table.show(frame(0), True, {"E3": 12.0})
        await pilot.pause()
        # E4 has no level in this frame: grey '?' from the very first frame on
        assert str(table.get_cell("E4", "state")).startswith("?")
        assert str(table.get_cell("E2", "state")).startswith(Level.CHECK.symbol)
        assert compare(table) == table.size.height
        for j in range(1, 4):  # frames with changed cells: stamps move, caches kept
            table.show(frame(j), True, {"E3": 12.0, "E9": 75.0})
            await pilot.pause()
            compare(table)
        table.move_cursor(row=5)
        await pilot.pause()
        compare(table)
        table.show(frame(4), False, {})  # no live data: grey '?' everywhere
        await pilot.pause()
        compare(table)
        assert str(table.get_cell("E2", "state")).startswith("?")
        table.move_cursor(row=35)  # scrolls
        await pilot.pause()
        assert table.scroll_offset.y > 0
        table.show(frame(5), True, {})
        await pilot.pause()
        compare(table)
        await pilot.resize_terminal(90, 20)
        await pilot.pause()
        compare(table)


@pytest.mark.asyncio
async def test_only_changed_cells_get_new_stamps() -> None:
    """A repeated frame writes nothing; a changed value re-stamps just its cell."""
    app = TableApp()
    async with app.run_test(size=(150, 30)) as pilot:
        table = app.query_one(ChannelTable)
        table.show(frame(1), True, {})
        await pilot.pause()
        stamps = dict(table._cell_stamp)
        table.show(frame(1), True, {})
        assert table._cell_stamp == stamps
        table.show(frame(1), True, {"E4": 30.0})
        changed = {k for k, v in table._cell_stamp.items() if stamps.get(k) != v}
        assert {(str(r.value), str(c.value)) for r, c in changed} == {("E4", "ttg")}
        assert str(table.get_cell("E4", "ttg")) == "30 s"
