"""Long recordings (issue 14 item 3): trends, re-check alerts, skin-check reminders.

A scripted scenario on a simulated clock: Cz good for 15 min, then bad for 15 min, good
again; O2 never good (still being set up: no alert, it never degraded). Checked by hand
arithmetic against the script (the reference here is the script itself: what share of
each 10-min bin was good, when the alert is due), through the pure keepers, the real
recorder and its log, and the printable report (parsed with the standard library's
html.parser).
"""

from __future__ import annotations

from html.parser import HTMLParser
from pathlib import Path

import pytest
from record_factories import FakeClock, make_frame

from bedside.checks.settings import LongTermSettings, load_quality
from bedside.checks.types import Level
from bedside.record.html import render_report
from bedside.record.log import load_log
from bedside.record.session import SessionRecorder
from bedside.record.trends import SKIN_CAUTION, AlertKeeper, SkinReminder, TrendKeeper

STEP_S = 2.0


def _level(name: str, t: float) -> Level:
    if name == "O2":
        return Level.BAD
    return Level.BAD if 900.0 <= t < 1800.0 else Level.GOOD


def _frames(minutes: float):  # type: ignore[no-untyped-def]
    for k in range(int(minutes * 60 / STEP_S)):
        t = k * STEP_S
        yield t, make_frame(1_796_000_000.0 + t, {n: _level(n, t) for n in ("Cz", "O2")})


def test_trend_bins_hold_the_share_of_time_good() -> None:
    keeper = TrendKeeper(600.0)
    bins = []
    for t, frame in _frames(40):
        bins += keeper.feed(frame, t)
    bins += keeper.close()
    cz = [b for b in bins if b.electrode == "Cz"]
    # 0-10 min all good; 10-20: good until 15 (half); 20-30 bad; 30-40 good again.
    # The first frame of the recording has no time before it (2 s of 600 s).
    assert [b.start_s for b in cz] == [0.0, 600.0, 1200.0, 1800.0]
    assert [round(b.good_fraction, 2) for b in cz] == [1.0, 0.5, 0.0, 1.0]
    assert all(b.good_fraction == 0.0 for b in bins if b.electrode == "O2")
    assert all(b.mains_uv is None for b in cz)  # the factory's frames carry no mains metric


def test_an_alert_when_a_good_electrode_stays_degraded() -> None:
    keeper = AlertKeeper(600.0)
    alerts = [(t, a) for t, frame in _frames(40) for a in keeper.feed(frame, t)]
    # Cz went bad at 15 min: the alert is due at 25 min, once; O2 was never good.
    assert [(t, a.electrode) for t, a in alerts] == [(1500.0, "Cz")]
    assert "re-check Cz: not good for 10 min (bad" in alerts[0][1].text()


def test_skin_reminder_every_interval_with_the_caution() -> None:
    reminder = SkinReminder(3600.0)
    got = [(t, r) for t in range(0, 3 * 3600 + 1, 60) if (r := reminder.feed(float(t)))]
    assert [t for t, _ in got] == [3600, 7200, 10800]
    assert got[0][1].startswith("1 h of recording") and SKIN_CAUTION in got[0][1]
    assert "local policy" in SKIN_CAUTION


def test_the_recorder_keeps_trends_and_alerts_and_the_report_draws_them(tmp_path: Path) -> None:
    clock = FakeClock(1_796_000_000.0)
    path = tmp_path / "W3-017.yaml"
    long_term = LongTermSettings(trend_bin_s=600.0, alert_after_s=600.0, skin_check_s=1800.0)
    rec = SessionRecorder.open(path, subject_id="W3-017", clock=clock, long_term=long_term)
    try:
        for t, frame in _frames(40):
            clock.now = 1_796_000_000.0 + t
            rec.on_frame(frame)
        rec.save_now()
        during = load_log(path)  # base + journal, while open
        assert [b.start_s for b in during.trends if b.electrode == "Cz"] == [0.0, 600.0, 1200.0]
    finally:
        rec.close()
    saved = load_log(path)
    assert len([b for b in saved.trends if b.electrode == "Cz"]) == 4  # the last bin, at close
    alerts = [e.detail for e in saved.events if e.kind == "alert"]
    assert alerts == ["re-check Cz: not good for 10 min (bad: Cz: line noise 18 dB over its flanks)"]
    skin = [e for e in saved.events if e.kind == "skin_check"]
    assert len(skin) == 1 and "local policy" in skin[0].detail
    html = render_report(saved)

    class Svgs(HTMLParser):
        def __init__(self) -> None:
            super().__init__()
            self.labels: list[str] = []
            self.heads: list[str] = []
            self._h2 = False

        def handle_starttag(self, tag: str, attrs: list[tuple[str, str | None]]) -> None:
            if tag == "svg":
                self.labels.append(dict(attrs).get("aria-label") or "")
            self._h2 = tag == "h2"

        def handle_data(self, data: str) -> None:
            if self._h2:
                self.heads.append(data)
                self._h2 = False

    p = Svgs()
    p.feed(html)
    assert "Trends over the recording" in p.heads
    assert {"Cz: share of time good", "Cz: mains", "Cz: drift", "O2: share of time good"} <= set(p.labels)


def test_bad_long_term_settings_are_refused() -> None:
    with pytest.raises(ValueError):
        TrendKeeper(0.0)
    with pytest.raises(ValueError):
        AlertKeeper(-1.0)
    assert load_quality().long_term.alert_after_s == 600.0
