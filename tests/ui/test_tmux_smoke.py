"""A person at a real terminal: ``bedside demo`` under tmux, driven by send-keys.

Real everything: the simulated ward stream on LSL (loopback, unique name), the reader,
the checks, the app in a pseudo-terminal, the setup log on disk. Keys are sent one at
a time, as typed. Skipped (with the reason) when tmux is not installed.
"""

from __future__ import annotations

import shlex
import shutil
import subprocess
import sys
import time
import uuid
from collections.abc import Callable
from pathlib import Path

import pytest
import yaml

pytestmark = [
    pytest.mark.lsl,
    pytest.mark.skipif(shutil.which("tmux") is None, reason="tmux is not installed (apt-get install tmux)"),
]

ROOT = Path(__file__).resolve().parents[2]


class Tmux:
    def __init__(self, socket: str) -> None:
        self.base = ["tmux", "-L", socket]

    def run(self, *args: str) -> str:
        return subprocess.run([*self.base, *args], capture_output=True, text=True, timeout=10).stdout

    def screen(self) -> str:
        return self.run("capture-pane", "-p", "-t", "smoke")

    def keys(self, *keys: str, pause_s: float = 0.15) -> None:
        for k in keys:
            self.run("send-keys", "-t", "smoke", k)
            time.sleep(pause_s)

    def text(self, text: str) -> None:
        for ch in text:
            self.run("send-keys", "-t", "smoke", "-l", ch)
            time.sleep(0.03)

    def wait_for(self, cond: Callable[[str], bool], timeout_s: float) -> str:
        end = time.monotonic() + timeout_s
        shown = ""
        while time.monotonic() < end:
            shown = self.screen()
            if cond(shown):
                return shown
            time.sleep(0.2)
        raise AssertionError(f"not seen within {timeout_s} s; the screen was:\n{shown}")


def test_demo_as_a_person_uses_it(tmp_path: Path) -> None:
    tmux = Tmux(f"bedside-smoke-{uuid.uuid4().hex[:8]}")
    log_path = tmp_path / "DEMO-007.yaml"
    done = tmp_path / "exit.txt"
    cmd = (
        # COLUMNS/LINES from the test runner would override the terminal's real size.
        f"cd {shlex.quote(str(tmp_path))} && unset COLUMNS LINES && LSLAPICFG={shlex.quote(str(ROOT / 'tests' / 'lsl_api.cfg'))} "
        f"{shlex.quote(sys.executable)} -m bedside demo --speed 4 --technologist AB "
        f"--subject DEMO-007 --log {shlex.quote(str(log_path))}; echo EXIT=$? > {shlex.quote(str(done))}"
    )
    tmux.run("new-session", "-d", "-s", "smoke", "-x", "100", "-y", "40", cmd)
    try:
        # At connect: what bedside inferred of the channels, to confirm (a) or change.
        shown = tmux.wait_for(lambda s: "Channels of bedside-demo-" in s and " scalp" in s, 30)
        assert "decided by" in shown
        tmux.keys("a")
        # Watch: the stream is pinned and live, the ward demo's bridge is drawn.
        shown = tmux.wait_for(lambda s: "◉ live" in s and "bridge" in s and "Channels of" not in s, 30)
        assert "bedside-demo-" in shown and "not good yet" in shown
        tmux.keys("n")  # the next electrode to fix
        # Measure: three measurements, typed.
        # Like a person, look before typing: the form is there, each number shows.
        tmux.keys("F2")
        tmux.wait_for(lambda s: "Head measurements" in s, 10)
        for value, field in (("36", "nasion–inion"), ("35", "ear to ear"), ("56", "around")):
            tmux.text(value)
            tmux.wait_for(lambda s, v=value, f=field: any(
                line.strip().startswith(f) and v in line for line in s.splitlines()), 5)
            if field != "around":
                tmux.keys("Tab")
        shown = tmux.wait_for(lambda s: "18.0" in s and "midline" in s, 10)
        # Jasper 1958: Cz at 50 % of the 36 cm nasion–inion arc (by hand: 18.0 cm).
        assert any("Cz" in line and "18.0" in line for line in shown.splitlines())
        # Log: a note, typed and added.
        tmux.keys("F4")
        tmux.wait_for(lambda s: "initials" in s and "impedance" in s, 10)
        tmux.keys("Tab", "Tab")
        tmux.text("T7 re-seated")
        tmux.keys("Enter")
        tmux.wait_for(lambda s: "T7 re-seated" in s and "note added" in s, 10)
        # Help, then leave with Ctrl-C: the log is saved, the exit is clean.
        tmux.keys("F1")
        tmux.wait_for(lambda s: "bedside — help" in s and "Everywhere" in s, 5)
        tmux.keys("End")  # the cautions follow the keys
        tmux.wait_for(lambda s: "Cautions" in s, 5)
        tmux.keys("Escape", "C-c")
        end = time.monotonic() + 15
        while not done.exists() and time.monotonic() < end:
            time.sleep(0.2)
        assert done.read_text().strip() == "EXIT=0"
    finally:
        tmux.run("kill-server")
    data = yaml.safe_load(log_path.read_text(encoding="utf-8"))
    dumped = yaml.safe_dump(data, allow_unicode=True)
    assert "T7 re-seated" in dumped and "DEMO-007" in dumped
