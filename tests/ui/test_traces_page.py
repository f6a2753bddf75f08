"""The page of traces (``e`` on Watch): every scalp channel at a fixed sensitivity.

The derivations come from the core (bedside.montage, checked against ACNS Guideline 3
in tests/test_montage.py); here: what the page shows of them, the fixed scale, the
selection and its verdict, paging at 256 channels and scrolling at 80×24.
"""

from __future__ import annotations

from typing import Any

import numpy as np
import standins as si

from bedside.checks.types import ChannelQuality, Level, QualityFrame
from bedside.stream.types import ChannelInfo, Chunk, StreamIdentity
from bedside.ui.app import make_app
from bedside.ui.config import AppConfig
from bedside.ui.plots import lane_lines
from bedside.ui.screens.traces import MONTAGE_WORDS, MONTAGES, TracesScreen
from bedside.ui.widgets.channel_table import ChannelTable

_BRAILLE_DOTS = (0x01, 0x02, 0x04, 0x40)  # left column, dot rows 1-4 (Unicode braille order)


def _dot_rows(lines: list[str], col: int) -> list[int]:
    """The dot rows lit in the left dot column of text column ``col`` (top = 0)."""
    lit = []
    for r, line in enumerate(lines):
        bits = ord(line[col]) - 0x2800
        lit += [4 * r + k for k, b in enumerate(_BRAILLE_DOTS) if bits & b]
    return lit


