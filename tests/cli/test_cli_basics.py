"""The command line: help, version, bad sub-commands — never a traceback."""

from __future__ import annotations

import subprocess
import sys


def _run(*args: str) -> subprocess.CompletedProcess[str]:
    return subprocess.run(
        [sys.executable, "-m", "bedside", *args], capture_output=True, text=True, timeout=60
    )


def test_help_and_version() -> None:
    proc = _run("--help")
    assert proc.returncode == 0
    assert "does not diagnose" in proc.stdout
    proc = _run("--version")
    assert proc.returncode == 0 and proc.stdout.startswith("bedside ")


def test_unknown_command_is_a_clear_error() -> None:
    proc = _run("frobnicate")
    assert proc.returncode == 2
    assert "error:" in proc.stderr and "Traceback" not in proc.stderr
