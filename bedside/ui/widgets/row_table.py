"""A table of one-line rows drawn through Textual's line API, with a row cursor.

It looks and behaves as Textual's DataTable with ``cursor_type="row"`` and zebra
stripes: a header line that stays put, fixed-width columns with one blank either side,
the cursor row, the row under the mouse, the same keys (↑/↓, PgUp/PgDn, Ctrl+Home/End,
Home/End, ←/→, Enter) and clicks. ``tests/ui/test_channel_table_render.py`` compares
every drawn line with a stock DataTable holding the same cells.

Drawing: :meth:`RowTable.render_line` serves each row from a Strip cache, one Strip per
row, kept with the key it was drawn for — the row's version, whether the cursor or the
mouse is on it, and the look (width, horizontal scroll, CSS, focus). :meth:`set_rows`
bumps a row's version only when one of its cells changed, and repaints only the lines
of those rows, so a frame that changes a few cells draws a few lines.

Only Textual's public API is used (``tests/ui/test_channel_table_render.py`` scans this
module for private members).

Why one module of about 500 lines: it is one widget (drawing, the row cache, cursor,
hover, scrolling, keys and its messages share the same row state); split, each part
would reach into the others' state.
"""

from __future__ import annotations

from collections.abc import Hashable, Sequence
from dataclasses import dataclass
from typing import ClassVar

from rich.cells import cell_len, set_cell_size
from rich.segment import Segment
from rich.style import Style
from rich.text import Text
from textual import events
from textual.binding import Binding, BindingType
from textual.geometry import Region, Size, Spacing
from textual.message import Message
from textual.scroll_view import ScrollView
from textual.strip import Strip
from textual.widgets.data_table import RowKey

#: One cell: its text and its own style (None: the row's look only).
Cell = tuple[str, Style | None]

HEADER_HEIGHT = 1
PAD = 1  # blanks either side of a cell


@dataclass(frozen=True)
class Column:
    """A column: its key, the header's words and the width of its content in cells."""

    key: str
    label: str
    width: int


class _Look:
    """The styles of one kind of row (header, even, odd) with or without the cursor and
    the mouse on it, as DataTable composes them: the row's style, then the cursor's and
    hover's component styles, the cell's own style, then the cursor's text colour.

    Each cell's styles carry its column as metadata, as DataTable's do, so two cells
    side by side stay two runs of text when a screen is simplified (an SVG export)."""

    def __init__(self, row: Style, component: Style) -> None:
        self.pre = row + component
        self.post = Style.from_color(color=component.color)
        self.fill = self.pre + Style.from_meta({"out_of_bounds": True})  # beyond the last column
        self.cells: dict[tuple[int, Style | None], tuple[Style, Style]] = {}

    def cell(self, column: int, own: Style | None) -> tuple[Style, Style]:
        """(the cell's blank parts, its text) in this column."""
        styles = self.cells.get((column, own))
        if styles is None:
            pre = self.pre + Style.from_meta({"column": column})
            blank = pre + self.post
            text = blank if own is None else pre + own + self.post
            # The same object when they look alike, so the row joins them (see _draw_row).
            styles = self.cells[(column, own)] = (blank, blank if text == blank else text)
        return styles


