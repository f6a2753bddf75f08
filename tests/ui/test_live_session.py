"""The live session (bedside.ui.live) on its own, without Textual: generations, quick
picks, reconnect, the monitor's own stop, close.

The stand-in monitors count how many run at once; frames name the stream and the
generation that sent them, so a frame from a replaced connection would show.
"""

from __future__ import annotations

import subprocess
import sys
import threading
import time
from collections.abc import Callable
from typing import Any

import standins as si

from bedside.checks.types import QualityFrame
from bedside.ui.config import AppConfig
from bedside.ui.live import (
    Connected,
    ConnectFailed,
    LiveSession,
    MonitorStopped,
    ReconnectRefused,
)
from bedside.ui.look import StreamsFound


class Harness:
    """A LiveSession with stand-in services; events and frames kept in arrival order."""

    def __init__(self, delay_s: float = 0.0, fail_after: int | None = None) -> None:
        si.CountingMonitor.reset()
        self.opener = si.Opener(delay_s)
        services = si.services(
            open_source=self.opener, load_profile=lambda name: None,
            make_monitor=lambda src, eng, cb, hz: si.CountingMonitor(src, eng, cb, hz, fail_after))
        self.events: list[Any] = []
        self.frames: list[int] = []  # the generation of each frame, in arrival order
        self.lock = threading.Lock()
        self.session = LiveSession(services, AppConfig(), self._post, frame_feed=self._feed, display=si.Display)

    def _post(self, event: Any) -> None:
        with self.lock:
            self.events.append(event)

    def _feed(self, generation: int) -> Callable[[QualityFrame], None]:
        def on_frame(frame: QualityFrame) -> None:
            with self.lock:
                self.frames.append(generation)

        return on_frame

    def wait_for(self, kind: type, timeout_s: float = 5.0) -> list[Any]:
        assert si.wait_until(lambda: any(isinstance(e, kind) for e in self.events), timeout_s), self.events
        return [e for e in self.events if isinstance(e, kind)]


def test_two_quick_picks_leave_one_monitor_and_no_old_frames() -> None:
    h = Harness(delay_s=0.15)
    s = h.session
    g1 = s.connect(si.identity("bed-a"), None, "adult")
    time.sleep(0.2)  # bed A's source is open and its monitor has started or is starting
    g2 = s.connect(si.identity("bed-b"), None, "adult")
    g3 = s.connect(si.identity("bed-c"), None, "adult")
    assert g1 < g2 < g3 == s.generation
    connected = h.wait_for(Connected)
    assert si.wait_until(lambda: any(e.generation == g3 for e in h.events if isinstance(e, Connected)))
    time.sleep(0.2)
    # Never two monitors at once; the one left running is the last pick's.
    assert si.CountingMonitor.most == 1
    live = [m for m in si.CountingMonitor.made if m.started and not m.stopped]
    assert [m.source.identity.name for m in live] == ["bed-c"]
    # The superseded pick (B) started no monitor at all, and its source was closed.
    assert "bed-b" not in {m.source.identity.name for m in si.CountingMonitor.made if m.started}
    assert all(src.closed for src in h.opener.opened if src.identity.name != "bed-c")
    # Only the newest request's answers count.
    connected = [e for e in h.events if isinstance(e, Connected)]
    assert [s.accept(e) for e in connected] == [e.generation == g3 for e in connected]
    # Frames: each generation's come in one block, never interleaved, the last pick's last.
    gens = list(h.frames)
    assert gens == sorted(gens) and gens[-1] == g3
    assert not s.is_current(g1) and s.is_current(g3) and s.is_current(None)
    s.close()


def test_a_superseded_open_starts_nothing() -> None:
    h = Harness(delay_s=0.3)
    s = h.session
    s.connect(si.identity("bed-slow"), None, "adult")
    time.sleep(0.05)  # the worker is inside open_source for bed-slow
    g2 = s.connect(si.identity("bed-next"), None, "adult")
    h.wait_for(Connected)
    assert [e.generation for e in h.events if isinstance(e, Connected)] == [g2]
    assert [m.source.identity.name for m in si.CountingMonitor.made] == ["bed-next"]
    slow = [src for src in h.opener.opened if src.identity.name == "bed-slow"]
    assert len(slow) == 1 and slow[0].closed
    s.close()


