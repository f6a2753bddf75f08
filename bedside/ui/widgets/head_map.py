"""The head seen from above (nose at the top): every electrode at its place.

Each electrode is drawn as its level's symbol *and* colour (never colour alone),
with its name beside it when there is room; "?" in grey when there is no live data.
Bridges are drawn as a dotted line between the two electrodes. Positions come in
as (x, y) in [-1, 1] with the nose up (``bedside.placement.project_2d`` for named
sites, ``project_geometry`` for a cap's own positions). Electrodes the caller could
not place (no position, no 10-20/10-10 name) are listed on the map's bottom line,
never silently left out.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

from rich.text import Text
from textual.widget import Widget

from bedside.checks.types import NO_DATA_COLOUR, NO_DATA_SYMBOL, Level

#: How marks look in the Measure view (no level: a plain placement dot).
MARK_SYMBOL = "•"
NO_DATA_STYLE = NO_DATA_COLOUR


@dataclass(frozen=True)
class Bridge:
    a: str
    b: str
    level: Level


class _Canvas:
    def __init__(self, width: int, height: int) -> None:
        self.w, self.h = width, height
        self.chars = [[" "] * width for _ in range(height)]
        self.styles: list[list[str]] = [[""] * width for _ in range(height)]
        self.owned = [[False] * width for _ in range(height)]

    def inside(self, col: int, row: int) -> bool:
        return 0 <= col < self.w and 0 <= row < self.h

    def put(self, col: int, row: int, ch: str, style: str = "", own: bool = False) -> None:
        if self.inside(col, row):
            self.chars[row][col] = ch
            self.styles[row][col] = style
            if own:
                self.owned[row][col] = True

    def free(self, col: int, row: int, n: int = 1) -> bool:
        return all(self.inside(col + i, row) and not self.owned[row][col + i] for i in range(n))

    def text(self) -> Text:
        out = Text(no_wrap=True, overflow="crop")
        for r in range(self.h):
            run, run_style = "", self.styles[r][0] if self.w else ""
            for c in range(self.w):
                st = self.styles[r][c]
                if st != run_style:
                    out.append(run, style=run_style or None)
                    run, run_style = "", st
                run += self.chars[r][c]
            out.append(run, style=run_style or None)
            if r < self.h - 1:
                out.append("\n")
        return out


class HeadMap(Widget):
    """Electrodes on a head outline; call :meth:`set_points` once, :meth:`show` per frame."""

    DEFAULT_CSS = """
    HeadMap { min-width: 20; min-height: 8; }
    """

    def __init__(self, *, marks_mode: bool = False, id: str | None = None) -> None:
        super().__init__(id=id)
        self.marks_mode = marks_mode
        self._points: dict[str, tuple[float, float]] = {}
        self._levels: dict[str, Level | None] = {}
        self._live = False
        self._bridges: tuple[Bridge, ...] = ()
        self._selected: str | None = None
        self._spread = 1.0
        self._unplaced: tuple[str, ...] = ()
        #: Where each electrode's symbol went in the last render (column, row).
        self.drawn: dict[str, tuple[int, int]] = {}

    def set_points(self, points: dict[str, tuple[float, float]], unplaced: tuple[str, ...] = ()) -> None:
        """Positions (x, y) in [-1, 1], nose up. The set is spread to fill the outline
        (largest radius → the rim) so names collide less; relative places are kept.
        unplaced: electrodes with no place, listed at the bottom."""
        self._points = dict(points)
        self._unplaced = tuple(unplaced)
        radii = [math.hypot(x, y) for x, y in self._points.values()]
        top = max(radii, default=0.0)
        self._spread = 1.0 / top if 0.0 < top < 1.0 else 1.0
        self.refresh()

    def show(
        self,
        levels: dict[str, Level | None],
        *,
        live: bool,
        bridges: tuple[Bridge, ...] = (),
        selected: str | None = None,
    ) -> None:
        """Repaint only when something drawn changes (levels, live, bridges, selection):
        a frame whose levels hold still costs nothing here."""
        levels = dict(levels)
        if (levels, live, bridges, selected) == (self._levels, self._live, self._bridges, self._selected):
            return
        self._levels = levels
        self._live = live
        self._bridges = bridges
        self._selected = selected
        self.refresh()

    def select(self, name: str | None) -> None:
        if name == self._selected:
            return
        self._selected = name
        self.refresh()

    @property
    def points(self) -> dict[str, tuple[float, float]]:
        return dict(self._points)

    @property
    def unplaced(self) -> tuple[str, ...]:
        return self._unplaced

    #: The first of the two bottom lines when electrodes have no place.
    UNPLACED_HEAD = "not on the map (no position, no name):"

    def _unplaced_lines(self, width: int) -> Text:
        """Two lines: what they are, then as many names as the width holds ("E61, X1 +4 more")."""
        names = self._unplaced
        shown = ""
        for i, name in enumerate(names):
            candidate = f"{shown}, {name}" if shown else name
            left = len(names) - i - 1
            suffix = f" +{left} more" if left else ""
            if shown and len(candidate) + len(suffix) > width:
                shown += f" +{left + 1} more"
                break
            shown = candidate
        out = Text(no_wrap=True, overflow="ellipsis")
        out.append(self.UNPLACED_HEAD[:width], style="yellow")
        out.append("\n")
        out.append(shown[:width], style="bold yellow")
        return out

    def cell_of(self, x: float, y: float, width: int, height: int) -> tuple[int, int]:
        """The text cell of a projected point on a canvas of this size."""
        cx, cy = (width - 1) / 2.0, (height - 1) / 2.0 + 0.5
        rx, ry = max(1.0, (width - 1) / 2.0 - 1.0), max(1.0, (height - 1) / 2.0 - 1.0)
        r = math.hypot(x, y)
        if r > 1.0:  # sites below the circumference line: on the rim
            x, y = x / r, y / r
        return int(round(cx + 0.9 * x * rx)), int(round(cy - 0.9 * y * ry))

    def _outline(self, cv: _Canvas) -> None:
        w, h = cv.w, cv.h
        cx, cy = (w - 1) / 2.0, (h - 1) / 2.0 + 0.5
        rx, ry = max(1.0, (w - 1) / 2.0 - 1.0), max(1.0, (h - 1) / 2.0 - 1.0)
        steps = max(32, 2 * (w + h))
        for i in range(steps):
            t = 2 * math.pi * i / steps
            cv.put(int(round(cx + rx * math.cos(t))), int(round(cy - ry * math.sin(t))), "·", "grey42")
        nose_row = max(0, int(round(cy - ry)) - 1)
        mid = int(round(cx))
        cv.put(mid - 1, nose_row, "╱", "grey62")
        cv.put(mid, nose_row, " ")
        cv.put(mid + 1, nose_row, "╲", "grey62")
        ear_row = int(round(cy))
        cv.put(int(round(cx - rx)) - 1, ear_row, "(", "grey62")
        cv.put(int(round(cx + rx)) + 1, ear_row, ")", "grey62")

    def _style_for(self, name: str) -> tuple[str, str]:
        if self.marks_mode:
            return MARK_SYMBOL, "bold"
        level = self._levels.get(name)
        if not self._live or level is None:
            return NO_DATA_SYMBOL, NO_DATA_STYLE
        return level.symbol, f"bold {level.colour}"

    def render(self) -> Text:
        w, h = self.size.width, self.size.height
        if w < 4 or h < 3:
            return Text("")
        note = self._unplaced_lines(w) if self._unplaced and not self.marks_mode and h > 6 else None
        if note is not None:
            h -= 2  # the bottom lines list the electrodes with no place
        cv = _Canvas(w, h)
        self._outline(cv)
        k = self._spread
        cells = {n: self.cell_of(k * x, k * y, w, h) for n, (x, y) in self._points.items()}
        for br in self._bridges if not self.marks_mode else ():
            if br.a in cells and br.b in cells:
                self._line(cv, cells[br.a], cells[br.b], f"bold {br.level.colour}")
        # Symbols first (every electrode gets one), then names where they fit.
        placed: dict[str, tuple[int, int]] = {}
        for name, (col, row) in cells.items():
            spot = self._nearest_free(cv, col, row)
            if spot is None:
                continue
            sym, style = self._style_for(name)
            if name == self._selected:
                style = f"{style} reverse"
            cv.put(spot[0], spot[1], sym, style, own=True)
            placed[name] = spot
        for name, (col, row) in placed.items():
            label = name
            _, style = self._style_for(name)
            if name == self._selected:
                style = f"{style} reverse"
            right_half = col > cv.w // 2
            # Right-half names sit left of their symbol (a mirror of the left half), so they
            # stay inside the outline; the other side is the fallback.
            spots = (col - len(label), col + 1) if right_half else (col + 1, col - len(label))
            for start in spots:
                if start >= 0 and start + len(label) <= cv.w and cv.free(start, row, len(label)):
                    for i, ch in enumerate(label):
                        cv.put(start + i, row, ch, style, own=True)
                    break
        self.drawn = placed
        out = cv.text()
        if note is not None:
            out.append("\n")
            out.append_text(note)
        return out

    @staticmethod
    def _nearest_free(cv: _Canvas, col: int, row: int) -> tuple[int, int] | None:
        for radius in range(0, 3):
            for dr in range(-radius, radius + 1):
                for dc in range(-radius, radius + 1):
                    if max(abs(dr), abs(dc)) != radius:
                        continue
                    if cv.inside(col + dc, row + dr) and cv.free(col + dc, row + dr):
                        return col + dc, row + dr
        return None

    @staticmethod
    def _line(cv: _Canvas, a: tuple[int, int], b: tuple[int, int], style: str) -> None:
        (c0, r0), (c1, r1) = a, b
        n = max(abs(c1 - c0), abs(r1 - r0), 1)
        for i in range(1, n):
            c = int(round(c0 + (c1 - c0) * i / n))
            r = int(round(r0 + (r1 - r0) * i / n))
            cv.put(c, r, "═" if r0 == r1 else "┊" if c0 == c1 else "∙", style)
