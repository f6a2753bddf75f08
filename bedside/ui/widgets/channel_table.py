"""The compact per-channel table: state, one value per check, time to good, reason.

Rows are keyed by channel name and columns by metric name. A frame writes only the
cells whose shown text or colour changed, and only those cells are rendered again:
DataTable keys all its render caches on one table-wide update count, so a single
``update_cell`` would make every visible cell render afresh. Here each changed cell
gets its own stamp and the render caches are keyed on (layout, stamp) instead — see
:meth:`ChannelTable._render_cell`. The table scrolls and pages (PgUp/PgDn).
"""

from __future__ import annotations

from collections.abc import Callable, Hashable
from functools import partial
from typing import Any

from rich.segment import Segment
from rich.style import Style
from rich.text import Text
from textual.coordinate import Coordinate
from textual.widgets import DataTable
from textual.widgets.data_table import ColumnKey, RowKey

from bedside.checks.registry import headlines
from bedside.checks.types import (
    NO_DATA_COLOUR,
    NO_DATA_SYMBOL,
    NO_DATA_WORD,
    ChannelQuality,
    Level,
    QualityFrame,
)
from bedside.metric_labels import METRIC_LABELS

_NEWLINE = Text("\n")
_UNSET = object()  # no cell written yet (any key differs from it)


_UNIT_SUFFIX = (
    ("_uv_per_s", "µV/s"),
    ("_uv", "µV"),
    ("_db", "dB"),
    ("_hz", "Hz"),
    ("_pct", "%"),
    ("_s", "s"),
    ("_kohm", "kΩ"),
)


def metric_header(key: str) -> str:
    """'line_noise_db' → 'line noise dB' (the unit from the name's suffix)."""
    for suffix, unit in _UNIT_SUFFIX:
        if key.endswith(suffix):
            return f"{key[: -len(suffix)].replace('_', ' ')} {unit}"
    return key.replace("_", " ")


def level_cell(level: Level | None, live: bool) -> Text:
    """Symbol and word together, coloured; grey '?' when there is no live data."""
    if level is None or not live:
        return Text(f"{NO_DATA_SYMBOL} {NO_DATA_WORD}", style=NO_DATA_COLOUR)
    return Text(f"{level.symbol} {level.word}", style=f"bold {level.colour}")


def format_value(value: float | None) -> str:
    if value is None:
        return "—"
    if value != value:  # NaN
        return "—"
    if abs(value) >= 1000:
        return f"{value:.0f}"
    return f"{value:.1f}"


def format_seconds(seconds: float | None) -> str:
    if seconds is None:
        return "—"
    if seconds < 60:
        return f"{seconds:.0f} s"
    return f"{int(seconds // 60)} m {int(seconds % 60):02d} s"


#: One headline value per check, in the order a technologist reads them (the checks'
#: registry, bedside.checks.registry): (check name, metric key, column header, scale for
#: display); heads and scales from bedside.metric_labels, the one table of metric words.
HEADLINES: tuple[tuple[str, str, str, float], ...] = tuple(
    (check, key, METRIC_LABELS[key].short, METRIC_LABELS[key].scale) for check, key in headlines()
)


def headline_columns(keys: set[str]) -> tuple[tuple[str, str, str, float], ...]:
    """The headline columns present in a frame; other metrics generically if none is known."""
    known = tuple(h for h in HEADLINES if h[1] in keys)
    if known:
        return known
    return tuple(("", k, metric_header(k), 1.0) for k in sorted(keys)[:6])


def check_cell(value: float | None, check_key: str | None) -> Text:
    """A metric value; when its own check is not good, its symbol and colour too."""
    text = format_value(value)
    if check_key in ("check", "bad"):
        level = Level.from_key(check_key)
        return Text(f"{level.symbol}{text}", style=level.colour)
    return Text(text)


