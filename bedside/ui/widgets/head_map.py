"""The head seen from above (front at the top): every electrode at its place, on the
three lines the technologist has just taped.

The picture is the measuring itself: the circumference (the ring of dots), the
nasion–inion line (``┆``, N at the front, I at the back) and the ear-to-ear line
(``┄``, L and R at the preauricular ends) cross at the vertex, and the sites sit on
them as the Measure view marks them — Measure and Watch draw this one picture.
Each electrode is drawn as its level's symbol *and* colour (the symbol first, never
colour alone), with its name beside it when there is room, a blank cell between two
names; "?" in grey when there is no live data. A bridge gives both electrodes the same
small letter tag (``a``, ``b`` … in the bridge's level colour, reversed), the same
letter the findings line names — no line is drawn between them. Positions come in
as (x, y) in [-1, 1] with the nose up (``bedside.placement.project_2d`` for named
sites — the projection the HTML report's map uses too — ``project_geometry`` for a
cap's own positions). Electrodes the caller could
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


#: Tags for bridges, in the order the frame lists them (the findings line uses the same).
BRIDGE_TAGS = "abcdefghijkmnpqrstuvwxyz"


def bridge_tag(i: int) -> str:
    """The letter of the i-th bridge ("a", "b", …; past the alphabet, "+")."""
    return BRIDGE_TAGS[i] if 0 <= i < len(BRIDGE_TAGS) else "+"


#: Sites on the measured circumference line (10-20, both names): the ring is drawn through them.
CIRCUMFERENCE_SITES = frozenset({"Fpz", "Fp1", "Fp2", "F7", "F8", "T7", "T8", "T3", "T4",
                                 "P7", "P8", "T5", "T6", "O1", "O2", "Oz"})


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
        self._ring = 1.0
        self._landmarks: tuple[tuple[int, int, str], ...] = ()
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
        # The ring where the circumference sites are (an inferior row may lie outside it).
        on_ring = [math.hypot(x, y) * self._spread for n, (x, y) in self._points.items()
                   if n in CIRCUMFERENCE_SITES]
        self._ring = min(1.0, sum(on_ring) / len(on_ring)) if on_ring else 1.0
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

    def _skeleton(self, cv: _Canvas) -> None:
        """The three taped lines: the circumference ring, nasion–inion and ear to ear,
        with their four landmarks (N, I, L, R) just beyond the ring."""
        w, h = cv.w, cv.h
        cx, cy = (w - 1) / 2.0, (h - 1) / 2.0 + 0.5
        rx, ry = max(1.0, (w - 1) / 2.0 - 1.0), max(1.0, (h - 1) / 2.0 - 1.0)
        ring_x, ring_y = 0.9 * self._ring * rx, 0.9 * self._ring * ry
        tape = "grey35"
        top, bottom = int(round(cy - ring_y)), int(round(cy + ring_y))
        left, right = int(round(cx - ring_x)), int(round(cx + ring_x))
        mid_col, mid_row = int(round(cx)), int(round(cy))
        for row in range(top + 1, bottom):
            cv.put(mid_col, row, "┆", tape)
        for col in range(left + 1, right):
            cv.put(col, mid_row, "┄", tape)
        steps = max(64, 6 * (w + h))
        for i in range(steps):
            t = 2 * math.pi * i / steps
            cv.put(int(round(cx + ring_x * math.cos(t))), int(round(cy - ring_y * math.sin(t))), "·", "grey50")
        self._landmarks = ((mid_col, top - 1, "N"), (mid_col, bottom + 1, "I"),
                           (left - 2, mid_row, "L"), (right + 2, mid_row, "R"))

    def _put_landmarks(self, cv: _Canvas) -> None:
        """N, I, L, R after the electrodes, only where they touch no symbol or name."""
        for col, row, letter in self._landmarks:
            if cv.free(col, row) and all(not cv.inside(c, row) or cv.free(c, row) for c in (col - 1, col + 1)):
                cv.put(col, row, letter, "bold grey62", own=True)

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
        self._skeleton(cv)
        k = self._spread
        cells = {n: self.cell_of(k * x, k * y, w, h) for n, (x, y) in self._points.items()}
        # Symbols first (every electrode gets one), then bridge tags, then names where they fit.
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
        tags: dict[str, tuple[str, str]] = {}
        for i, br in enumerate(self._bridges if not self.marks_mode else ()):
            for name in (br.a, br.b):
                if name in placed and name not in tags:
                    tags[name] = (bridge_tag(i), f"bold reverse {br.level.colour}")
        for name, (tag, style) in tags.items():
            col, row = placed[name]
            # Beside its symbol, on a side where the next cell is clear too, so the tag
            # reads as this electrode's and not its neighbour's.
            sides = [c for c in (col + 1, col - 1) if cv.free(c, row)]
            clear = [c for c in sides if not cv.inside(2 * c - col, row) or cv.free(2 * c - col, row)]
            if clear or sides:
                cv.put((clear or sides)[0], row, tag, style, own=True)
        for name, (col, row) in placed.items():
            label = name
            _, style = self._style_for(name)
            if name == self._selected:
                style = f"{style} reverse"
            right_half = col > cv.w // 2
            # Right-half names sit left of their symbol (a mirror of the left half), so they
            # stay inside the ring; the other side is the fallback. A tag keeps its cell.
            near_r = col + 2 if cv.owned[row][min(col + 1, cv.w - 1)] and col + 1 < cv.w else col + 1
            near_l = col - 1 - len(label) if col >= 1 and cv.owned[row][col - 1] else col - len(label)
            spots = (near_l, near_r) if right_half else (near_r, near_l)
            for start in spots:
                if self._label_fits(cv, start, row, len(label)):
                    for i, ch in enumerate(label):
                        cv.put(start + i, row, ch, style, own=True)
                    break
        self._put_landmarks(cv)
        self.drawn = placed
        out = cv.text()
        if note is not None:
            out.append("\n")
            out.append_text(note)
        return out

    @staticmethod
    def _label_fits(cv: _Canvas, start: int, row: int, n: int) -> bool:
        """Room for a name, with a blank cell between it and any other name or symbol
        it does not touch (so "●FC1 ●Fz" never runs into "●FC1●Fz")."""
        if start < 0 or start + n > cv.w or not cv.free(start, row, n):
            return False
        before, after = start - 1, start + n
        # One neighbour is the name's own symbol (or tag); the other side must be clear.
        ends = [c for c in (before, after) if 0 <= c < cv.w and cv.owned[row][c]]
        return len(ends) <= 1

    @staticmethod
    def _nearest_free(cv: _Canvas, col: int, row: int) -> tuple[int, int] | None:
        """The free cell nearest the site, preferring one with a blank cell either side
        (two symbols side by side would leave a name between them ambiguous); any free
        cell when the map is that crowded. None only when the canvas is full."""
        fallback: tuple[int, int] | None = None
        for radius in range(0, max(cv.w, cv.h)):
            if fallback is not None and radius > 2:
                return fallback
            for dr in range(-radius, radius + 1):
                for dc in range(-radius, radius + 1):
                    if max(abs(dr), abs(dc)) != radius:
                        continue
                    c, r = col + dc, row + dr
                    if not (cv.inside(c, r) and cv.free(c, r)):
                        continue
                    if all(not cv.inside(x, r) or cv.free(x, r) for x in (c - 1, c + 1)):
                        return c, r
                    if fallback is None:
                        fallback = (c, r)
        return fallback
