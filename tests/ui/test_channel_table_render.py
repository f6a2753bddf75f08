"""The channel table draws and behaves as Textual's DataTable would with the same cells.

Reference: Textual's own DataTable (``cursor_type="row"``, ``zebra_stripes=True``), the
widget the channel table replaced, holding the same columns (labels, widths) and cells
(text and style). Every visible line of both is compared cell by cell, character and
style (the style's mouse metadata left out: DataTable tags each cell with its row and
column, the channel table finds the row from the mouse position), after frames with
long reasons (cut at the column), no-data rows, a moved cursor, a scrolled view, the
mouse over a row and over the header, without focus, at a narrower terminal and in a
light theme. The same keys and clicks go to both, and the cursor, the scroll position
and the messages they post must agree.
"""

from __future__ import annotations

import ast
from pathlib import Path
from typing import Any

import pytest
import standins as si
from rich.segment import Segment
from textual.app import App, ComposeResult
from textual.containers import Horizontal
from textual.geometry import Region
from textual.scroll_view import ScrollView
from textual.strip import Strip
from textual.widgets import DataTable

from bedside.checks.types import ChannelQuality, Level, QualityFrame
from bedside.ui.widgets import channel_table, row_table
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
            # every fifth reason is longer than the 'why' column: it is cut there
            (("mains 12 dB over the EEG band — re-seat the electrode and check the gel " * (i % 5 == 0))
             or f"drift {i} µV/s",) if (i + j) % 4 else (),
            i % 7 != 0,
            {"line_noise": "bad" if (i + j) % 3 == 2 else "good", "flat": "check" if i % 11 == 0 else "good"},
        )
        for i in range(N)
    )
    return QualityFrame(float(j), float(j), chans, (), si.health(), 4.0)


class PairApp(App[None]):
    """The channel table and a stock DataTable side by side, the same size."""

    CSS = """
    #pair { height: 1fr; }
    #pair > * { width: 1fr; }
    """

    def __init__(self) -> None:
        super().__init__()
        self.messages: list[tuple[str, str, int, str | None]] = []

    def compose(self) -> ComposeResult:
        with Horizontal(id="pair"):
            yield ChannelTable(id="ours")
            yield DataTable(id="stock", cursor_type="row", zebra_stripes=True)

    def on_data_table_row_highlighted(self, event: Any) -> None:
        self.messages.append(("highlighted", event.data_table.id, event.cursor_row, event.row_key.value))

    def on_data_table_row_selected(self, event: Any) -> None:
        self.messages.append(("selected", event.data_table.id, event.cursor_row, event.row_key.value))


def mirror(ours: ChannelTable, stock: DataTable[Any]) -> None:
    """Give the stock table our columns and cells (rebuilt when the rows change)."""
    keys = [c.key for c in ours.columns]
    if [str(c.key.value) for c in stock.ordered_columns] != keys or stock.row_count != ours.row_count:
        stock.clear(columns=True)
        for c in ours.columns:
            stock.add_column(c.label, key=c.key, width=c.width)
        for name in ours.names:
            stock.add_row(*(ours.get_cell(name, k) for k in keys), key=name)
        return
    for name in ours.names:
        for k in keys:
            stock.update_cell(name, k, ours.get_cell(name, k))


def cells(strip: Strip) -> list[tuple[str, Any]]:
    """One (character, style without metadata) per cell: independent of how segments split."""
    out: list[tuple[str, Any]] = []
    for seg in strip:
        style = seg.style.clear_meta_and_links() if seg.style is not None else None
        out.extend((ch, style) for ch in Segment(seg.text, seg.style).text)
    return out


def lines(widget: Any) -> list[list[tuple[str, Any]]]:
    width, height = widget.size
    return [cells(s) for s in widget.render_lines(Region(0, 0, width, height))]


async def compare(app: PairApp, pilot: Any, *, focused: bool = True,
                  hover: tuple[int, int] | None = None) -> int:
    """Draw both tables in the same state (each focused in turn, or neither; the mouse
    at ``hover`` on each in turn) and compare."""
    ours, stock = app.query_one(ChannelTable), app.query_one(DataTable)
    mirror(ours, stock)
    await pilot.pause()
    assert ours.size == stock.size and ours.scroll_offset == stock.scroll_offset
    assert ours.cursor_row == stock.cursor_row
    drawn = []
    for widget in (ours, stock):
        if focused:
            widget.focus()
        else:
            app.set_focus(None)
        await pilot.pause()
        drawn.append(lines(widget))
    a, b = drawn
    for y, (mine, theirs) in enumerate(zip(a, b, strict=True)):
        assert mine == theirs, (f"line {y} differs:\nours  {''.join(c for c, _ in mine)!r}\n"
                                f"stock {''.join(c for c, _ in theirs)!r}")
    return len(a)


