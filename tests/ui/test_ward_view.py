"""The ward's list in the app (``bedside ward``, issue 14 item 1): beds come and go live,
Enter opens the highlighted bed in Watch, ``w`` comes back to the list.

The ward itself (bedside.ward.Ward, real outlets) is tested in tests/ward/test_ward.py;
here a scripted ward hands the screen its summaries, as the app's stand-ins do for the
stream (tests/ui/standins.py).
"""

from __future__ import annotations

from typing import Any

import pytest
import standins as si

from bedside.ui.app import make_app
from bedside.ui.config import AppConfig
from bedside.ui.screens.ward import WardScreen
from bedside.ward import Bed, BedSummary

pytestmark = pytest.mark.asyncio


class ScriptedWard:
    """Beds as a ward reports them: bed-b appears at the third poll."""

    def __init__(self) -> None:
        self.polls = 0
        self.closed = False
        self.beds: dict[tuple[str, str, str, str], Bed] = {}

    def poll(self) -> list[BedSummary]:
        self.polls += 1
        names = ["bed-a"] + (["bed-b"] if self.polls >= 3 else [])
        for n in names:
            ident = si.identity(n)
            self.beds.setdefault((n, ident.source_id, ident.hostname, ""), Bed(ident))
        return [BedSummary("bed-a", "bed-a-sid", "ward-pc", "live", 19, 18, 0, 1, ("O2",),
                           ("O2–O1 look bridged",))] + (
            [BedSummary("bed-b", "bed-b-sid", "ward-pc", "live", 19, 19, 0, 0)] if self.polls >= 3 else [])

    def close(self) -> None:
        self.closed = True


_until = si.until


async def test_the_ward_lists_beds_as_they_come_and_opens_one_in_watch() -> None:
    ward = ScriptedWard()
    opened: list[str] = []

    def open_source(ident: Any, _choices: Any) -> si.FixedSource:
        opened.append(ident.name)
        return si.FixedSource()

    app = make_app(AppConfig(ward=True, discover=False),
                   services=si.services(make_ward=lambda: ward, open_source=open_source))
    async with app.run_test(size=(100, 30)) as pilot:
        assert await _until(pilot, lambda: isinstance(app.screen, WardScreen))
        assert await _until(pilot, lambda: "bed-a" in si.screen_text(app) and "O2–O1 look bridged" in si.screen_text(app))
        assert await _until(pilot, lambda: "bed-b" in si.screen_text(app), tries=200)  # appeared live
        assert "2 beds" in si.screen_text(app)
        await pilot.press("down", "enter")  # bed-b
        assert await _until(pilot, lambda: not isinstance(app.screen, WardScreen))
        assert await _until(pilot, lambda: opened == ["bed-b"] and app.connection is not None)
        assert app.current_view == "watch"
        await pilot.press("w")  # back to the list
        assert await _until(pilot, lambda: isinstance(app.screen, WardScreen))
        await pilot.press("ctrl+q")
        await _until(pilot, lambda: app.return_code is not None)
    assert ward.closed, "leaving the app stops the ward's monitors"
