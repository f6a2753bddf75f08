"""A real process, really killed: the log on disk must parse and hold the timeline up to
the last autosave (at most AUTOSAVE_MAX_S = 2 s behind). Ctrl-C saves and exits cleanly."""

from __future__ import annotations

import signal
import subprocess
import sys
import threading
import time
from pathlib import Path

from bedside.record.log import load_log
from bedside.record.session import AUTOSAVE_MAX_S

CHILD = Path(__file__).with_name("session_child.py")


class _Child:
    """The child session and the frames it reported, read on a thread."""

    def __init__(self, log_path: Path) -> None:
        self.proc = subprocess.Popen(
            [sys.executable, str(CHILD), str(log_path)],
            stdout=subprocess.PIPE,
            stderr=subprocess.PIPE,
            text=True,
        )
        self.fed: list[tuple[int, float]] = []
        self.lines: list[str] = []
        self.stderr = ""
        self.ready = threading.Event()
        self._reader = threading.Thread(target=self._read, daemon=True)
        self._reader.start()

    def _read(self) -> None:
        assert self.proc.stdout is not None
        for line in self.proc.stdout:
            self.lines.append(line.strip())
            if line.startswith("ready"):
                self.ready.set()
            elif line.startswith("fed "):
                _, n, t = line.split()
                self.fed.append((int(n), float(t)))

    def wait_fed(self, seconds: float) -> None:
        assert self.ready.wait(30), "the child session did not start"
        time.sleep(seconds)

    def finish(self) -> int:
        code = self.proc.wait(timeout=30)
        self._reader.join(timeout=5)
        assert self.proc.stdout is not None and self.proc.stderr is not None
        self.stderr = self.proc.stderr.read()
        self.proc.stdout.close()
        self.proc.stderr.close()
        return code


def test_sigkill_mid_session_loses_at_most_the_last_autosave(tmp_path: Path) -> None:
    path = tmp_path / "W3-017.yaml"
    child = _Child(path)
    child.wait_fed(4.0)
    killed_at = time.time()
    child.proc.send_signal(signal.SIGKILL)
    assert child.finish() == -signal.SIGKILL
    assert child.fed, "the child fed frames"
    saved = load_log(path)  # parses: the atomic rename never leaves half a file
    on_disk = len(saved.timeline)
    # 1 s of slack for a busy machine (2 shared cores).
    fed_before = [n for n, t in child.fed if t <= killed_at - AUTOSAVE_MAX_S - 1.0]
    assert fed_before, "the child ran long enough for an autosave"
    # Every frame flips Cz, so frame n is timeline entry n. Everything fed more than one
    # autosave interval (plus scheduling slack) before the kill is on disk.
    assert on_disk >= max(fed_before), (on_disk, max(fed_before), len(child.fed))
    assert on_disk <= len(child.fed)
    assert saved.ended_at is None, "a killed session has no end time"


def test_ctrl_c_saves_and_exits_cleanly(tmp_path: Path) -> None:
    path = tmp_path / "W3-017.yaml"
    child = _Child(path)
    child.wait_fed(1.0)
    child.proc.send_signal(signal.SIGINT)
    code = child.finish()
    assert code == 130, child.stderr
    assert "Traceback" not in child.stderr
    assert child.lines[-1] == "interrupted"
    saved = load_log(path)
    # The last save happened at close: every frame the child reported is on disk.
    assert len(saved.timeline) == len(child.fed)
    assert saved.ended_at is not None
    assert saved.events[-1].kind == "closed"