def test_the_scale_is_fixed_not_fitted() -> None:
    """A step of +A µV lifts the trace A / (µV per row) text rows (4 dots a row), whatever
    its size: the page is never auto-scaled (a quiet and a loud channel differ)."""
    page = 1000
    for amplitude, uv_per_row, rows in ((50.0, 50.0, 4), (25.0, 50.0, 4), (100.0, 20.0, 4)):
        x = np.zeros(page)
        x[page // 2 + 1:] = amplitude  # just over half the page at 0 µV: the median is 0
        lines, clipped = lane_lines(x, page, 40, rows, uv_per_row)
        mid = 2 * rows  # dot row of the median (0 µV)
        low, high = _dot_rows(lines, 2), _dot_rows(lines, 37)
        assert low == [mid]
        want = mid - amplitude / uv_per_row * 4.0
        if want >= 0:
            assert high == [int(np.floor(want))] and not clipped
        else:
            assert high == [0] and clipped  # beyond the lane: drawn at its edge, and said


def test_older_than_the_buffer_is_blank_on_the_left() -> None:
    lines, _ = lane_lines(np.sin(np.arange(400)), 1000, 50, 1, 1.0)
    assert set(lines[0][:29]) == {chr(0x2800)} and lines[0][-1] != chr(0x2800)


def test_the_pages_montages_are_the_cores() -> None:
    from bedside.montage import MONTAGE_LABEL
    from bedside.montage import MONTAGES as CORE

    assert MONTAGES == CORE and MONTAGE_WORDS == MONTAGE_LABEL


class _Alpha(si.FixedSource):
    """4 s of a 10 Hz rhythm, its phase a little different per channel; T7 with 200 µV of mains."""

    def __init__(self, chans: tuple[ChannelInfo, ...] | None = None) -> None:
        super().__init__()
        if chans is not None:
            self._channels = chans
            self._identity = StreamIdentity("dense-cap", "EEG", "dense-sid", "lab", len(chans), 250.0)
        self._sent = False

    def pull(self, timeout_s: float = 0.0) -> Chunk | None:
        if self._sent:
            return None
        self._sent = True
        t = np.arange(1000) / 250.0
        n = len(self._channels)
        x = 15 * np.sin(2 * np.pi * 10 * t[:, None] + 0.1 * np.arange(n)[None, :])
        names = [c.name for c in self._channels]
        if "T7" in names:
            x[:, names.index("T7")] += 200 * np.sin(2 * np.pi * 50 * t)
        return Chunk(x, t)


_until = si.until


def _page(app: Any) -> TracesScreen:
    assert isinstance(app.screen, TracesScreen)
    return app.screen


async def test_the_page_from_watch_and_back() -> None:
    app = make_app(AppConfig(discover=False), source=_Alpha(), services=si.services(frames=[si.frame()]))
    async with app.run_test(size=(120, 40)) as pilot:
        assert await _until(pilot, lambda: app.latest_frame is not None)
        app.views["watch"].query_one(ChannelTable).select_name("T7")
        await pilot.pause(0.1)
        await pilot.press("e")
        assert await _until(pilot, lambda: isinstance(app.screen, TracesScreen) and app.screen._page is not None)
        page = _page(app)
        text = si.screen_text(app)
        # Longitudinal bipolar first, every chain row of the 10-20 standin, in order.
        assert "longitudinal bipolar · 50 µV/row · 10 s page" in text
        assert [d.label for d in page.plan.derivations][:4] == ["Fp1-F7", "F7-T7", "T7-P7", "P7-O1"]
        # The selected electrode's verdict in full, and each row's electrodes' symbols.
        assert "▶ T7 ✖ bad: mains 24.0 µV" in text
        assert "●✖ F7-T7" in text and "✖● T7-P7" in text and "●▲ P8-O2" in text
        assert page.plan.derivations[page.cursor].label == "F7-T7"  # first row reading T7
        # 200 µV of mains on T7 leaves a 50 µV row: the page says so instead of rescaling.
        assert await _until(pilot, lambda: "2 clipped" in si.screen_text(app))
        # One text row a lane here (18 rows in 35 lines): ±250 µV at 500 µV/row holds it.
        assert _page(app)._page.request.lane_rows == 1  # type: ignore[union-attr]
        await pilot.press(*["minus"] * 6)
        assert await _until(pilot, lambda: "500 µV/row" in si.screen_text(app) and "clipped" not in si.screen_text(app))
        await pilot.press("plus")
        assert await _until(pilot, lambda: "300 µV/row" in si.screen_text(app) and "2 clipped" in si.screen_text(app))
        for montage in ("transverse bipolar", "as recorded", "average reference", "longitudinal bipolar"):
            await pilot.press("m")
            assert await _until(pilot, lambda m=montage: f"{m} · 300 µV/row" in si.screen_text(app)), (
                montage, si.screen_text(app).splitlines()[1])
        await pilot.press("m", "m")  # as recorded: one row per scalp channel, ECG left out
        assert await _until(pilot, lambda: [d.label for d in _page(app).plan.derivations] == list(si.NAMES_1020))
        await pilot.press("down")
        assert _page(app).selected == "T8"  # the row after T7 (stream order)
        await pilot.press("escape")
        assert await _until(pilot, lambda: app.views["watch"].selected == "T8")


def _numbered_cap(n: int) -> tuple[list[str], tuple[ChannelInfo, ...], Any]:
    """An app on a cap of n channels E1…En (no 10-20 names), one good frame shown."""
    names = [f"E{i + 1}" for i in range(n)]
    chans = tuple(ChannelInfo(c, c, "EEG", "microvolts", 1.0, True) for c in names)
    frame = QualityFrame(1.0, 1.0, tuple(ChannelQuality(c, Level.GOOD, {}, (), True) for c in names),
                         (), si.health(), 4.0)
    app = make_app(AppConfig(discover=False), source=_Alpha(chans), services=si.services(frames=[frame]))
    return names, chans, app


async def test_256_channels_are_paged() -> None:
    names, chans, app = _numbered_cap(256)
    async with app.run_test(size=(100, 40)) as pilot:
        assert await _until(pilot, lambda: app.latest_frame is not None)
        await pilot.press("e")
        assert await _until(pilot, lambda: isinstance(app.screen, TracesScreen) and app.screen._page is not None)
        # No 10-20 names: no chain can be drawn (the plan says which pairs it lacks), so
        # the page starts as recorded.
        chains = app.services.plan_montage(names, [True] * 256, "longitudinal")
        assert chains.derivations == () and "Fp1-F7 (no Fp1, F7)" in chains.missing
        assert _page(app).montage == "recorded"
        shown = len(_page(app)._page.lanes)
        assert 20 <= shown < 256
        assert f"rows 1–{shown} of 256" in si.screen_text(app)
        await pilot.press("pagedown")
        assert await _until(pilot, lambda: f"rows {shown + 1}–{2 * shown} of 256" in si.screen_text(app))
        assert _page(app).selected == f"E{shown + 1}"


async def test_at_80x24_the_page_scrolls() -> None:
    names, chans, app = _numbered_cap(40)
    async with app.run_test(size=(80, 24)) as pilot:
        assert await _until(pilot, lambda: app.latest_frame is not None)
        await pilot.press("e")
        assert await _until(pilot, lambda: isinstance(app.screen, TracesScreen) and app.screen._page is not None)
        shown = len(_page(app)._page.lanes)  # type: ignore[union-attr]
        assert 10 <= shown < 40  # forty rows do not fit in 24 lines
        await pilot.press(*["down"] * 39)
        assert await _until(pilot, lambda: "of 40" in si.screen_text(app) and " E40 " in si.screen_text(app))
        assert _page(app).first == 40 - shown and _page(app).selected == "E40"
        text = si.screen_text(app)
        assert " E1 " not in text  # scrolled off the top
        assert "f4 Log" in text.splitlines()[-1]  # the views' keys still in the footer