async def both(pilot: Any, app: PairApp, *keys: str) -> None:
    """The same keys to each table (focused in turn)."""
    for widget in (app.query_one(ChannelTable), app.query_one(DataTable)):
        widget.focus()
        await pilot.pause()
        await pilot.press(*keys)
        await pilot.pause()


async def test_draws_what_datatable_draws() -> None:
    app = PairApp()
    async with app.run_test(size=(240, 30)) as pilot:
        ours = app.query_one(ChannelTable)
        assert await compare(app, pilot) == 0  # before any frame: nothing drawn
        ours.show(frame(0), True, {"E3": 12.0})
        await pilot.pause()
        # E4 has no level in this frame: grey '?' from the very first frame on
        assert str(ours.get_cell("E4", "state")).startswith("?")
        assert str(ours.get_cell("E2", "state")).startswith(Level.CHECK.symbol)
        assert await compare(app, pilot) == ours.size.height
        for j in range(1, 4):  # frames with changed cells
            ours.show(frame(j), True, {"E3": 12.0, "E9": 75.0})
            await compare(app, pilot)
        await both(pilot, app, "down", "down", "down")
        await compare(app, pilot)
        await compare(app, pilot, focused=False)
        ours.show(frame(4), False, {})  # no live data: grey '?' everywhere
        assert str(ours.get_cell("E2", "state")).startswith("?")
        await compare(app, pilot)
        await both(pilot, app, "pagedown")  # scrolls
        assert ours.scroll_offset.y > 0
        ours.show(frame(5), True, {})
        await compare(app, pilot)
        # The mouse over a row of each, then over each header.
        for row in (4, 0):
            await compare(app, pilot, hover=(3, row))
        await pilot.resize_terminal(150, 20)  # each table narrower than its columns
        await pilot.pause()
        await compare(app, pilot)
        await both(pilot, app, "right", "right", "right")
        assert ours.scroll_offset.x > 0
        await compare(app, pilot)
        app.theme = "textual-light"  # another theme, not dark: every style drawn anew
        await pilot.pause()
        await compare(app, pilot)


async def test_keys_and_clicks_do_what_they_do_in_datatable() -> None:
    """Each step goes to both tables; cursor, scroll and messages must agree."""
    app = PairApp()
    async with app.run_test(size=(240, 24)) as pilot:
        ours, stock = app.query_one(ChannelTable), app.query_one(DataTable)
        ours.show(frame(1), True, {})
        mirror(ours, stock)
        await pilot.pause()
        steps: list[tuple[str, ...]] = [
            ("down",), ("down", "down"), ("up",), ("pagedown",), ("pagedown",), ("pageup",),
            ("ctrl+end",), ("pageup", "pageup"), ("ctrl+home",), ("end",), ("home",),
            ("enter",), ("up",), ("pagedown", "enter"),
        ]
        kinds: set[str] = set()
        for keys in steps:
            app.messages.clear()
            await both(pilot, app, *keys)
            assert ours.cursor_row == stock.cursor_row, keys
            assert ours.scroll_offset == stock.scroll_offset, keys
            by_table = {w: [(m[0], m[2], m[3]) for m in app.messages if m[1] == w] for w in ("ours", "stock")}
            assert by_table["ours"] == by_table["stock"], keys
            kinds.update(m[0] for m in by_table["ours"])
        assert kinds == {"highlighted", "selected"}  # both kinds of message were compared
        assert ours.scroll_offset.y > 0
        # A click moves the cursor; a click on the cursor row selects it.
        for offset in ((5, 3), (5, 3), (5, 6)):
            app.messages.clear()
            for widget in ("#ours", "#stock"):
                await pilot.click(widget, offset=offset)
                await pilot.pause()
            assert ours.cursor_row == stock.cursor_row
            by_table = {w: [(m[0], m[2], m[3]) for m in app.messages if m[1] == w] for w in ("ours", "stock")}
            assert by_table["ours"] == by_table["stock"], offset
        await compare(app, pilot)
        # Other channels: the table is rebuilt, the cursor goes back to the first row.
        app.messages.clear()
        fewer = frame(2)
        ours.show(QualityFrame(2.0, 2.0, fewer.channels[5:30], (), si.health(), 4.0), True, {})
        mirror(ours, stock)
        await pilot.pause()
        by_table = {w: [(m[0], m[2], m[3]) for m in app.messages if m[1] == w] for w in ("ours", "stock")}
        assert by_table["ours"] == by_table["stock"] == [("highlighted", 0, "E6")]
        await compare(app, pilot)


