"""`bedside check --log PATH`: the headless check writes the same setup log as the app.
Real LSL loopback streams from the simulator (bedside.sim.publish); the ward_demo
scenario scripts an O1-Oz bridge from the start (its fault list is the outside truth)."""

from __future__ import annotations

import json
import signal
import subprocess
import sys
import time
import uuid
from pathlib import Path

import pytest

from bedside.checks.settings import DEFAULT_PATH
from bedside.cli import main
from bedside.config import config_hash
from bedside.record.log import load_log
from bedside.sim.publish import Publisher

pytestmark = pytest.mark.lsl


def _name() -> str:
    return f"rec-{uuid.uuid4().hex[:10]}"


def test_check_writes_and_resumes_the_setup_log(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    name = _name()
    path = tmp_path / "W3-017.yaml"
    argv = ["check", "--stream", name, "--seconds", "4", "--wait", "3", "--format", "json",
            "--log", str(path), "--subject", "W3-017", "--technologist", "jmk"]  # fmt: skip
    with Publisher("ward_demo", name=name, source_id=f"sid-{name}", duration_s=30.0).start():
        code = main(argv)
        out = json.loads(capsys.readouterr().out)
        first = load_log(path)
        assert code == 1
        assert first.subject_id == "W3-017" and first.technologist == "JMK"
        assert first.stream is not None and first.stream.identity.source_id == f"sid-{name}"
        assert first.config_hash == config_hash(DEFAULT_PATH)
        assert first.ended_at is not None
        # What the check printed is what the log holds as the final state.
        printed = {c["name"]: c["level"] for c in out["channels"] if c["level"] != "no_data"}
        assert {n: first.final[n].level for n in printed} == printed
        assert first.final["O1"].level == "bad"
        assert any(f.kind == "bridge" and set(f.electrodes) == {"O1", "Oz"} for f in first.findings)
        # A second check on the same file resumes it.
        assert main(argv) == 1
    capsys.readouterr()
    second = load_log(path)
    assert second.started_at == first.started_at
    assert len(second.timeline) >= len(first.timeline)
    assert [e.kind for e in second.events].count("resumed") == 1


def test_bad_subject_is_refused_before_anything_is_written(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    path = tmp_path / "x.yaml"
    code = main(["check", "--stream", _name(), "--wait", "0.3", "--log", str(path), "--subject", "Smith"])
    assert code == 2 and "no digit" in capsys.readouterr().err
    assert not path.exists()


def test_ctrl_c_during_a_check_saves_the_log(tmp_path: Path) -> None:
    name = _name()
    path = tmp_path / "W3-018.yaml"
    with Publisher("clean", name=name, source_id=f"sid-{name}", duration_s=60.0).start():
        proc = subprocess.Popen(
            [sys.executable, "-m", "bedside", "check", "--stream", name, "--seconds", "40", "--wait", "3",
             "--log", str(path), "--subject", "W3-018"],
            stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True,
        )  # fmt: skip
        deadline = time.monotonic() + 30
        while time.monotonic() < deadline:
            if path.exists() and load_log(path).timeline:
                break
            time.sleep(0.2)
        proc.send_signal(signal.SIGINT)
        out, err = proc.communicate(timeout=30)
    assert proc.returncode == 130, err
    assert "Traceback" not in err
    saved = load_log(path)
    assert saved.timeline and saved.ended_at is not None
    assert saved.events[-1].kind == "closed"
