"""The start gate in the app: Watch counts down to ready, sign-off is refused while
electrodes are not good unless each gets a typed reason, the log gets the ready time,
and the bell (off by default) rings exactly for ready and for a new fault.

Frames are stand-ins (tests/ui/standins.py) shown one by one with their own clock
(``wall_time``), so the countdown is exact; the gate's own logic is tested on the
simulator in tests/checks/test_ready_gate.py. Asking for a reason before signing off a
setup with faults is common practice (the log must show why a recording went ahead).
"""

from __future__ import annotations

from pathlib import Path
from typing import Any

import pytest
import standins as si

from bedside.checks.ready import Accepted
from bedside.ui.app import make_app
from bedside.ui.config import AppConfig
from bedside.ui.screens.sign_off import SignOffReasons

pytestmark = pytest.mark.asyncio


class QuietMonitor:
    """A monitor that sends nothing: the test shows each frame itself."""

    def __init__(self, *args: Any) -> None: ...

    def start(self) -> None: ...

    def stop(self) -> None: ...


async def _until(pilot: Any, cond: Any, tries: int = 100) -> bool:
    for _ in range(tries):
        await pilot.pause(0.03)
        if cond():
            return True
    return bool(cond())


def _frame(t: float, bad: tuple[str, ...] = (), check: tuple[str, ...] = ()) -> Any:
    return si.frame(bad=bad, check=check, bridge=None, wall_time=t)


def _app(tmp_path: Path, **cfg: Any) -> tuple[Any, si.MemoryRecorder]:
    recorder = si.MemoryRecorder(tmp_path / "log.yaml")
    config = AppConfig(discover=False, log_path=tmp_path / "log.yaml", technologist="JM", **cfg)
    services = si.services(recorder=recorder, make_monitor=QuietMonitor)
    return make_app(config, source=si.FixedSource(), services=services), recorder


async def _show(pilot: Any, app: Any, frame: Any) -> None:
    app.show_frame(frame)
    assert await _until(pilot, lambda: app.latest_frame is frame)


def _ready_line(app: Any) -> str:
    return str(app.views["watch"].query_one("#ready-line").render())


async def test_watch_counts_down_and_a_fault_starts_the_count_again(tmp_path: Path) -> None:
    app, recorder = _app(tmp_path, ready_hold_s=3.0)
    async with app.run_test(size=(100, 40)) as pilot:
        assert await _until(pilot, lambda: app.connection is not None)
        await _show(pilot, app, _frame(1000.0, bad=("T7",)))
        assert "not ready: waiting for T7 (each good for 3 s)" in _ready_line(app)
        await _show(pilot, app, _frame(1001.0))
        assert "ready in 3 s" in _ready_line(app)
        await _show(pilot, app, _frame(1002.0))
        assert "ready in 2 s" in _ready_line(app)
        await _show(pilot, app, _frame(1002.5, check=("O2",)))  # a fault: the count starts again
        assert "waiting for O2" in _ready_line(app)
        for t in (1003.0, 1004.0, 1005.0):
            await _show(pilot, app, _frame(t))
        assert "ready in 1 s" in _ready_line(app)
        assert recorder.ready == []
        await _show(pilot, app, _frame(1006.0))
        assert "ready to record: every scalp electrode good for 3 s" in _ready_line(app)
        assert "ready to record" in si.screen_text(app)  # on screen, not only in the widget
        assert await _until(pilot, lambda: recorder.ready == [(3.0, (), "app")])
        await _show(pilot, app, _frame(1007.0, bad=("Cz",)))
        assert "was ready; not good now: Cz" in _ready_line(app)
        await _show(pilot, app, _frame(1008.0))
        assert recorder.ready == [(3.0, (), "app")]  # the first time only, once more is no news