def test_reconnect_refused_keeps_the_old_connection_and_its_frames() -> None:
    h = Harness()
    s = h.session
    g1 = s.connect(si.identity("bed-r"), None, "adult")
    (first,) = h.wait_for(Connected)
    assert s.accept(first)
    h.opener.refuse.add("bed-r")
    g2 = s.reconnect({"Cz": None}, "adult", refused="channels not changed", with_what="the new channels")
    assert g2 == s.generation and not s.is_current(g1)  # old frames wait while it reopens
    (refused,) = h.wait_for(ReconnectRefused)
    assert (refused.generation, refused.kept) == (g2, g1)
    assert refused.text.startswith("channels not changed: ")
    assert s.accept(refused) and s.is_current(g1)  # the kept connection's frames count again
    assert first.connection.monitor.stopped is False and si.CountingMonitor.running == 1
    n = len(h.frames)
    assert si.wait_until(lambda: len(h.frames) > n + 2)
    # Reconnect that works: the old one stops only once the new source is open.
    h.opener.refuse.clear()
    g3 = s.reconnect(None, "adult", refused="profile thresholds not applied", with_what="the new profile",
                     note=lambda conn: f"now {conn.identity.name}")
    assert si.wait_until(lambda: any(isinstance(e, Connected) and e.generation == g3 for e in h.events))
    new = next(e for e in h.events if isinstance(e, Connected) and e.generation == g3)
    assert new.confirmed and new.note == "now bed-r" and s.accept(new)
    assert first.connection.monitor.stopped and si.CountingMonitor.most == 1
    s.close()


def test_failed_connect_says_why_and_stale_failures_are_dropped() -> None:
    h = Harness()
    s = h.session
    h.opener.refuse.add("bed-gone")
    g1 = s.connect(si.identity("bed-gone"), None, "adult")
    (failed,) = h.wait_for(ConnectFailed)
    assert failed.generation == g1 and failed.text == "could not start watching: stream 'bed-gone' is gone"
    s.connect(si.identity("bed-ok"), None, "adult")
    assert not s.accept(failed)  # a newer request came: the old failure is not said
    s.close()


def test_the_monitor_posts_its_own_stop_once() -> None:
    h = Harness(fail_after=3)
    s = h.session
    g = s.connect(si.identity("bed-fail"), None, "adult")
    (stopped,) = h.wait_for(MonitorStopped)
    time.sleep(0.1)
    assert [e for e in h.events if isinstance(e, MonitorStopped)] == [stopped]
    assert stopped.generation == g and stopped.text == "the stream's channel count changed"
    assert s.accept(stopped)
    s.close()


def test_close_stops_the_monitor_and_drops_what_is_queued() -> None:
    h = Harness(delay_s=0.1)
    s = h.session
    s.connect(si.identity("bed-x"), None, "adult")
    (conn,) = h.wait_for(Connected)
    s.connect(si.identity("bed-y"), None, "adult")  # queued behind nothing, but closed first
    assert s.close() == []
    assert si.CountingMonitor.running == 0 and conn.connection.monitor.stopped
    n = len(h.frames)
    time.sleep(0.1)
    assert len(h.frames) == n  # no frame after close
    assert "bed-y" not in {m.source.identity.name for m in si.CountingMonitor.made if m.started}
    s.connect(si.identity("bed-z"), None, "adult")  # after close: nothing starts
    time.sleep(0.2)
    assert "bed-z" not in {src.identity.name for src in h.opener.opened}


def test_a_look_pins_one_stream_and_an_ended_look_is_not_heard() -> None:
    one = si.identity("bed-look")
    services = si.services(look_for_streams=lambda: si.ScriptedLook([[one], [one]]))
    events: list[Any] = []
    s = LiveSession(services, AppConfig(), events.append, frame_feed=lambda g: lambda f: None, display=si.Display)
    look = s.discover(force_picker=False)
    assert si.wait_until(lambda: any(isinstance(e, StreamsFound) for e in events))
    (found,) = events
    assert found.look == look and found.pinned == one and s.accept(found)
    s.end_look()
    assert not s.looking and not s.accept(found)
    s.close()


def test_the_live_session_never_loads_textual() -> None:
    code = ("import sys, bedside.ui.live, bedside.ui.look, bedside.ui.vigil\n"
            "bad = [m for m in sys.modules if m == 'textual' or m.startswith('textual.')]\n"
            "print(','.join(bad)); sys.exit(1 if bad else 0)\n")
    proc = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True)
    assert proc.returncode == 0, f"the live session loads Textual: {proc.stdout} {proc.stderr}"
