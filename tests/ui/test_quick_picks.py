"""Two quick stream picks in the app never leave two monitors running, and no frame of
the replaced stream is shown (issue 15: the connect worker that was superseded went on).

Each stand-in monitor's frames carry its number (``CountingMonitor.wall_time``), so the
frame the app shows names the monitor that sent it.
"""

from __future__ import annotations

import standins as si

from bedside.ui.app import make_app
from bedside.ui.config import AppConfig


async def test_two_quick_picks_leave_one_monitor_and_show_only_the_last() -> None:
    si.CountingMonitor.reset()
    opener = si.Opener(delay_s=0.3)  # opening an inlet takes a moment
    services = si.services(open_source=opener,
                           make_monitor=lambda src, eng, cb, hz: si.CountingMonitor(src, eng, cb, hz))
    app = make_app(AppConfig(discover=False), services=services)
    a, b = si.identity("bed-quick-a"), si.identity("bed-quick-b")
    async with app.run_test(size=(120, 40)) as pilot:
        app._picked(a)  # the picker's answer, then a second one while A is still opening
        await pilot.pause(0.1)
        app._picked(b)
        assert await si.until(pilot, lambda: app.connection is not None and app.latest_frame is not None)
        assert app.connection.identity == b
        shown = []
        for _ in range(12):
            await pilot.pause(0.05)
            assert app.latest_frame is not None
            shown.append(app.latest_frame.wall_time)
        made = si.CountingMonitor.made
        live = [m for m in made if m.started and not m.stopped]
        assert si.CountingMonitor.most == 1
        assert [m.source.identity.name for m in live] == ["bed-quick-b"]
        mine = made.index(live[0])
        assert {int((t - 1000.0) // 1000) for t in shown} == {mine}  # B's frames only
        assert all(src.closed for src in opener.opened if src.identity.name == "bed-quick-a")
        await pilot.press("ctrl+q")
    assert si.CountingMonitor.running == 0
