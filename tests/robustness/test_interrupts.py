"""Ctrl-C (SIGINT) to real ``bedside`` processes mid-session (issue 8).

``bedside check`` is interrupted while it reads a live simulated stream (an inlet is
connected to our outlet when the signal is sent): it must exit 130 with "interrupted",
no traceback and no half-printed report. ``bedside replay --loop`` is interrupted while
publishing: it must close its stream and say what it sent. (``bedside simulate`` is
covered in tests/sim/test_commands.py; a recorder killed with SIGKILL or SIGINT in
tests/record/test_durability.py.) Exit code 130 for SIGINT is the shell convention
128 + signal number 2 (POSIX shells, common practice).
"""

from __future__ import annotations

import os
import signal
import subprocess
import sys
import time
import uuid
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[2]
EDF_TEST_FILE = "test_generator.edf"  # shipped by pyedflib in pyedflib/data/ (600 s, 11 channels)


def _env() -> dict[str, str]:
    return dict(os.environ, LSLAPICFG=str(ROOT / "tests" / "lsl_api.cfg"), PYTHONUNBUFFERED="1")


def _interrupt(proc: subprocess.Popen[str]) -> tuple[str, str]:
    proc.send_signal(signal.SIGINT)
    try:
        return proc.communicate(timeout=15)
    finally:
        if proc.poll() is None:
            proc.kill()
            proc.communicate()


@pytest.mark.lsl
def test_ctrl_c_while_checking_a_live_stream_exits_cleanly() -> None:
    from bedside.sim.publish import run_in_background

    name = f"bedside-test-robust-{uuid.uuid4().hex[:8]}"
    pub = run_in_background("clean", name=name)
    proc = subprocess.Popen(
        [sys.executable, "-m", "bedside", "check", "--stream", name, "--wait", "1", "--seconds", "60"],
        stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True, env=_env(), cwd=ROOT,
    )
    try:
        deadline = time.monotonic() + 20
        # The outlet (pylsl) knows when an inlet is connected: then the check is running.
        while not pub._outlet.have_consumers() and time.monotonic() < deadline and proc.poll() is None:
            time.sleep(0.05)
        assert pub._outlet.have_consumers(), "bedside check never connected"
        time.sleep(0.5)
        out, err = _interrupt(proc)
    finally:
        pub.stop()
    assert proc.returncode == 130, (proc.returncode, err)
    assert err.strip().splitlines()[-1] == "interrupted", err
    assert "Traceback" not in err, err
    assert out == "", out  # no half report


@pytest.mark.lsl
def test_ctrl_c_while_replaying_in_a_loop_closes_the_stream() -> None:
    import pyedflib
    edf = Path(pyedflib.__file__).parent / "data" / EDF_TEST_FILE
    name = f"bedside-test-robust-{uuid.uuid4().hex[:8]}"
    proc = subprocess.Popen(
        [sys.executable, "-m", "bedside", "replay", str(edf), "--loop", "--speed", "50", "--name", name],
        stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True, env=_env(), cwd=ROOT,
    )
    assert proc.stdout is not None
    first = proc.stdout.readline()  # "replaying ... looping until Ctrl-C."
    assert f"as '{name}'" in first and "looping until Ctrl-C" in first, first
    time.sleep(0.5)
    out, err = _interrupt(proc)
    assert proc.returncode == 0, err
    assert "stopped (Ctrl-C): sent " in err and "stream closed." in err, err
    assert "Traceback" not in err
