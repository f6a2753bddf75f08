"""``bedside simulate`` and ``bedside replay`` as a technologist runs them: clear errors
(exit 2, no traceback), a stream others can see, a clean stop on Ctrl-C."""

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


def _env() -> dict[str, str]:
    env = dict(os.environ)
    env["LSLAPICFG"] = str(ROOT / "tests" / "lsl_api.cfg")
    return env


def _run(*args: str, timeout: float = 60) -> subprocess.CompletedProcess[str]:
    return subprocess.run([sys.executable, "-m", "bedside", *args], capture_output=True,
                          text=True, timeout=timeout, env=_env(), cwd=ROOT)


def test_list_names_every_scenario_and_its_faults() -> None:
    proc = _run("simulate", "--list")
    assert proc.returncode == 0, proc.stderr
    for name in ("ward_demo (default)", "clean", "bad_reference", "mains_60hz", "cap64_1010"):
        assert name in proc.stdout
    assert "O1+Oz" in proc.stdout and "line_noise" in proc.stdout


@pytest.mark.parametrize(
    ("args", "message"),
    [
        (("simulate", "nope"), "no scenario named 'nope'; the scenarios are: bad_reference"),
        (("simulate", "--speed", "0"), "--speed must be greater than zero"),
        (("simulate", "--duration", "abc"), "--duration must be a number"),
        (("simulate", "missing/file.yaml"), "scenario file missing/file.yaml not found"),
        (("replay", "nothing.edf"), "nothing.edf: file not found"),
        (("replay", "README.md"), "cannot replay a '.md' file; accepted"),
    ],
)
def test_bad_input_is_a_clear_error(
    args: tuple[str, ...], message: str, capsys: pytest.CaptureFixture[str], monkeypatch: pytest.MonkeyPatch
) -> None:
    from bedside.cli import main

    monkeypatch.chdir(ROOT)
    try:
        code = main(list(args))
    except SystemExit as exc:  # argparse's own errors
        code = int(exc.code or 0)
    err = capsys.readouterr().err
    assert code == 2
    assert message in err and "error:" in err


def test_bad_scenario_file_names_the_line(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    from bedside.cli import main

    p = tmp_path / "mine.yaml"
    p.write_text((ROOT / "demo_streams" / "clean.yaml").read_text().replace("seed: 202", "sead: 202"))
    assert main(["simulate", str(p)]) == 2
    err = capsys.readouterr().err
    assert "mine.yaml, line" in err and "did you mean 'seed'" in err


@pytest.mark.lsl
def test_simulate_publishes_and_stops_cleanly_on_ctrl_c() -> None:
    import pylsl
    name = f"bedside-test-cli-{uuid.uuid4().hex[:8]}"
    proc = subprocess.Popen([sys.executable, "-m", "bedside", "simulate", "clean", "--name", name],
                            stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True, env=_env(), cwd=ROOT)
    try:
        infos = pylsl.resolve_byprop("name", name, 1, 10.0)
        assert infos and infos[0].channel_count() == 20 and infos[0].source_id()
        time.sleep(0.3)
        proc.send_signal(signal.SIGINT)
        out, err = proc.communicate(timeout=10)
    finally:
        if proc.poll() is None:
            proc.kill()
    assert proc.returncode == 0, err
    assert f"publishing '{name}'" in out
    assert "stopped (Ctrl-C)" in err and "stream closed" in err
    assert "Traceback" not in err


@pytest.mark.lsl
def test_replay_runs_to_the_end_of_the_file() -> None:
    """pyedflib's shipped test_generator.edf (600 s) at 600x real time: about 1 s."""
    import pyedflib
    edf = Path(pyedflib.__file__).parent / "data" / "test_generator.edf"
    name = f"bedside-test-cli-{uuid.uuid4().hex[:8]}"
    proc = _run("replay", str(edf), "--speed", "600", "--name", name, timeout=30)
    assert proc.returncode == 0, proc.stderr
    assert "11 channels at 200 Hz" in proc.stdout
    assert "sent 120000 samples (600.0 s of data)" in proc.stdout
