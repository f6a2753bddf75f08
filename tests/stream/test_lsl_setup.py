"""liblsl set-up: its log kept off the terminal, its errors translated (pylsl 1.18 behaviour).

The subprocess checks look at file descriptor 2 itself (liblsl writes there from C,
bypassing Python's sys.stderr), which is what a Textual screen would show.
"""

from __future__ import annotations

import os
import subprocess
import sys
from pathlib import Path

import pylsl
import pytest

from bedside.errors import LSLUnavailable, StreamLost, StreamNotFound
from bedside.stream.lsl import quiet_config, translate, user_lsl_config

ROOT = Path(__file__).resolve().parents[2]

SCRIPT = """
import sys
from bedside.stream.lsl import prepare_lsl, pylsl
if sys.argv[1] == "prepare":
    prepare_lsl(log_to=None if sys.argv[2] == "-" else sys.argv[2])
    mod = pylsl()
else:
    import pylsl as mod
info = mod.StreamInfo("quiet-check", "EEG", 1, 250, "float32", "quiet-check-1")
outlet = mod.StreamOutlet(info)
mod.resolve_streams(0.1)
"""


def run(mode: str, tmp_path: Path, log_to: str = "-", lslapicfg: str | None = None) -> subprocess.CompletedProcess[str]:
    env = {k: v for k, v in os.environ.items() if k != "LSLAPICFG"}
    env["HOME"] = str(tmp_path)  # no ~/lsl_api/lsl_api.cfg
    env["PYTHONPATH"] = str(ROOT)
    if lslapicfg is not None:
        env["LSLAPICFG"] = lslapicfg
    return subprocess.run(
        [sys.executable, "-c", SCRIPT, mode, log_to],
        capture_output=True, text=True, timeout=60, env=env, cwd=tmp_path,
    )


@pytest.mark.skipif(Path("/etc/lsl_api/lsl_api.cfg").exists(), reason="a system LSL config exists")
def test_unconfigured_liblsl_is_loud_and_prepare_lsl_silences_it(tmp_path: Path) -> None:
    loud = run("raw", tmp_path)
    assert "INFO" in loud.stderr  # liblsl's own log on fd 2: what would corrupt the screen
    quiet = run("prepare", tmp_path)
    assert quiet.returncode == 0, quiet.stderr
    assert quiet.stderr == ""


def test_log_to_a_file(tmp_path: Path) -> None:
    log = tmp_path / "lsl.log"
    proc = run("prepare", tmp_path, log_to=str(log))
    assert proc.returncode == 0 and proc.stderr == ""
    assert log.exists()


def test_a_users_configuration_is_respected(tmp_path: Path) -> None:
    cfg = tmp_path / "mine.cfg"
    cfg.write_text("[multicast]\nResolveScope = machine\n[log]\nlevel = 0\n", encoding="utf-8")
    proc = run("prepare", tmp_path, lslapicfg=str(cfg))
    assert "INFO" in proc.stderr  # the user asked for liblsl's info log: they get it


def test_missing_lslapicfg_falls_back_to_quiet(tmp_path: Path) -> None:
    proc = run("prepare", tmp_path, lslapicfg=str(tmp_path / "nope.cfg"))
    assert proc.returncode == 0
    assert "ERR" not in proc.stderr and "INFO" not in proc.stderr


def test_user_config_search_order(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.setenv("LSLAPICFG", str(tmp_path / "x.cfg"))
    assert user_lsl_config() == tmp_path / "x.cfg"
    monkeypatch.delenv("LSLAPICFG")
    monkeypatch.chdir(tmp_path)
    monkeypatch.setenv("HOME", str(tmp_path))
    if not Path("/etc/lsl_api/lsl_api.cfg").exists():
        assert user_lsl_config() is None
    (tmp_path / "lsl_api.cfg").write_text("[log]\nlevel = -3\n", encoding="utf-8")
    assert user_lsl_config() == Path("lsl_api.cfg")
    assert quiet_config(Path("/tmp/a.log")) == "[log]\nlevel = -3\nfile = /tmp/a.log\n"


def test_pylsl_errors_are_translated() -> None:
    lost = translate(pylsl.util.LostError("the stream has been lost."), "reading 'Amp'")
    assert isinstance(lost, StreamLost) and "reading 'Amp'" in str(lost)
    late = translate(pylsl.util.TimeoutError("timeout"), "opening 'Amp'")
    assert isinstance(late, StreamNotFound) and "did not answer in time" in str(late)


def test_missing_liblsl_is_a_clear_error(tmp_path: Path) -> None:
    """pylsl raises RuntimeError (not ImportError) without liblsl (pylsl 1.18 behaviour); a
    stand-in pylsl that fails the same way stands for the missing library."""
    fake = tmp_path / "fake" / "pylsl"
    fake.mkdir(parents=True)
    (fake / "__init__.py").write_text(
        "raise RuntimeError('LSL binary library file was not found.')\n", encoding="utf-8"
    )
    env = dict(os.environ, PYTHONPATH=f"{tmp_path / 'fake'}{os.pathsep}{ROOT}")
    proc = subprocess.run(
        [sys.executable, "-m", "bedside", "streams", "--wait", "0.1"],
        capture_output=True, text=True, timeout=60, env=env, cwd=tmp_path,
    )
    assert proc.returncode == 2
    assert proc.stderr.startswith("error: bedside reads streams through liblsl")
    assert "PYLSL_LIB" in proc.stderr and "Traceback" not in proc.stderr
    assert LSLUnavailable.__name__  # the class the CLI printed (see bedside.stream.lsl)