class RowTable(ScrollView, can_focus=True):
    """Rows of :data:`Cell` under a header; the cursor is on a whole row."""

    ALLOW_SELECT = False

    BINDINGS: ClassVar[list[BindingType]] = [
        Binding("enter", "select_cursor", "Select", show=False),
        Binding("up", "cursor_up", "Cursor up", show=False),
        Binding("down", "cursor_down", "Cursor down", show=False),
        Binding("right", "cursor_right", "Cursor right", show=False),
        Binding("left", "cursor_left", "Cursor left", show=False),
        Binding("pageup", "page_up", "Page up", show=False),
        Binding("pagedown", "page_down", "Page down", show=False),
        Binding("ctrl+home", "scroll_top", "Top", show=False),
        Binding("ctrl+end", "scroll_bottom", "Bottom", show=False),
        Binding("home", "scroll_home", "Home", show=False),
        Binding("end", "scroll_end", "End", show=False),
    ]

    COMPONENT_CLASSES: ClassVar[set[str]] = {
        "row-table--header",
        "row-table--cursor",
        "row-table--hover",
        "row-table--header-cursor",
        "row-table--header-hover",
        "row-table--odd-row",
        "row-table--even-row",
    }

    # DataTable's own look (textual 8.2), under this widget's names.
    DEFAULT_CSS = """
    RowTable {
        background: $surface;
        color: $foreground;
        height: auto;
        max-height: 100%;

        &:focus {
            background-tint: $foreground 5%;
            & > .row-table--cursor {
                background: $block-cursor-background;
                color: $block-cursor-foreground;
                text-style: $block-cursor-text-style;
            }
            & > .row-table--header {
                background-tint: $foreground 5%;
            }
        }
        &:dark {
            & > .row-table--even-row {
                background: $surface-darken-1 40%;
            }
        }
        & > .row-table--header {
            text-style: bold;
            background: $panel;
            color: $foreground;
        }
        &:ansi > .row-table--header {
            background: ansi_bright_blue;
            color: ansi_default;
        }
        & > .row-table--odd-row {
        }
        & > .row-table--even-row {
            background: $surface-lighten-1 50%;
        }
        & > .row-table--cursor {
            background: $block-cursor-blurred-background;
            color: $block-cursor-blurred-foreground;
            text-style: $block-cursor-blurred-text-style;
        }
        & > .row-table--header-cursor {
            background: $accent-darken-1;
            color: $foreground;
        }
        & > .row-table--header-hover {
            background: $accent 30%;
        }
        & > .row-table--hover {
            background: $block-hover-background;
        }
    }
    """

    class RowMessage(Message):
        """A row's message, with the fields of DataTable's row messages (``data_table``,
        ``cursor_row``, ``row_key``), so a screen written for a DataTable reads it unchanged."""

        def __init__(self, data_table: RowTable, cursor_row: int, row_key: RowKey) -> None:
            self.data_table = data_table
            self.cursor_row = cursor_row
            self.row_key = row_key
            super().__init__()

        @property
        def control(self) -> RowTable:
            return self.data_table

    class RowHighlighted(RowMessage, namespace="data_table"):
        """The cursor moved to another row (also when the first rows arrive); handled as
        ``on_data_table_row_highlighted``."""

    class RowSelected(RowMessage, namespace="data_table"):
        """Enter on the cursor row, or a click on it (``on_data_table_row_selected``)."""

    def __init__(self, *, id: str | None = None, classes: str | None = None) -> None:
        super().__init__(id=id, classes=classes)
        self._columns: tuple[Column, ...] = ()
        self._header: tuple[Cell, ...] = ()
        self._table_width = 0
        self._keys: tuple[str, ...] = ()
        self._row_index: dict[str, int] = {}
        self._column_index: dict[str, int] = {}
        self._rows: list[tuple[Cell, ...]] = []
        self._versions: list[int] = []
        # Row index (-1: the header) → (the key it was drawn for, its Strip).
        self._strips: dict[int, tuple[Hashable, Strip]] = {}
        self._looks: dict[tuple[int, bool, bool], _Look] = {}
        self._epoch = 0  # moves with the columns and with every style update
        self._pseudo: Hashable = None
        self._cursor = 0
        self._hover = 0
        self._hover_shown = False
        self._layout_pending = False

    # --- content ------------------------------------------------------------------
    @property
    def row_count(self) -> int:
        return len(self._rows)

    @property
    def cursor_row(self) -> int:
        return self._cursor

    @property
    def columns(self) -> tuple[Column, ...]:
        return self._columns

    def reset(self, columns: Sequence[Column], keys: Sequence[str]) -> None:
        """New columns and rows (blank cells); the cursor goes back to the first row."""
        self._columns = tuple(columns)
        self._header = tuple((c.label, None) for c in self._columns)
        self._table_width = sum(c.width + 2 * PAD for c in self._columns)
        self._keys = tuple(keys)
        self._row_index = {k: i for i, k in enumerate(self._keys)}
        self._column_index = {c.key: i for i, c in enumerate(self._columns)}
        blank: tuple[Cell, ...] = tuple(("", None) for _ in self._columns)
        self._rows = [blank] * len(self._keys)
        self._versions = [0] * len(self._keys)
        self._strips.clear()
        self._epoch += 1
        self._cursor = 0
        self._hover = 0
        self.virtual_size = Size(self._table_width, len(self._keys) + HEADER_HEIGHT)
        self.scroll_x = self.scroll_y = 0
        self.scroll_target_x = self.scroll_target_y = 0
        self._layout_pending = True
        self.refresh()
        if self._keys:
            self.post_message(self.RowHighlighted(self, 0, RowKey(self._keys[0])))

    def set_rows(self, rows: Sequence[tuple[Cell, ...]]) -> None:
        """Every row's cells, in order; only the rows that changed are drawn again."""
        if len(rows) != len(self._rows):
            raise ValueError(f"{len(rows)} rows given for a table of {len(self._rows)}")
        own, versions = self._rows, self._versions
        changed: list[int] = []
        n = len(self._columns)
        for i, cells in enumerate(rows):
            if cells != own[i]:
                if len(cells) != n:
                    raise ValueError(f"row {i} has {len(cells)} cells for {n} columns")
                own[i] = cells
                versions[i] += 1
                changed.append(i)
        self._refresh_rows(changed)

    def row_version(self, key: str) -> int:
        """How many times the row's cells have changed since the last :meth:`reset`."""
        return self._versions[self._row_index[key]]

    def get_cell(self, row_key: str, column_key: str) -> Text:
        """The cell as shown (its text and style)."""
        try:
            text, style = self._rows[self._row_index[row_key]][self._column_index[column_key]]
        except KeyError:
            raise LookupError(f"no cell in row {row_key!r}, column {column_key!r}") from None
        return Text(text, style=style or "")

    # --- drawing --------------------------------------------------------------------
    def notify_style_update(self) -> None:
        super().notify_style_update()
        self._looks.clear()
        self._epoch += 1
        self.refresh()

    def render_lines(self, crop: Region) -> list[Strip]:
        self._pseudo = self.get_pseudo_class_state()
        self._layout_pending = False
        return super().render_lines(crop)

    def render_line(self, y: int) -> Strip:
        width = self.size.width
        scroll_x, scroll_y = self.scroll_offset
        index = -1 if y < HEADER_HEIGHT else y - HEADER_HEIGHT + scroll_y
        if index >= len(self._rows):
            return Strip.blank(width, self.rich_style)
        cursor = index == self._cursor
        hover = self._hover_shown and index == self._hover
        version = self._versions[index] if index >= 0 else 0
        key = (version, cursor, hover, width, scroll_x, self._epoch, self._pseudo)
        cached = self._strips.get(index)
        if cached is not None and cached[0] == key:
            return cached[1]
        strip = self._draw_row(index, cursor, hover, width, scroll_x)
        self._strips[index] = (key, strip)
        return strip

    def _look(self, index: int, hover: bool, cursor: bool) -> _Look:
        kind = -1 if index < 0 else index % 2
        look = self._looks.get((kind, hover, cursor))
        if look is None:
            get = self.get_component_rich_style
            if kind < 0:
                row = get("row-table--header")
            else:
                row = get("row-table--odd-row" if kind else "row-table--even-row")
            component = Style()
            if hover:
                component += get("row-table--hover")
                if kind < 0:
                    component += get("row-table--header-hover")
            if cursor:
                component += get("row-table--cursor")
                if kind < 0:
                    component += get("row-table--header-cursor")
            look = self._looks[(kind, hover, cursor)] = _Look(row, component)
        return look

    def _draw_row(self, index: int, cursor: bool, hover: bool, width: int, scroll_x: int) -> Strip:
        """One row as DataTable draws it: each cell padded and cut to its column, each
        cell its own segments (a cell's parts of one style joined), then the row's look
        out to the widget's width. Cells right of the view are left out."""
        look = self._look(index, hover, cursor)
        segments: list[Segment] = []
        cells = self._header if index < 0 else self._rows[index]
        right = scroll_x + width
        length = 0
        for c, ((text, own), column) in enumerate(zip(cells, self._columns, strict=True)):
            if length >= right:
                break
            inner = column.width
            used = cell_len(text)
            if used > inner:  # cut at the column (a plain slice when every character is one cell)
                text = text[:inner] if used == len(text) else set_cell_size(text, inner)
                used = inner
            rest = " " * (inner - used + PAD)
            blank, styled = look.cell(c, own if text else None)
            if styled is blank:
                segments.append(Segment(" " * PAD + text + rest, blank))
            else:
                segments += (Segment(" " * PAD, blank), Segment(text, styled), Segment(rest, blank))
            length += inner + 2 * PAD
        if length < right:
            fill = max(0, width - self._table_width)
            segments.append(Segment(" " * fill, look.fill))
            length += fill
        strip = Strip(segments, length)
        if scroll_x or length != width:
            strip = strip.crop(scroll_x, right)
        if strip.cell_length != width:  # scrolled past the end
            strip = strip.adjust_cell_length(width, self.rich_style)
        return strip

    def _refresh_rows(self, indices: Sequence[int]) -> None:
        """Repaint the visible lines of these rows (runs of neighbours as one region)."""
        if not indices:
            return
        top = int(self.scroll_offset.y)
        width, height = self.size
        shown = height - HEADER_HEIGHT
        regions: list[Region] = []
        start = last = -2
        for i in sorted(indices):
            if not top <= i < top + shown:
                continue
            if i != last + 1:
                if start >= 0:
                    regions.append(Region(0, HEADER_HEIGHT + start - top, width, last - start + 1))
                start = i
            last = i
        if start >= 0:
            regions.append(Region(0, HEADER_HEIGHT + start - top, width, last - start + 1))
        if regions:
            self.refresh(*regions)

    def _refresh_row(self, index: int) -> None:
        if index < 0:
            self.refresh(Region(0, 0, self.size.width, HEADER_HEIGHT))
        elif index < len(self._rows):
            self._refresh_rows((index,))

    # --- cursor and mouse -------------------------------------------------------------
    def move_cursor(self, *, row: int | None = None, animate: bool = False, scroll: bool = True) -> None:
        """Put the cursor on ``row`` (kept inside the table) and, with ``scroll``, in view."""
        if row is not None:
            self._set_cursor(row, scroll=scroll, animate=animate)
        elif scroll:
            self._bring_cursor_into_view(animate)

    def _set_cursor(self, row: int, *, scroll: bool = True, animate: bool = False) -> None:
        row = max(0, min(row, len(self._rows) - 1))
        old, self._cursor = self._cursor, row
        if old != row:
            self._refresh_row(old)
            self._refresh_row(row)
            if row < len(self._keys):
                self.post_message(self.RowHighlighted(self, row, RowKey(self._keys[row])))
            # As DataTable: a moved cursor is always brought into view.
            scroll = True
        if scroll:
            if self._layout_pending:
                self.call_after_refresh(self._bring_cursor_into_view, animate)
            else:
                self._bring_cursor_into_view(animate)

    def _bring_cursor_into_view(self, animate: bool = False) -> None:
        if not self._rows:
            return
        width = max(self.size.width, self._table_width)
        region = Region(int(self.scroll_x), HEADER_HEIGHT + self._cursor, width, 1)
        self.scroll_to_region(region, animate=animate, spacing=Spacing(HEADER_HEIGHT, 0, 0, 0), force=True)

    def _show_hover(self, shown: bool) -> None:
        self._hover_shown = shown
        self._refresh_row(self._hover)

    def _row_at(self, event: events.MouseEvent) -> int | None:
        """The row under the mouse (-1: the header), None below the last row."""
        offset = event.get_content_offset(self)
        if offset is None:
            return None
        if offset.y < HEADER_HEIGHT:
            return -1
        index = offset.y - HEADER_HEIGHT + int(self.scroll_offset.y)
        return index if index < len(self._rows) else None

    def on_mouse_move(self, event: events.MouseMove) -> None:
        self._show_hover(True)
        index = self._row_at(event)
        if index is None:
            self._show_hover(False)
            return
        if index != self._hover:
            old, self._hover = self._hover, index
            self._refresh_row(old)
            self._refresh_row(index)

    def on_leave(self, _event: events.Leave) -> None:
        self._show_hover(False)

    def on_click(self, event: events.Click) -> None:
        self._show_hover(True)
        index = self._row_at(event)
        if index is None or index < 0:  # below the rows, or the header (no action)
            return
        again = index == self._cursor
        self._set_cursor(index, scroll=False)
        if again:  # a click on the cursor row selects it
            self.post_message(self.RowSelected(self, index, RowKey(self._keys[index])))
        self._bring_cursor_into_view(animate=True)
        event.stop()

    # --- keys -----------------------------------------------------------------------
    def action_select_cursor(self) -> None:
        self._show_hover(False)
        if self._rows:
            self.post_message(self.RowSelected(self, self._cursor, RowKey(self._keys[self._cursor])))

    def action_cursor_up(self) -> None:
        self._show_hover(False)
        self._set_cursor(self._cursor - 1)

    def action_cursor_down(self) -> None:
        self._show_hover(False)
        self._set_cursor(self._cursor + 1)

    def action_cursor_right(self) -> None:
        self._show_hover(False)
        super().action_scroll_right()

    def action_cursor_left(self) -> None:
        self._show_hover(False)
        super().action_scroll_left()

    def _page_rows(self) -> int:
        return self.scrollable_content_region.height - HEADER_HEIGHT

    def action_page_down(self) -> None:
        """The view one page down and the cursor as far (DataTable's paging)."""
        self._show_hover(False)
        height = self._page_rows()
        steps = min(len(self._rows) - self._cursor, height + 1)
        self.scroll_relative(y=height, animate=False, force=True)
        self._set_cursor(self._cursor + steps - 1, scroll=False)

    def action_page_up(self) -> None:
        self._show_hover(False)
        height = self._page_rows()
        steps = min(self._cursor + 1, height + 1)
        self.scroll_relative(y=-height, animate=False)
        self._set_cursor(self._cursor - steps + 1, scroll=False)

    def action_page_left(self) -> None:
        self._show_hover(False)
        self.scroll_page_left()

    def action_page_right(self) -> None:
        self._show_hover(False)
        self.scroll_page_right()

    def action_scroll_top(self) -> None:
        self._show_hover(False)
        self._set_cursor(0)

    def action_scroll_bottom(self) -> None:
        self._show_hover(False)
        self._set_cursor(len(self._rows) - 1)

    def action_scroll_home(self) -> None:
        self._show_hover(False)
        self.scroll_x = 0

    def action_scroll_end(self) -> None:
        self._show_hover(False)
        self.scroll_x = self.max_scroll_x
