"""What the app says to a person at the bedside: its own terms, counted right, only what is known."""

from __future__ import annotations

import dataclasses

import pytest
import standins as si
from textual.widgets import Input

from bedside.ui.app import make_app
from bedside.ui.config import AppConfig
from bedside.ui.screens.measure import in_app_terms
from bedside.ui.screens.picker import StreamPicker, streams_visible


async def _until(pilot, cond, tries: int = 80) -> bool:  # type: ignore[no-untyped-def]
    for _ in range(tries):
        await pilot.pause(0.05)
        if cond():
            return True
    return bool(cond())


def test_counts_read_right() -> None:
    assert streams_visible(1) == "1 stream is visible"
    assert streams_visible(3) == "3 streams are visible"


def test_placement_messages_lose_the_command_options() -> None:
    text = ("nasion–inion must be a number (the unit goes in --unit); got 'abc'; "
            "give all three in one unit — 36 cm here, or all three in millimetres with --unit mm")
    said = in_app_terms(text)
    assert "--" not in said
    assert "choose the unit above" in said and "with the unit set to mm" in said


@pytest.mark.asyncio
async def test_measure_error_names_no_command_option() -> None:
    """The real placement messages (bedside.placement.validate), as the form shows them."""
    app = make_app(AppConfig(discover=False, start_view="measure"))
    async with app.run_test(size=(120, 40)) as pilot:
        app.screen.query_one("#ni", Input).value = "360"
        app.screen.query_one("#pa", Input).value = "35"
        app.screen.query_one("#circ", Input).value = "56"
        assert await _until(pilot, lambda: "✖" in si.screen_text(app))
        assert "--unit" not in si.screen_text(app)


@pytest.mark.asyncio
async def test_picker_marks_the_stream_being_watched() -> None:
    a, b = si.identity("bed-a"), si.identity("bed-b")
    app = make_app(AppConfig(), services=si.services(streams=[a, b]))
    async with app.run_test(size=(100, 40)) as pilot:
        assert await _until(pilot, lambda: isinstance(app.screen, StreamPicker))
        await pilot.press("down", "enter")
        assert await _until(pilot, lambda: app.connection is not None)
        app.identity = b
        app._pending_pick = ([a, b], "", False)
        app._open_picker()
        assert await _until(pilot, lambda: "watching now" in si.screen_text(app))
        line = next(ln for ln in si.screen_text(app).splitlines() if "watching now" in ln)
        assert "bed-b" in line and "bed-a" not in line
        assert "2 streams are visible" in si.screen_text(app)


@pytest.mark.asyncio
async def test_spectrum_marks_mains_only_once_detected() -> None:
    """Before mains is detected the spectrum marks no 50/60 Hz lines (none is known)."""
    app = make_app(AppConfig(discover=False), source=si.FixedSource(), services=si.services())
    async with app.run_test(size=(100, 40)) as pilot:
        assert await _until(pilot, lambda: app.latest_frame is not None)
        assert app.mains_hz() == (50.0,)  # the stand-in frame says 50 Hz
        frame = app.latest_frame
        assert frame is not None
        app.latest_frame = dataclasses.replace(frame, mains_hz=None)
        assert app.mains_hz() == ()


@pytest.mark.asyncio
async def test_digits_never_switch_views() -> None:
    """A digit typed with the focus outside an input stays a digit: the view does not jump
    (F2/F3/F4 switch views; F2 is Measure, so "2" must not mean Watch)."""
    app = make_app(AppConfig(discover=False, start_view="measure"))
    async with app.run_test(size=(100, 40)) as pilot:
        await pilot.press("escape")  # the focus leaves the form
        for key in ("1", "2", "3"):
            await pilot.press(key)
            await pilot.pause(0.05)
            assert app.screen.name == "measure", key
        await pilot.press("f3")
        assert await _until(pilot, lambda: app.screen.name == "watch")
