"""``bedside watch`` / ``bedside demo`` refuse bad input before the screen opens.

The CLI contract (bedside/cli.py): ``error: ...`` on stderr, exit status 2, no traceback.
"""

from __future__ import annotations

import os
import subprocess
import sys
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[2]


def _run(*args: str, cwd: Path) -> subprocess.CompletedProcess[str]:
    env = dict(os.environ, LSLAPICFG=str(ROOT / "tests" / "lsl_api.cfg"))
    return subprocess.run([sys.executable, "-m", "bedside", *args], capture_output=True, text=True,
                          timeout=60, cwd=cwd, env=env, stdin=subprocess.DEVNULL)


@pytest.mark.parametrize(
    "args,words",
    [
        (("watch", "--no-log", "--subject", "Smith"), "no digit"),
        (("watch", "--no-log", "--technologist", "A1"), "initials"),
        (("watch", "--no-log", "--update-hz", "0"), "--update-hz must be greater than zero"),
        (("watch", "--view", "graphs"), "invalid choice"),
        (("demo", "no-such-ward", "--no-log"), "no-such-ward"),
    ],
)
def test_bad_input_is_a_clear_error(args: tuple[str, ...], words: str, tmp_path: Path) -> None:
    proc = _run(*args, cwd=tmp_path)
    assert proc.returncode == 2, proc.stderr
    assert "error:" in proc.stderr and words in proc.stderr
    assert "Traceback" not in proc.stderr


@pytest.mark.parametrize("command", ["watch", "demo"])
def test_help_shows_the_cautions(command: str, tmp_path: Path) -> None:
    proc = _run(command, "--help", cwd=tmp_path)
    assert proc.returncode == 0
    assert "Skin preparation" in proc.stdout and "--log" in proc.stdout
