"""``bedside demo`` in a real terminal (tmux), killed with SIGKILL mid-session (issue 8).

No handler can run on SIGKILL, so what is on disk is whatever the last autosave wrote
(atomic rename: never half a file). The log must parse, hold the stream and the
timeline seen so far, carry no end time (the session did not close), and have been
written within the autosave interval before the kill. Ctrl-C in the app (saves, exit 0)
is checked in tests/ui/test_tmux_smoke.py. Skipped when tmux is not installed.
"""

from __future__ import annotations

import os
import shlex
import shutil
import signal
import subprocess
import sys
import time
import uuid
from pathlib import Path

import pytest

from bedside.record.log import journal_path, load_log
from bedside.record.session import AUTOSAVE_MAX_S

pytestmark = [
    pytest.mark.lsl,
    pytest.mark.skipif(shutil.which("tmux") is None, reason="tmux is not installed (apt-get install tmux)"),
]
ROOT = Path(__file__).resolve().parents[2]


def _tmux(socket: str, *args: str) -> str:
    return subprocess.run(["tmux", "-L", socket, *args], capture_output=True, text=True, timeout=10).stdout


def test_sigkill_of_the_app_leaves_a_log_that_parses(tmp_path: Path) -> None:
    socket = f"bedside-robust-{uuid.uuid4().hex[:8]}"
    log_path = tmp_path / "DEMO-009.yaml"
    cmd = (
        f"cd {shlex.quote(str(tmp_path))} && unset COLUMNS LINES && "
        f"LSLAPICFG={shlex.quote(str(ROOT / 'tests' / 'lsl_api.cfg'))} exec "
        f"{shlex.quote(sys.executable)} -m bedside demo --speed 4 --technologist AB "
        f"--subject DEMO-009 --log {shlex.quote(str(log_path))}"
    )
    _tmux(socket, "new-session", "-d", "-s", "s", "-x", "100", "-y", "40", cmd)
    try:
        pid = int(_tmux(socket, "display-message", "-p", "-t", "s", "#{pane_pid}").strip())
        # Wait until the app is live and the log already holds level changes.
        end = time.monotonic() + 40
        timeline = 0
        while time.monotonic() < end:
            if "◉ live" in _tmux(socket, "capture-pane", "-p", "-t", "s") and log_path.exists():
                timeline = len(load_log(log_path).timeline)
                if timeline >= 3:
                    break
            time.sleep(0.3)
        assert timeline >= 3, "the app never went live with a saved timeline"
        time.sleep(1.0)  # mid-session, between autosaves
        killed_at = time.time()
        os.kill(pid, signal.SIGKILL)
        time.sleep(0.5)
    finally:
        _tmux(socket, "kill-server")
    saved = load_log(log_path)  # parses
    assert saved.ended_at is None, "a killed session has no end time"
    assert saved.subject_id == "DEMO-009" and saved.stream is not None
    assert len(saved.timeline) >= timeline
    # Written by an autosave no longer ago than the interval (+1 s for a busy machine); the
    # demo changes the log on every update (final states), so every autosave writes: to
    # the journal beside the log (bedside.record.log), each closing with its "saved" time.
    journal = journal_path(log_path)
    assert journal.exists(), "a session that did not close keeps its journal"
    age_s = killed_at - max(log_path.stat().st_mtime, journal.stat().st_mtime)
    assert any(e.kind == "journal" and "did not close" in e.detail for e in saved.events)
    print(f"\nlast autosave {age_s:.2f} s before SIGKILL; {len(saved.timeline)} level changes on disk")
    assert age_s <= AUTOSAVE_MAX_S + 1.0, age_s
