"""The channels screen on a real LSL stream: a change applied, saved, and used again by
the app and by ``bedside check`` (one store per source_id).

Real pieces throughout: the demo publisher on loopback LSL (a unique name and
source_id), the reader (``LslSource``, reopened with the new channel set), the engine
and monitor, and the store of choices under this test's XDG_STATE_HOME. Types are BIDS
channels.tsv types (BIDS 1.11, EEG chapter).
"""

from __future__ import annotations

import json
import uuid
from pathlib import Path
from typing import Any

import pytest
import standins as si

from bedside.cli import main
from bedside.sim.publish import Publisher
from bedside.stream.channel_map import saved_choices
from bedside.ui.app import make_app
from bedside.ui.config import AppConfig
from bedside.ui.screens.channels import ChannelsScreen
from bedside.ui.services import Services

pytestmark = [pytest.mark.asyncio, pytest.mark.lsl]


async def _until(pilot: Any, cond: Any, tries: int = 200) -> bool:
    return await si.until(pilot, cond, tries)


def _app(name: str) -> Any:
    return make_app(AppConfig(stream_name=name, wait_s=1.5, confirm_channels=True),
                    services=Services(open_recorder=None))


async def test_a_change_is_applied_saved_and_used_again(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch, capsys: pytest.CaptureFixture[str]
) -> None:
    monkeypatch.setenv("XDG_STATE_HOME", str(tmp_path / "state"))
    name = f"bedside-chan-{uuid.uuid4().hex[:10]}"
    sid = f"sid-{name}"
    with Publisher("ward_demo", name=name, source_id=sid, duration_s=60.0).start():
        app = _app(name)
        async with app.run_test(size=(110, 40)) as pilot:
            assert await _until(pilot, lambda: si.confirm_open(app))
            first = app.connection
            assert first is not None and first.channels[0].label == "Fp1"
            await si.edit_channel(pilot, 0, name="LOC", kind="EOG")
            assert await _until(pilot, lambda: "1 changed, not applied yet" in si.screen_text(app))
            await pilot.press("a")
            assert await _until(pilot, lambda: app.connection is not None and app.connection is not first)
            conn = app.connection
            fp1 = conn.channels[0]
            assert (fp1.label, fp1.name, fp1.kind, fp1.is_scalp) == ("Fp1", "LOC", "EOG", False)
            # A new engine on the new channel set: LOC is no scalp electrode there.
            assert conn.engine is not first.engine and not conn.engine.scalp[0]
            assert await _until(pilot, lambda: app.latest_frame is not None
                                and app.latest_frame.channels[0].name == "LOC")
            assert not app.latest_frame.channels[0].is_scalp
            saved = saved_choices(sid)
            assert saved is not None and (saved["Fp1"].type, saved["Fp1"].name) == ("EOG", "LOC")
            await pilot.press("ctrl+q")
            await pilot.pause(0.5)
        # The app again, on the same amplifier: used, not asked.
        again = _app(name)
        async with again.run_test(size=(110, 40)) as pilot:
            assert await _until(pilot, lambda: again.connection is not None)
            assert (again.connection.channels[0].name, again.connection.channels[0].kind) == ("LOC", "EOG")
            await pilot.pause(0.3)
            assert not isinstance(again.screen, ChannelsScreen)
            await pilot.press("ctrl+q")
            await pilot.pause(0.5)
        # And `bedside check` on that amplifier reads the same saved choice.
        code = main(["check", "--stream", name, "--seconds", "3", "--wait", "1.5", "--format", "json"])
    out = json.loads(capsys.readouterr().out)
    assert code in (0, 1)
    ch = {c["label"]: c for c in out["channels"]}
    assert (ch["Fp1"]["name"], ch["Fp1"]["type"]) == ("LOC", "EOG")