class ChannelTable(DataTable[object]):
    """One row per channel: name, state, time to good, why, then one value per check."""

    REASON_WIDTH = 44

    def __init__(self, *, id: str | None = None) -> None:
        super().__init__(id=id, cursor_type="row", zebra_stripes=True)
        self._names: tuple[str, ...] = ()
        self._columns: tuple[tuple[str, str, str, float], ...] = ()
        self._shown: dict[tuple[str, str], Hashable] = {}
        # Render-cache bookkeeping (see _render_cell): a stamp per changed cell and row,
        # and how many times show() itself bumped DataTable's update count.
        self._stamp = 0
        self._cell_stamp: dict[tuple[Any, Any], int] = {}
        self._row_stamp: dict[Any, int] = {}
        self._own_bumps = 0
        self._dirty_rows: set[str] = set()
        self._keys: dict[tuple[str, str], tuple[RowKey, ColumnKey]] = {}
        self._renderables: dict[tuple[int, int, int], Any] = {}
        self._columns_cache: tuple[int, list[Any]] | None = None
        self._row_styles: dict[tuple[Any, ...], Style] = {}

    @property
    def names(self) -> tuple[str, ...]:
        return self._names

    @property
    def metric_keys(self) -> tuple[str, ...]:
        return tuple(c[1] for c in self._columns)

    def _rebuild(self, names: tuple[str, ...], columns: tuple[tuple[str, str, str, float], ...]) -> None:
        self.clear(columns=True)
        self.add_column("electrode", key="name", width=9)
        self.add_column("state", key="state", width=9)
        self.add_column("to good", key="ttg", width=7)
        self.add_column("why", key="reason", width=self.REASON_WIDTH)
        for _, key, header, _ in columns:
            self.add_column(header, key=f"m:{key}", width=max(6, len(header)))
        for name in names:
            self.add_row(name, "", "—", "", *([""] * len(columns)), key=name)
        self._names, self._columns = names, columns
        self._shown.clear()
        self._cell_stamp.clear()
        self._row_stamp.clear()
        self._keys.clear()

    def _put(self, row: str, column: str, key: Hashable, build: Callable[[], Text | str]) -> None:
        """Write a cell when ``key`` (all that decides what the cell shows) changed;
        ``build`` makes the cell's value only then.

        The value goes straight into the table's data (what ``get_cell`` reads) and the
        cell gets a fresh stamp, so only it renders again; :meth:`show` then repaints
        the changed rows once.
        """
        if self._shown.get((row, column), _UNSET) == key:
            return
        self._shown[(row, column)] = key
        keys = self._keys.get((row, column))
        if keys is None:
            keys = self._keys[(row, column)] = (RowKey(row), ColumnKey(column))
        row_key, column_key = keys
        self._data[row_key][column_key] = build()
        self._stamp += 1
        self._cell_stamp[(row_key, column_key)] = self._stamp
        self._row_stamp[row_key] = self._stamp
        self._dirty_rows.add(row)

    # --- rendering: per-cell cache stamps -------------------------------------------
    def _layout_count(self) -> int:
        """DataTable's update count without show()'s own bumps: it moves when rows,
        columns, widths, sort order or the widget's size change (then all renders go)."""
        count: Any = self._update_count
        if isinstance(count, tuple):  # inside a row render: already swapped
            return int(count[0])
        return int(count) - getattr(self, "_own_bumps", 0)  # (DataTable asks during __init__)

    #: Render one-line cells that fit their column straight from the Text's segments
    #: (what DataTable's Rich pipeline yields for them, character for character —
    #: tests/ui/test_channel_table_render.py compares the two); off: DataTable's own.
    fast_cells = True

    def _render_cell(
        self,
        row_index: int,
        column_index: int,
        base_style: Style,
        width: int,
        cursor: bool = False,
        hover: bool = False,
    ) -> Any:
        """DataTable's cell render, cached per cell: the update count it keys on is
        swapped, for this call only, for (layout count, this cell's stamp)."""
        if column_index < 0:  # row labels (not used here)
            return super()._render_cell(row_index, column_index, base_style, width, cursor, hover)
        row_key = self._row_locations.get_key(row_index)
        column_key = self._column_locations.get_key(column_index)
        stamped = (self._layout_count(), self._cell_stamp.get((row_key, column_key), 0))
        if self.fast_cells and row_index >= 0:
            lines = self._fast_cell(row_index, column_index, row_key, column_key, stamped,
                                    base_style, width, cursor, hover)
            if lines is not None:
                return lines
        real = self._update_count
        self._update_count = stamped  # type: ignore[assignment]
        try:
            return super()._render_cell(row_index, column_index, base_style, width, cursor, hover)
        finally:
            self._update_count = real

    def _fast_cell(
        self,
        row_index: int,
        column_index: int,
        row_key: Any,
        column_key: Any,
        stamped: tuple[int, int],
        base_style: Style,
        width: int,
        cursor: bool,
        hover: bool,
    ) -> list[list[Segment]] | None:
        """The cell as DataTable renders it (Styled(Padding(text)) through Rich), for a
        one-line Text that fits: left pad, the Text's own segments, fill, right pad, each
        styled pre + own + post. None when the cell is not that simple (then DataTable's
        own path renders it)."""
        cache_key = (row_key, column_key, base_style, cursor, hover, self._show_hover_cursor,
                     stamped, self._pseudo_class_state)
        cache: Any = self._cell_render_cache  # (keys carry stamps where DataTable has a count)
        if cache_key in cache:
            return cache[cache_key]  # type: ignore[no-any-return]
        row = self.rows.get(row_key)
        if row is None or row.height != 1 or self.fixed_rows or self.fixed_columns:
            return None
        cells = self._get_row_renderables(row_index).cells
        if column_index >= len(cells):
            return None
        text = cells[column_index]
        pad = self.cell_padding
        inner = width - 2 * pad
        if (not isinstance(text, Text) or text.justify is not None or inner < 0
                or "\n" in text.plain or "\t" in text.plain or text.cell_len > inner):
            return None
        console = self.app.console
        pre = base_style + Style.from_meta({"row": row_index, "column": column_index})
        component, post = self._get_styles_to_render_cell(
            False, False, False, hover, cursor, self.show_cursor, self._show_hover_cursor,
            self.cursor_foreground_priority == "css", self.cursor_background_priority == "css",
        )
        pre = pre + component

        def styled(own: Style | None) -> Style | None:  # rich.segment.Segment.apply_style
            out = pre + own if pre else own
            if post:
                out = out + post if out else post
            return out

        blank = styled(Style.null())
        line: list[Segment] = []
        if pad:
            line.append(Segment(" " * pad, blank))
        # As Text.__rich_console__ does: the lines joined, so the Text's own style is a span.
        joined = _NEWLINE.join([text])
        line.extend(Segment(seg.text, styled(seg.style)) for seg in joined.render(console, end="")
                    if seg.text)
        fill = inner - text.cell_len + pad
        if fill:
            line.append(Segment(" " * fill, blank))
        lines = [line]
        cache[cache_key] = lines
        return lines

    def _get_row_renderables(self, row_index: int) -> Any:
        """DataTable formats a whole row whenever one of its cells renders afresh; keyed
        here on the row's stamp, so a row with several changed cells is formatted once."""
        if row_index < 0:
            return super()._get_row_renderables(row_index)
        row_key = self._row_locations.get_key(row_index)
        key = (self._layout_count(), self._row_stamp.get(row_key, 0), row_index)
        cached = self._renderables.get(key)
        if cached is None:
            if len(self._renderables) > 4 * max(64, len(self._names)):
                self._renderables.clear()
            cached = self._renderables[key] = self._compute_row_renderables(row_index)
        return cached

    @property
    def ordered_columns(self) -> list[Any]:
        """DataTable rebuilds this list on every use (several times per row rendered);
        it changes only with the layout."""
        key = self._layout_count()
        cached = getattr(self, "_columns_cache", None)  # (DataTable asks during __init__)
        if cached is None or cached[0] != key:
            cached = self._columns_cache = (key, super().ordered_columns)
        return cached[1]

    def _render_line_in_row(
        self,
        row_key: RowKey,
        line_no: int,
        base_style: Style,
        cursor_location: Coordinate,
        hover_location: Coordinate,
    ) -> Any:
        """DataTable's own row render, cached per row the same way (row stamp, width);
        the header row has stamp 0 (it changes only with the layout)."""
        real = self._update_count
        stamped = (self._layout_count(), self._row_stamp.get(row_key, 0), self.size.width)
        self._update_count = stamped  # type: ignore[assignment]
        try:
            if self.fast_cells:
                pair = self._fast_row(row_key, line_no, base_style, cursor_location, hover_location, stamped)
                if pair is not None:
                    return pair
            return super()._render_line_in_row(row_key, line_no, base_style, cursor_location, hover_location)
        finally:
            self._update_count = real

    def _fast_row(
        self,
        row_key: RowKey,
        line_no: int,
        base_style: Style,
        cursor_location: Coordinate,
        hover_location: Coordinate,
        stamped: tuple[int, int, int],
    ) -> Any:
        """DataTable's row assembly for the plain case here (no row labels, no fixed
        columns, row cursor), with the zebra/header row style looked up once per style
        state instead of from the CSS on every row. None otherwise."""
        cursor_type = self.cursor_type
        if (cursor_type != "row" or self.fixed_columns or self.fixed_rows
                or (self._labelled_row_exists and self.show_row_labels)):
            return None
        cache_key = (row_key, line_no, base_style, cursor_location, hover_location, cursor_type,
                     self.show_cursor, self._show_hover_cursor, stamped, self._pseudo_class_state)
        cache: Any = self._row_render_cache  # (keys carry stamps where DataTable has a count)
        if cache_key in cache:
            return cache[cache_key]
        found = self._row_locations.get(row_key)
        row_index: int = -1 if found is None else found
        row_style = self._row_style(row_index, base_style)
        should_highlight = self._should_highlight
        columns = self.ordered_columns
        widths = [column.get_render_width(self) for column in columns]
        layout = stamped[0]
        cell_stamp = self._cell_stamp
        scrollable_row: list[Any] = []
        for column_index, column in enumerate(columns):
            cursor = should_highlight(cursor_location, Coordinate(row_index, column_index), cursor_type)
            hover = should_highlight(hover_location, Coordinate(row_index, column_index), cursor_type)
            lines = None
            if row_index >= 0:  # the keys are known here: straight to the short path
                lines = self._fast_cell(
                    row_index, column_index, row_key, column.key,
                    (layout, cell_stamp.get((row_key, column.key), 0)),
                    row_style, widths[column_index], cursor, hover,
                )
            if lines is None:
                lines = self._render_cell(row_index, column_index, row_style, widths[column_index],
                                          cursor=cursor, hover=hover)
            scrollable_row.append(lines[line_no])
        remaining_space = max(0, self.size.width - (sum(widths) + self._row_label_column_width))
        extend_style, _ = self._get_styles_to_render_cell(
            row_index == -1, False, False,
            should_highlight(hover_location, Coordinate(row_index or 0, 0), cursor_type),
            row_index == cursor_location.row, self.show_cursor, self._show_hover_cursor, False, False,
        )
        extend_style = row_style + extend_style
        extend_style += Style.from_meta({"row": row_index, "column": 0, "out_of_bounds": True})
        scrollable_row.append([Segment(" " * remaining_space, extend_style)])
        pair: tuple[list[Any], list[Any]] = ([], scrollable_row)
        cache[cache_key] = pair
        return pair

    def _row_style(self, row_index: int, base_style: Style) -> Style:
        """DataTable._get_row_style, remembered per (kind of row, base style, pseudo-classes,
        theme): the CSS lookup it does is the costly part of a row."""
        kind = -1 if row_index == -1 else (row_index % 2 if self.zebra_stripes else -2)
        key = (kind, base_style, self._pseudo_class_state, self.app.theme)
        cached = self._row_styles.get(key)
        if cached is None:
            if len(self._row_styles) > 64:
                self._row_styles.clear()
            cached = self._row_styles[key] = self._get_row_style(row_index, base_style)
        return cached

    def _repaint(self) -> None:
        """Repaint the rows written since the last repaint (line cache moves on once)."""
        if not self._dirty_rows:
            return
        self._update_count += 1
        self._own_bumps += 1
        rows = self._dirty_rows
        self._dirty_rows = set()
        if len(rows) * 4 > len(self._names):
            self.refresh()
            return
        for row in rows:
            index = self._row_locations.get(RowKey(row))
            if index is not None:
                self.refresh_row(index)

    def show(self, frame: QualityFrame, live: bool, time_to_good_s: dict[str, float]) -> None:
        """Apply one frame (a batch of cell updates; a new layout rebuilds once)."""
        names = tuple(ch.name for ch in frame.channels)
        keys: set[str] = set()
        for ch in frame.channels:
            keys.update(ch.metrics)
        columns = headline_columns(keys) if keys else self._columns
        if names != self._names or (keys and columns != self._columns):
            self._rebuild(names, columns)
        for ch in frame.channels:
            self._update_row(ch, live, time_to_good_s.get(ch.name))
        self._repaint()

    def _update_row(self, ch: ChannelQuality, live: bool, ttg: float | None) -> None:
        """One row; each cell's key is what decides its look, so an unchanged cell
        costs a comparison and no Text is built for it."""
        name = ch.name
        put = self._put
        put(name, "name", (name, ch.is_scalp),
            lambda: Text(name, style="bold" if ch.is_scalp else "italic"))
        level = ch.level if live else None
        put(name, "state", level, lambda: level_cell(level, live))
        checks = (getattr(ch, "checks", {}) or {}) if live else {}
        metrics = ch.metrics
        for check, key, _, scale in self._columns:
            value = metrics.get(key) if live else None
            shown = None if value is None else float(value) * scale
            verdict = checks.get(check)
            text = format_value(shown)
            flag = verdict if verdict in ("check", "bad") else None
            put(name, f"m:{key}", (text, flag), partial(check_cell, shown, verdict))
        # Time to good only beside a good electrode: on a red one it would read as a promise.
        seconds = format_seconds(ttg if level is Level.GOOD else None)
        put(name, "ttg", seconds, lambda: seconds)
        if not live:
            reason = "no live data"
        elif ch.reasons:
            reason = ch.reasons[0] + (f" (+{len(ch.reasons) - 1})" if len(ch.reasons) > 1 else "")
        else:
            reason = ""
        put(name, "reason", reason, lambda: reason)

    def selected_name(self) -> str | None:
        if not self._names or self.cursor_row < 0 or self.cursor_row >= len(self._names):
            return None
        return self._names[self.cursor_row]

    def select_name(self, name: str) -> None:
        if name in self._names:
            self.move_cursor(row=self._names.index(name))