async def test_only_changed_rows_are_drawn_again() -> None:
    """A repeated frame changes no row; a changed value redraws just its row."""
    app = PairApp()
    async with app.run_test(size=(240, 30)) as pilot:
        ours = app.query_one(ChannelTable)
        ours.show(frame(1), True, {})
        await pilot.pause()
        drawn: list[int] = []
        draw = ours._draw_row

        def counting(index: int, *args: Any) -> Strip:
            drawn.append(index)
            return draw(index, *args)

        ours._draw_row = counting  # type: ignore[method-assign]
        every = range(ours.size.height)
        for y in every:
            ours.render_line(y)
        assert drawn == []  # all from the cache
        versions = {n: ours.row_version(n) for n in ours.names}
        ours.show(frame(1), True, {})
        assert {n: ours.row_version(n) for n in ours.names} == versions
        ours.show(frame(1), True, {"E4": 30.0})
        assert [n for n in ours.names if ours.row_version(n) != versions[n]] == ["E4"]
        assert str(ours.get_cell("E4", "ttg")) == "30 s"
        for y in every:
            ours.render_line(y)
        assert drawn == [ours.names.index("E4")]


def _textual_names() -> set[str]:
    """Every attribute name of Textual's ScrollView (the table's base) and DataTable."""
    return set(dir(DataTable)) | set(vars(DataTable())) | set(vars(ScrollView()))


@pytest.mark.parametrize("module", [channel_table, row_table])
def test_uses_no_private_member_of_textual(module: Any) -> None:
    """No ``x._name`` unless the module itself defines ``_name`` (and Textual has no
    such member, so it cannot be one of Textual's by accident), no private Textual
    module or name imported, no private name read through getattr/setattr."""
    tree = ast.parse(Path(module.__file__).read_text(encoding="utf-8"))
    own: set[str] = set()
    for node in ast.walk(tree):
        if isinstance(node, ast.FunctionDef | ast.AsyncFunctionDef | ast.ClassDef):
            own.add(node.name)
        elif isinstance(node, ast.Attribute) and isinstance(node.ctx, ast.Store):
            own.add(node.attr)
    # Also the names row_table defines, for channel_table (its subclass).
    for node in ast.walk(ast.parse(Path(row_table.__file__).read_text(encoding="utf-8"))):
        if isinstance(node, ast.FunctionDef | ast.ClassDef):
            own.add(node.name)
        elif isinstance(node, ast.Attribute) and isinstance(node.ctx, ast.Store):
            own.add(node.attr)
    private = {n for n in own if n.startswith("_") and not n.endswith("__")}
    shared = private & _textual_names()
    assert not shared, f"private names of ours that Textual also has: {sorted(shared)}"
    problems = []
    for node in ast.walk(tree):
        if isinstance(node, ast.Attribute):
            name = node.attr
            if name.startswith("_") and not name.endswith("__") and name not in private:
                problems.append(f"line {node.lineno}: .{name}")
        elif isinstance(node, ast.ImportFrom) and node.module and node.module.startswith("textual"):
            if any(part.startswith("_") for part in node.module.split(".")):
                problems.append(f"line {node.lineno}: from {node.module}")
            problems += [f"line {node.lineno}: import {a.name}" for a in node.names if a.name.startswith("_")]
        elif isinstance(node, ast.Import):
            problems += [f"line {node.lineno}: import {a.name}" for a in node.names
                         if a.name.startswith("textual") and "._" in a.name]
        elif (isinstance(node, ast.Call) and isinstance(node.func, ast.Name)
              and node.func.id in ("getattr", "setattr", "hasattr", "delattr") and len(node.args) > 1
              and isinstance(node.args[1], ast.Constant) and str(node.args[1].value).startswith("_")):
            problems.append(f"line {node.lineno}: {node.func.id}(…, {node.args[1].value!r})")
    assert not problems, "private members used: " + "; ".join(problems)
