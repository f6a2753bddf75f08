"""The stream picker opens as soon as there is something to choose and fills as more
streams answer (issue 17, item 14: it took seconds after "looking for streams…").

Bounds are counted in the look's polls (stand-in look) or set against a look made
deliberately long (real outlets: a 30-s look must not hold the picker back), never a
tight wall-clock figure. The ambiguity rule stays: one stream is pinned only once the
full look has passed (a second bed's outlet may answer later); two heard at once can
never become one, so the picker need not wait.
"""

from __future__ import annotations

import sys
import time
from pathlib import Path

import pytest
import standins as si

from bedside.ui.app import make_app
from bedside.ui.config import AppConfig
from bedside.ui.screens.picker import StreamPicker

sys.path.insert(0, str(Path(__file__).parents[1] / "stream"))
from outlets import Feeder, make_info, unique_name  # noqa: E402

pytestmark = pytest.mark.asyncio


_until = si.until


async def test_two_beds_heard_open_the_picker_at_that_poll_and_it_fills() -> None:
    a, b, c = si.identity("bed-a"), si.identity("bed-b"), si.identity("bed-c")
    # The 4th poll waits until the picker is open: the bound below does not depend on
    # how fast this machine's UI thread answers the 3rd.
    look = si.ScriptedLook([[], [a], [a, b], [a, b, c], [a, b, c], [a, b, c]], hold_after=3)
    opened_at: list[int] = []
    app = make_app(AppConfig(wait_s=30.0), services=si.services(look_for_streams=lambda: look))
    async with app.run_test(size=(100, 40)) as pilot:
        def opened() -> bool:
            if isinstance(app.screen, StreamPicker) and not opened_at:
                opened_at.append(look.polls)
                look.release()
            return bool(opened_at)

        assert await _until(pilot, opened)
        picker = app.screen
        assert isinstance(picker, StreamPicker)
        # Opened on the poll that heard the second bed (3), or the next (the message is
        # on its way while the look polls on); never after the look settled (6).
        assert opened_at[0] <= 4, opened_at
        assert await _until(pilot, lambda: picker.streams == [a, b, c] and not picker.still_looking)
        assert await _until(pilot, lambda: "bed-c" in si.screen_text(app))
        assert "still looking" not in si.screen_text(app)
        assert app.connection is None, "nothing is pinned while the technologist chooses"
        await pilot.press("down", "enter")  # bed-b
        assert await _until(pilot, lambda: app.connection is not None)
        assert look.closed, "the look ends with the choice"


async def test_p_opens_the_picker_at_the_first_poll_even_before_any_answer() -> None:
    a = si.identity("bed-a")
    # The 2nd poll waits until the picker is open (see above).
    look = si.ScriptedLook([[], [], [a]], hold_after=1)
    app = make_app(AppConfig(discover=False), services=si.services(look_for_streams=lambda: look))
    opened_at: list[int] = []
    async with app.run_test(size=(100, 40)) as pilot:
        await pilot.press("p")

        def opened() -> bool:
            if isinstance(app.screen, StreamPicker) and not opened_at:
                opened_at.append(look.polls)
                look.release()
            return bool(opened_at)

        assert await _until(pilot, opened)
        assert opened_at[0] <= 2, opened_at  # the first poll's answer (the next is held until then)
        assert await _until(pilot, lambda: "bed-a" in si.screen_text(app))
        await pilot.press("escape")
        assert await _until(pilot, lambda: not isinstance(app.screen, StreamPicker))
        assert await _until(pilot, lambda: look.closed)


async def test_one_stream_is_pinned_only_once_the_look_has_settled() -> None:
    a = si.identity("bed-a")
    look = si.ScriptedLook([[a], [a], [a], [a]])
    app = make_app(AppConfig(), services=si.services(look_for_streams=lambda: look))
    async with app.run_test(size=(100, 40)) as pilot:
        assert await _until(pilot, lambda: app.connection is not None)
        assert look.polls >= 4, "pinned before the look had settled"
        assert not isinstance(app.screen, StreamPicker)


@pytest.mark.lsl
async def test_real_outlets_fill_the_picker_long_before_the_look_ends() -> None:
    """Two real outlets (liblsl on loopback; tests/lsl_api.cfg keeps discovery on this
    machine): with a 30-s look the picker lists both well within a third of it, and a
    third outlet started while it is open joins the list. The previous one-shot look
    returned only after its full wait (resolve_streams(wait_time=30))."""
    wait_s = 30.0
    first = [Feeder(make_info(unique_name("bed-pick"))) for _ in range(2)]
    made = list(first)
    try:
        app = make_app(AppConfig(wait_s=wait_s))
        async with app.run_test(size=(100, 40)) as pilot:
            start = time.monotonic()
            names = {f.info.name() for f in first}

            def listed(want: set[str]) -> bool:
                scr = app.screen
                return isinstance(scr, StreamPicker) and want <= {s.name for s in scr.streams}

            patience = int(wait_s / 3 / 0.05)
            assert await _until(pilot, lambda: listed(names), tries=patience)
            assert time.monotonic() - start < wait_s / 3
            picker = app.screen
            assert isinstance(picker, StreamPicker) and picker.still_looking
            late = Feeder(make_info(unique_name("bed-pick-late")))
            made.append(late)
            assert await _until(pilot, lambda: listed(names | {late.info.name()}), tries=patience)
            assert app.connection is None
            await pilot.press("escape")
            assert await _until(pilot, lambda: not app.live.looking)
    finally:
        for f in made:
            f.close()
