"""The tap test in the app: ``k`` on Watch walks the electrodes, shows where each touch
landed, names a swapped pair, and hands the results to the setup log.

The stream is the simulator in-process (``SimulatedSource``) on a scenario written
here: four scalp electrodes touched in stream order from 6 s (one every 2.5 s), the C3
and C4 leads swapped — the scenario's ``tap`` and ``swap`` faults are the ground truth.
The rest of the app is the stand-ins' (tests/ui/standins.py). The stream is held until
the screen has said its first prompt, as a technologist touches only when told; it
then plays at 3× real time (the walk runs on the stream's own clock).
"""

from __future__ import annotations

import threading
import time
from pathlib import Path
from typing import Any

import pytest
import standins as si

from bedside.sim.scenario import load_scenario
from bedside.sim.source import SimulatedSource
from bedside.ui.app import make_app
from bedside.ui.config import AppConfig
from bedside.ui.screens.tap_test import TapTestScreen

SCENARIO = """\
# INVENTED: ward, bed and patient are made up.
ward: Test Ward (invented)
bed: "Bed 9"
patient: "P-9 (pseudonym, invented)"
note: "Invented test data."
stream_name: tap-view
channels: [Fp1, Fp2, C3, C4, ECG]
rate_hz: 250
duration_s: 60
loop: false
seed: 99
mains_hz: 50
faults:
  - {electrode: Fp1, kind: tap, start_s: 6, end_s: 7}
  - {electrode: Fp2, kind: tap, start_s: 8.5, end_s: 9.5}
  - {electrode: C3, kind: tap, start_s: 11, end_s: 12}
  - {electrode: C4, kind: tap, start_s: 13.5, end_s: 14.5}
  - {electrode: [C3, C4], kind: swap, start_s: 0}
"""


class HeldSource:
    """``inner`` (a Source), sending nothing until ``go`` is set."""

    def __init__(self, inner: SimulatedSource) -> None:
        self.inner, self.go = inner, threading.Event()

    @property
    def identity(self) -> Any:
        return self.inner.identity

    @property
    def channels(self) -> Any:
        return self.inner.channels

    def pull(self, timeout_s: float = 0.0) -> Any:
        if not self.go.is_set():
            time.sleep(min(timeout_s, 0.05))
            return None
        return self.inner.pull(timeout_s)

    def health(self) -> Any:
        return self.inner.health()

    def close(self) -> None:
        self.inner.close()


async def _until(pilot: Any, cond: Any, seconds: float) -> bool:
    for _ in range(int(seconds / 0.05)):
        await pilot.pause(0.05)
        if cond():
            return True
    return bool(cond())


@pytest.mark.asyncio
async def test_k_walks_the_electrodes_and_names_the_swap(tmp_path: Path) -> None:
    path = tmp_path / "tap_view.yaml"
    path.write_text(SCENARIO, encoding="utf-8")
    recorder = si.MemoryRecorder(tmp_path / "log.yaml")
    source = HeldSource(SimulatedSource(load_scenario(path), speed=3.0))
    app = make_app(AppConfig(discover=False, log_path=tmp_path / "log.yaml", technologist="JM"),
                   source=source, services=si.services(recorder=recorder))
    async with app.run_test(size=(100, 40)) as pilot:
        assert await _until(pilot, lambda: app.connection is not None and app.recorder is not None, 5)
        await pilot.press("k")
        assert await _until(pilot, lambda: isinstance(app.screen, TapTestScreen), 2)
        screen = app.screen
        assert await _until(pilot, lambda: "touch Fp1 now" in si.screen_text(app), 5)
        assert "Touch each electrode lightly" in si.screen_text(app)
        source.go.set()
        assert await _until(pilot, lambda: screen.finished, 20)
        outcomes = [(r.electrode, r.outcome, r.seen_on) for r in screen._results]
        assert outcomes == [("Fp1", "confirmed", ("Fp1",)), ("Fp2", "confirmed", ("Fp2",)),
                            ("C3", "elsewhere", ("C4",)), ("C4", "elsewhere", ("C3",))]
        text = si.screen_text(app)
        assert "2 of 4 confirmed" in text
        assert "C3 and C4 look swapped" in text
        assert await _until(pilot, lambda: len(recorder.tap_tests) == 1, 3)
        results, problems, how, timeout_s = recorder.tap_tests[0]
        assert how == "app" and timeout_s == 10.0 and [p.kind for p in problems] == ["swapped"]
        await pilot.press("escape")
        assert await _until(pilot, lambda: app.screen.name == "watch", 2)


@pytest.mark.asyncio
async def test_without_a_stream_it_says_so(tmp_path: Path) -> None:
    app = make_app(AppConfig(discover=False), services=si.services())
    async with app.run_test(size=(100, 40)) as pilot:
        await pilot.press("f3")
        await pilot.press("k")
        assert await _until(pilot, lambda: isinstance(app.screen, TapTestScreen), 2)
        assert await _until(pilot, lambda: "no stream yet" in si.screen_text(app), 2)
