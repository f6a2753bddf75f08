"""Impedances and the department profile in the app (issue 13, items 3 and 4): typed
values refused with the reason when they cannot be a contact, judged with the
amplifier's against the profile's limit, shown on Watch beside the live verdict, holding
the start gate; the picker (d on Watch) changes the profile and the log records it.

Limits: the profiles' (adult 5 kΩ, ICU 10 kΩ, research 50 kΩ; their sources in
configs/profiles/ and tests/checks/test_impedance_limits.py). Frames are stand-ins.
"""

from __future__ import annotations

import dataclasses
from pathlib import Path
from typing import Any

import pytest
import standins as si
from textual.widgets import Input

from bedside.ui.app import make_app
from bedside.ui.config import AppConfig
from bedside.ui.screens.profiles import ProfilePicker

pytestmark = pytest.mark.asyncio


class QuietMonitor:
    def __init__(self, *args: Any) -> None: ...

    def start(self) -> None: ...

    def stop(self) -> None: ...


class PublishingSource(si.FixedSource):
    """The stand-in cap, with an amplifier that publishes impedances (kΩ): O1 at 9."""

    def __init__(self) -> None:
        super().__init__()
        self._channels = tuple(dataclasses.replace(c, impedance_kohm=9.0 if c.name == "O1" else 2.0)
                               if c.is_scalp else c for c in self._channels)


async def _until(pilot: Any, cond: Any, tries: int = 100) -> bool:
    for _ in range(tries):
        await pilot.pause(0.03)
        if cond():
            return True
    return bool(cond())


def _app(tmp_path: Path, source: Any = None) -> tuple[Any, si.MemoryRecorder]:
    recorder = si.MemoryRecorder(tmp_path / "log.yaml")
    config = AppConfig(discover=False, log_path=tmp_path / "log.yaml", technologist="JM", start_view="log")
    services = si.services(recorder=recorder, make_monitor=QuietMonitor)
    return make_app(config, source=source or si.FixedSource(), services=services), recorder


def _text(app: Any, widget: str, view: str) -> str:
    return str(app.views[view].query_one(widget).render())


async def _type(pilot: Any, app: Any, electrode: str, kohm: str) -> None:
    log = app.views["log"]
    log.query_one("#imp-electrode", Input).value = electrode
    log.query_one("#imp-kohm", Input).value = kohm
    log.query_one("#imp-kohm", Input).focus()
    await pilot.press("enter")
    await pilot.pause(0.1)


@pytest.mark.parametrize(("typed", "words"), [
    ("5000", "5000 kΩ is over 1,000 kΩ: an open lead or a typing slip"),
    ("0", "0 kΩ is zero or less"),
    ("-2", "-2 kΩ is zero or less"),
])
async def test_implausible_entries_are_refused_with_the_reason(tmp_path: Path, typed: str, words: str) -> None:
    """Before: Cz = 5000 kΩ was accepted and said "● good"."""
    app, recorder = _app(tmp_path)
    async with app.run_test(size=(100, 40)) as pilot:
        assert await _until(pilot, lambda: app.connection is not None and app.profile is not None)
        await _type(pilot, app, "Cz", typed)
        said = _text(app, "#log-message", "log")
        assert words in said and "accepted: more than 0 and at most 1,000 kΩ" in said and "✖" in said
        assert "Cz" not in app.typed_impedances and recorder.impedances == {}
        await _type(pilot, app, "Fp3", "4")
        assert "'Fp3' is not in the stream being watched" in _text(app, "#log-message", "log")


async def test_a_typed_value_over_the_limit_shows_on_watch_and_holds_the_gate(tmp_path: Path) -> None:
    app, recorder = _app(tmp_path)
    async with app.run_test(size=(80, 24)) as pilot:
        assert await _until(pilot, lambda: app.connection is not None and app.profile is not None)
        await _type(pilot, app, "cz", "12")
        assert await _until(pilot, lambda: recorder.impedances == {"Cz": 12.0})
        assert app.impedance_verdicts["Cz"].level == "bad"
        await pilot.press("f3")
        app.show_frame(si.frame(bad=(), check=(), bridge=None, wall_time=1000.0))
        assert await _until(pilot, lambda: app.latest_frame is not None)
        line = _text(app, "#impedance-line", "watch")
        assert "limit 5 (adult)" in line and "✖ over: Cz 12" in line
        assert "Cz (impedance)" in _text(app, "#ready-line", "watch")
        assert set(app.ready_gate.blocked) == {"Cz"}
        await pilot.press("f4")
        await _type(pilot, app, "Cz", "3.5")  # re-prepared: the gate lets it go
        assert app.ready_gate.blocked == {} and app.impedance_verdicts["Cz"].level == "good"


async def test_the_amplifiers_values_and_the_picker(tmp_path: Path) -> None:
    """O1 published at 9 kΩ: over the adult 5 kΩ; within the ICU 10 kΩ but unbalanced
    against 2 kΩ elsewhere; within the research profile's 50 kΩ and its 10 kΩ margin."""
    app, recorder = _app(tmp_path, PublishingSource())
    async with app.run_test(size=(100, 40)) as pilot:
        assert await _until(pilot, lambda: app.connection is not None and app.profile is not None)
        assert app.impedance_verdicts["O1"].level == "bad" and app.impedance_verdicts["O1"].source == "amplifier"
        assert await _until(pilot, lambda: recorder.profiles[:1] == [("adult", app.profile.sha256)])
        await pilot.press("f3")
        await pilot.press("d")
        assert await _until(pilot, lambda: isinstance(app.screen, ProfilePicker))
        picker = app.screen
        names = [c[0] for c in picker.choices]
        for _ in range(names.index("icu-long-term")):
            await pilot.press("down")
        await pilot.press("enter")
        assert await _until(pilot, lambda: app.profile is not None and app.profile.name == "icu-long-term")
        assert app.impedance_verdicts["O1"].level == "check"
        assert "re-check by" in _text(app, "#impedance-line", "watch")
        assert await _until(pilot, lambda: [n for n, _ in recorder.profiles] == ["adult", "icu-long-term"])
        app._profile_chosen("research-high-density")
        assert await _until(pilot, lambda: app.profile.name == "research-high-density")
        assert app.impedance_verdicts["O1"].level == "good"


async def test_impedances_typed_into_a_resumed_log_are_judged_again(tmp_path: Path) -> None:
    """A log resumed after a restart holds the earlier session's typed impedances: the app
    takes them into its book and judges them against the profile (adult: 5 kΩ) as if
    typed now; a value typed again in this session wins (issue 13's gap)."""
    app, recorder = _app(tmp_path)
    recorder.impedances.update({"Cz": 12.0, "O1": 3.0})  # typed in the earlier session
    recorder.typed_at = 1_796_000_000.0
    async with app.run_test(size=(100, 40)) as pilot:
        assert await _until(pilot, lambda: app.recorder is not None and app.profile is not None)
        assert await _until(pilot, lambda: app.typed_impedances == {"Cz": 12.0, "O1": 3.0})
        assert await _until(pilot, lambda: "Cz" in app.impedance_verdicts)
        assert app.impedance_verdicts["Cz"].level == "bad" and app.impedance_verdicts["O1"].level != "bad"
        assert app.impedances.at == 1_796_000_000.0
        await _type(pilot, app, "Cz", "4")
        assert await _until(pilot, lambda: app.typed_impedances["Cz"] == 4.0)
        assert app.impedance_verdicts["Cz"].level != "bad"
