"""The head map's own look: the three taped lines as its skeleton, every electrode
drawn even at 80×24 with the trace shown, names never run together, and a bridge as
one tag on both electrodes (bedside/ui/widgets/head_map.py)."""

from __future__ import annotations

import re

import numpy as np
import standins as si

from bedside.checks.types import ChannelQuality, Finding, Level, QualityFrame
from bedside.stream.types import ChannelInfo, Chunk, StreamIdentity
from bedside.ui.app import make_app
from bedside.ui.config import AppConfig
from bedside.ui.services import Services
from bedside.ui.widgets.head_map import HeadMap

#: A 32-channel 10-10 cap (common practice): FC/CP rows crowd the map at 80×24.
CAP_32 = ["Fp1", "Fp2", "F7", "F3", "Fz", "F4", "F8", "FC5", "FC1", "FC2", "FC6", "T7", "C3", "Cz",
          "C4", "T8", "CP5", "CP1", "CP2", "CP6", "P7", "P3", "Pz", "P4", "P8", "PO3", "PO4", "O1",
          "Oz", "O2", "AF3", "AF4"]
SYMBOLS = "●▲✖?"
#: One electrode as drawn: symbol, optional bridge tag, name (left half) — or the mirror.
_TOKEN = re.compile(rf"^(?:[{SYMBOLS}][a-z]?[A-Z][A-Za-z0-9]*|[A-Z][A-Za-z0-9]*[a-z]?[{SYMBOLS}]|"
                    rf"[{SYMBOLS}][a-z]?|[a-z]?[{SYMBOLS}]|[NILR])$")


class _Cap(si.FixedSource):
    def __init__(self) -> None:
        super().__init__()
        self._channels = tuple(ChannelInfo(n, n, "EEG", "microvolts", 1.0, True) for n in CAP_32)
        self._identity = StreamIdentity("cap-32", "EEG", "cap-32-sid", "ward-pc", 32, 250.0)

    def pull(self, timeout_s: float = 0.0) -> Chunk | None:
        t = np.arange(25) / 250.0
        return Chunk(np.tile(10 * np.sin(2 * np.pi * 10 * t)[:, None], (1, 32)), t)


def _frame() -> QualityFrame:
    chans = tuple(ChannelQuality(n, Level.BAD if n == "FC2" else Level.GOOD, {}, (), True) for n in CAP_32)
    bridge = (Finding("bridge", ("CP1", "CP2"), Level.CHECK, "CP1 and CP2 look bridged"),
              Finding("bridge", ("F3", "FC1"), Level.BAD, "F3 and FC1 look bridged"))
    return QualityFrame(1.0, 1.0, chans, bridge, si.health(), 4.0)


def _real_places() -> Services:
    """Stand-ins, but the real placement (average-head positions, the one projection)."""
    real = {k: v for k, v in vars(si.services(frames=[_frame()])).items()
            if k not in ("positions_for", "project_2d")}
    return Services(**{**real, "positions_for": Services().positions_for, "project_2d": Services().project_2d})


_until = si.until


def _tokens(text: str) -> list[str]:
    return [t for t in re.split(r"[\s┆┄·]+", text) if t]


async def test_every_electrode_drawn_and_named_apart_at_80x24_with_the_trace() -> None:
    app = make_app(AppConfig(discover=False), source=_Cap(), services=_real_places())
    async with app.run_test(size=(80, 24)) as pilot:
        hm = app.views["watch"].query_one(HeadMap)
        assert await _until(pilot, lambda: app.latest_frame is not None and len(hm.points) == 32)
        await pilot.press("t")  # the trace shown: the map has its fewest rows
        await pilot.pause(0.3)
        text = hm.render().plain
        assert set(hm.drawn) == set(CAP_32), set(CAP_32) - set(hm.drawn)
        assert len(set(hm.drawn.values())) == 32  # each its own cell
        bad = [t for t in _tokens(text) if not _TOKEN.match(t)]
        assert bad == [], (bad, text)
        # Left of the vertex drawn left of the nasion–inion line, front above back.
        assert hm.drawn["FC1"][0] < hm.drawn["Cz"][0] < hm.drawn["FC2"][0]
        assert hm.drawn["FC1"][1] <= hm.drawn["Cz"][1] <= hm.drawn["CP1"][1]
        assert "✖" in text  # FC2's verdict by symbol


async def test_a_bridge_is_one_tag_on_both_electrodes() -> None:
    app = make_app(AppConfig(discover=False), source=_Cap(), services=_real_places())
    async with app.run_test(size=(200, 60)) as pilot:
        hm = app.views["watch"].query_one(HeadMap)
        assert await _until(pilot, lambda: app.latest_frame is not None and len(hm.drawn) == 32)
        await pilot.pause(0.2)
        rows = hm.render().plain.splitlines()

        def tag_of(name: str) -> str:
            col, row = hm.drawn[name]
            beside = {rows[row][c] for c in (col - 1, col + 1) if 0 <= c < len(rows[row])}
            tags = beside & set("abcdefghijkmnpqrstuvwxyz")
            assert len(tags) == 1, (name, rows[row])
            return tags.pop()

        assert tag_of("CP1") == tag_of("CP2") == "a"  # the frame's first bridge
        assert tag_of("F3") == tag_of("FC1") == "b"
        # No line drawn between them (the old double line), and the findings say the tags.
        assert "═" not in "\n".join(rows)
        screen = si.screen_text(app)
        assert "bridge a CP1 + CP2" in screen and "bridge b F3 + FC1" in screen


async def test_measure_and_watch_draw_one_skeleton() -> None:
    """The three taped lines and their landmarks on both views (one HeadMap, one picture)."""
    watch = HeadMap()
    measure = HeadMap(marks_mode=True)
    points = {n: si.xy(n) for n in si.NAMES_1020}
    pictures = []
    for hm in (watch, measure):
        app = make_app(AppConfig(discover=False), services=si.services())
        async with app.run_test(size=(100, 40)) as pilot:
            await app.screen.mount(hm)
            hm.styles.width, hm.styles.height = 60, 20
            hm.set_points(points)
            await pilot.pause(0.1)
            pictures.append(hm.render().plain)
    for picture in pictures:
        for mark in ("N", "I", "L", "R", "┆", "┄", "·"):
            assert mark in picture, (mark, picture)
    # The same skeleton: with the electrodes' cells blanked, the two pictures are one.
    def skeleton(picture: str) -> str:
        return re.sub(r"[^\s┆┄·NILR]", " ", picture)
    assert skeleton(pictures[0]) == skeleton(pictures[1])
    assert skeleton(pictures[0]).count("┆") > 5 and skeleton(pictures[0]).count("┄") > 10