async def test_sign_off_is_refused_without_a_reason_for_each_electrode_not_good(tmp_path: Path) -> None:
    app, recorder = _app(tmp_path, start_view="log")
    async with app.run_test(size=(100, 40)) as pilot:
        assert await _until(pilot, lambda: app.recorder is not None and app.connection is not None)
        await _show(pilot, app, _frame(1000.0, bad=("T7",), check=("O2",)))
        await pilot.press("ctrl+o")
        assert await _until(pilot, lambda: isinstance(app.screen, SignOffReasons))
        assert await _until(pilot, lambda: "Not good now: T7, O2" in si.screen_text(app))
        await pilot.press("escape")
        assert await _until(pilot, lambda: "not signed off: electrodes are not good" in si.screen_text(app))
        assert recorder.signed == ""
        await pilot.press("ctrl+o")
        assert await _until(pilot, lambda: isinstance(app.screen, SignOffReasons))
        app.screen.query_one("#reason-0").value = "re-gelled twice, mains from the bed"
        await pilot.press("enter")  # to O2's field
        await pilot.press("enter")  # O2 has no reason yet: refused
        assert await _until(pilot, lambda: "a reason is still missing for O2" in si.screen_text(app))
        assert recorder.signed == ""
        app.screen.query_one("#reason-1").value = "drift settling, patient asleep"
        await pilot.press("enter")
        assert await _until(pilot, lambda: recorder.signed == "JM")
        assert recorder.exceptions == (Accepted("T7", "re-gelled twice, mains from the bed"),
                                       Accepted("O2", "drift settling, patient asleep"))


async def test_sign_off_with_every_electrode_good_needs_no_reason(tmp_path: Path) -> None:
    app, recorder = _app(tmp_path, start_view="log")
    async with app.run_test(size=(100, 40)) as pilot:
        assert await _until(pilot, lambda: app.recorder is not None and app.connection is not None)
        await _show(pilot, app, _frame(1000.0))
        await pilot.press("ctrl+o")
        assert await _until(pilot, lambda: recorder.signed == "JM")
        assert not isinstance(app.screen, SignOffReasons) and recorder.exceptions == ()


@pytest.mark.parametrize("bell", [True, False])
async def test_the_bell_rings_for_ready_and_new_faults_only_when_on(tmp_path: Path, bell: bool) -> None:
    script = [  # (frame, rings expected after it, in total, with the bell on)
        (_frame(1000.0), 0),
        (_frame(1001.0, bad=("T7",)), 1),   # a new fault
        (_frame(1002.0, bad=("T7",)), 1),   # the same fault: quiet
        (_frame(1003.0), 1),
        (_frame(1004.0), 1),
        (_frame(1005.0), 2),                # ready (held 2 s)
        (_frame(1006.0), 2),
        (_frame(1007.0, check=("O2",)), 3),  # a new fault again
    ]
    app, _ = _app(tmp_path, ready_hold_s=2.0, bell=bell)
    rings: list[int] = []
    app.bell = lambda: rings.append(1)  # type: ignore[method-assign]
    seen = []
    async with app.run_test(size=(100, 40)) as pilot:
        assert await _until(pilot, lambda: app.connection is not None)
        for frame, _n in script:
            await _show(pilot, app, frame)
            seen.append(len(rings))
    assert seen == ([n for _, n in script] if bell else [0] * len(script))


async def test_b_on_watch_turns_the_bell_on(tmp_path: Path) -> None:
    app, _ = _app(tmp_path)
    rings: list[int] = []
    app.bell = lambda: rings.append(1)  # type: ignore[method-assign]
    async with app.run_test(size=(100, 40)) as pilot:
        assert await _until(pilot, lambda: app.connection is not None)
        await _show(pilot, app, _frame(1000.0))
        await _show(pilot, app, _frame(1001.0, bad=("T7",)))
        assert rings == []  # off by default
        await pilot.press("b")
        assert app.bell_on
        await _show(pilot, app, _frame(1002.0, bad=("T7", "Cz")))
        assert rings == [1]
