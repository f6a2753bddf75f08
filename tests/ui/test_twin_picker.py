"""Two outlets that cannot be told apart: the app opens its picker, says why, shows what
tells the outlets apart (uid, start time) and opens the one chosen (issue 13.6). The real
LSL side of this is tests/stream/test_twin_outlets.py."""

from __future__ import annotations

import dataclasses
from typing import Any

import pytest
import standins as si

from bedside.ui.app import TWINS_NOTE, make_app
from bedside.ui.config import AppConfig
from bedside.ui.screens.picker import StreamPicker

pytestmark = pytest.mark.asyncio


_until = si.until


async def test_the_picker_opens_the_chosen_one_of_two_equal_outlets() -> None:
    base = si.identity("twin-bed")
    a = dataclasses.replace(base, uid="aaaa1111-0000", started_wall=1_796_000_000.0)
    b = dataclasses.replace(base, uid="bbbb2222-0000", started_wall=1_796_000_060.0)
    assert a == b  # equal for the user: only the outlet differs
    opened: list[Any] = []

    def open_source(identity: Any, choices: Any) -> si.FixedSource:
        opened.append(identity)
        return si.FixedSource()

    app = make_app(AppConfig(), services=si.services(streams=[a, b], open_source=open_source))
    async with app.run_test(size=(100, 40)) as pilot:
        assert await _until(pilot, lambda: isinstance(app.screen, StreamPicker))
        assert await _until(pilot, lambda: "outlet bbbb2222" in si.screen_text(app))
        text = si.screen_text(app)
        assert "outlet aaaa1111" in text and "cannot be told apart" in text
        assert app.screen.why == TWINS_NOTE
        await pilot.press("down", "enter")
        assert await _until(pilot, lambda: app.connection is not None)
    assert [o.uid for o in opened] == ["bbbb2222-0000"]
