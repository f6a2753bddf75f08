"""The app on a real simulated LSL stream (loopback): a scripted fault goes bad and back.

Real pieces only on the main path: the simulator's publisher (bedside.sim.publish),
the LSL reader (bedside.stream.reader.LslSource, real pylsl inlet), the checks engine
(bedside.checks.engine.Engine) with configs/quality.yaml, and the setup log
(bedside.record.session.SessionRecorder). The scenario is invented for the test: a
19-electrode 10-20 montage, mains pickup on T7 from 16 s to 24 s of stream time,
played 4× faster so the test takes seconds.
"""

from __future__ import annotations

import time
import uuid
from pathlib import Path
from typing import Any

import pytest
import standins as si

from bedside.checks.types import Level
from bedside.ui.app import make_app
from bedside.ui.config import AppConfig
from bedside.ui.services import Services
from bedside.ui.widgets.channel_table import ChannelTable

pytestmark = [pytest.mark.asyncio, pytest.mark.lsl]

SCENARIO = """\
ward: Test Ward (invented)
bed: "Bed T"
patient: "T-01 (pseudonym, invented)"
note: "Invented test data for the UI test."
stream_name: ui-live-test
channels: [Fp1, Fp2, F7, F3, Fz, F4, F8, T7, C3, Cz, C4, T8, P7, P3, Pz, P4, P8, O1, O2]
rate_hz: 250
units: microvolts
duration_s: 60
loop: false
seed: 11
mains_hz: 50
faults:
  - {electrode: T7, kind: line_noise, start_s: 16, end_s: 24, amplitude_uv: 60}
"""
SPEED = 4.0


def _services() -> Services:
    return Services()  # the real monitor (bedside.checks.monitor) and everything else real


async def test_fault_turns_bad_and_back_on_a_live_stream(tmp_path: Path) -> None:
    from bedside.sim.publish import run_in_background

    path = tmp_path / "ui_live.yaml"
    path.write_text(SCENARIO, encoding="utf-8")
    name = f"bedside-ui-{uuid.uuid4().hex[:10]}"
    log_path = tmp_path / "T-01.yaml"
    cfg = AppConfig(stream_name=name, wait_s=2.0, log_path=log_path, subject_id="T-01",
                    technologist="QA")
    with run_in_background(path, name=name, speed=SPEED):
        app = make_app(cfg, services=_services())
        seen: list[tuple[float, str]] = []
        async with app.run_test(size=(100, 40)) as pilot:
            start = time.monotonic()

            def t7() -> str:
                frame = app.latest_frame
                if frame is None:
                    return "none"
                ch = next(c for c in frame.channels if c.name == "T7")
                return ch.level_key

            # Stream time = SPEED × wall time; the fault runs 16–24 s → 4–6 s of wall time.
            while time.monotonic() - start < 14.0:
                await pilot.pause(0.1)
                state = t7()
                if not seen or seen[-1][1] != state:
                    seen.append((time.monotonic() - start, state))
                if any(s == "bad" for _, s in seen) and state == "good":
                    break
            keys = [s for _, s in seen]
            assert "bad" in keys, f"T7 never went bad: {seen}"
            first_bad = keys.index("bad")
            assert "good" in keys[:first_bad], f"T7 was not good before the fault: {seen}"
            assert "good" in keys[first_bad:], f"T7 never came back to good: {seen}"
            # On screen: the identity is pinned and the level has its symbol.
            text = si.screen_text(app)
            assert name in text
            table = app.views["watch"].query_one(ChannelTable)
            assert table.get_cell("T7", "state").plain.startswith(Level.GOOD.symbol)
            # T7 got a time to good once it was fixed.
            assert app.progress is not None and "T7" in app.progress.time_to_good_s
            await pilot.press("ctrl+q")
            await pilot.pause(0.5)
        rc: Any = app.return_code
    assert rc == 0
    saved = log_path.read_text(encoding="utf-8")
    assert "T7" in saved and "T-01" in saved
