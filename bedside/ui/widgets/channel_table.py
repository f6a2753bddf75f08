"""The compact per-channel table: state, one value per check, time to good, reason.

Rows are keyed by channel name and columns by metric name. Each frame gives every row
its cells as (text, style) pairs; :class:`~bedside.ui.widgets.row_table.RowTable`
compares them with the row's last ones and draws again only the rows that changed
(a Strip per row, kept with the row's version). The table scrolls and pages
(PgUp/PgDn).
"""

from __future__ import annotations

from rich.style import Style

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
from bedside.ui.widgets.row_table import Cell, Column, RowTable

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


#: The state cell: symbol and word together, coloured; grey '?' when there is no live data.
_STATE_CELLS: dict[Level | None, Cell] = {
    None: (f"{NO_DATA_SYMBOL} {NO_DATA_WORD}", Style.parse(NO_DATA_COLOUR)),
    **{lv: (f"{lv.symbol} {lv.word}", Style.parse(f"bold {lv.colour}")) for lv in Level},
}
_FLAGS: dict[str, tuple[str, Style]] = {
    lv.key: (lv.symbol, Style.parse(lv.colour)) for lv in (Level.CHECK, Level.BAD)
}
_SCALP, _OTHER = Style(bold=True), Style(italic=True)


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


def check_cell(value: float | None, check_key: str | None) -> Cell:
    """A metric value; when its own check is not good, its symbol and colour too."""
    text = format_value(value)
    flag = _FLAGS.get(check_key) if check_key is not None else None
    if flag is not None:
        return (f"{flag[0]}{text}", flag[1])
    return (text, None)


class ChannelTable(RowTable):
    """One row per channel: name, state, time to good, why, then one value per check."""

    REASON_WIDTH = 44

    def __init__(self, *, id: str | None = None) -> None:
        super().__init__(id=id)
        self._names: tuple[str, ...] = ()
        self._headlines: tuple[tuple[str, str, str, float], ...] = ()

    @property
    def names(self) -> tuple[str, ...]:
        return self._names

    def _rebuild(self, names: tuple[str, ...], columns: tuple[tuple[str, str, str, float], ...]) -> None:
        self.reset(
            (
                Column("name", "electrode", 9),
                Column("state", "state", 9),
                Column("ttg", "to good", 7),
                Column("reason", "why", self.REASON_WIDTH),
                *(Column(f"m:{key}", header, max(6, len(header))) for _, key, header, _ in columns),
            ),
            names,
        )
        self._names, self._headlines = names, columns

    def show(self, frame: QualityFrame, live: bool, time_to_good_s: dict[str, float]) -> None:
        """Apply one frame (only the rows whose cells changed are drawn again; a new
        set of channels or columns rebuilds the table once)."""
        names = tuple(ch.name for ch in frame.channels)
        keys: set[str] = set()
        for ch in frame.channels:
            keys.update(ch.metrics)
        columns = headline_columns(keys) if keys else self._headlines
        if names != self._names or (keys and columns != self._headlines):
            self._rebuild(names, columns)
        self.set_rows([self._cells(ch, live, time_to_good_s.get(ch.name)) for ch in frame.channels])

    def _cells(self, ch: ChannelQuality, live: bool, ttg: float | None) -> tuple[Cell, ...]:
        level = ch.level if live else None
        # Time to good only beside a good electrode: on a red one it would read as a promise.
        seconds = format_seconds(ttg if level is Level.GOOD else None)
        if not live:
            reason = "no live data"
        elif ch.reasons:
            reason = ch.reasons[0] + (f" (+{len(ch.reasons) - 1})" if len(ch.reasons) > 1 else "")
        else:
            reason = ""
        checks = (ch.checks or {}) if live else {}
        metrics = ch.metrics
        values: list[Cell] = []
        for check, key, _, scale in self._headlines:
            value = metrics.get(key) if live else None
            values.append(check_cell(None if value is None else float(value) * scale, checks.get(check)))
        return (
            (ch.name, _SCALP if ch.is_scalp else _OTHER),
            _STATE_CELLS[level],
            (seconds, None),
            (reason, None),
            *values,
        )

    def selected_name(self) -> str | None:
        if not self._names or self.cursor_row < 0 or self.cursor_row >= len(self._names):
            return None
        return self._names[self.cursor_row]

    def select_name(self, name: str) -> None:
        if name in self._names:
            self.move_cursor(row=self._names.index(name))
