"""`bedside report`: prints, exports, and turns every bad input into `error: ...`, exit 2."""

from __future__ import annotations

import json
import subprocess
import sys
from pathlib import Path

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from record_factories import FakeClock, make_channels, make_frame, make_identity, make_plan

from bedside.checks.types import Level
from bedside.cli import main
from bedside.record.session import SessionRecorder


def _bedside(*args: str) -> subprocess.CompletedProcess[str]:
    return subprocess.run(
        [sys.executable, "-m", "bedside", *args], capture_output=True, text=True, timeout=60
    )


@pytest.fixture
def log_path(tmp_path: Path) -> Path:
    clock = FakeClock()
    path = tmp_path / "W3-017.yaml"
    with SessionRecorder.open(path, technologist="JMK", subject_id="W3-017", clock=clock) as rec:
        rec.set_plan(make_plan())
        rec.set_stream(make_identity(), make_channels())
        rec.on_frame(make_frame(clock.now, {"Fp1": Level.BAD, "Cz": Level.CHECK}))
        rec.on_frame(make_frame(clock.now + 4, {"Fp1": Level.GOOD, "Cz": Level.GOOD}))
        rec.add_note("Fp1 re-prepped")
        rec.sign_off("JMK")
    return path


def test_text_yaml_html_and_bids(tmp_path: Path, log_path: Path) -> None:
    proc = _bedside("report", str(log_path))
    assert proc.returncode == 0, proc.stderr
    assert "subject W3-017" in proc.stdout and "Fp1" in proc.stdout and "4.0 s" in proc.stdout
    assert "signed off by JMK" in proc.stdout

    proc = _bedside("report", str(log_path), "--format", "yaml")
    assert proc.returncode == 0 and proc.stdout == log_path.read_text(encoding="utf-8")

    html = tmp_path / "out.html"
    bids = tmp_path / "bids"
    proc = _bedside("report", str(log_path), "--html", str(html), "--bids-dir", str(bids), "--line-freq", "50")
    assert proc.returncode == 0, proc.stderr
    assert proc.stdout == "", "exports alone print nothing on stdout"
    assert f"wrote {html}" in proc.stderr and "<svg" in html.read_text(encoding="utf-8")
    sidecar = bids / "sub-W3017" / "eeg" / "sub-W3017_task-clinical_eeg.json"
    assert json.loads(sidecar.read_text(encoding="utf-8"))["PowerLineFrequency"] == 50
    assert "note: EEGReference unknown" in proc.stderr

    proc = _bedside("report", str(log_path), "--bids-dir", str(bids))
    assert proc.returncode == 2 and "--overwrite" in proc.stderr


@pytest.mark.parametrize(
    ("args", "words"),
    [
        (["report", "{tmp}/absent.yaml"], "no such log file"),
        (["report", "{corrupt}"], "not valid YAML"),
        (["report", "{log}", "--format", "pdf"], "accepted: text, yaml"),
        (["report", "{log}", "--line-freq", "55"], "must be 50 or 60"),
        (["report", "{log}", "--html", "{tmp}/no/such/dir/r.html"], "does not exist"),
        (["report", "{log}", "--html", "{tmp}"], "is a folder"),
        (["report", "{log}", "--bids-dir", "{log}"], "is a file"),
        (["report", "{log}", "--bids-dir", "{tmp}/b", "--task=-_-"], "no BIDS label"),
        (["report"], "required: LOG"),
    ],
)
def test_bad_input_is_a_clear_error(
    tmp_path: Path, log_path: Path, capsys: pytest.CaptureFixture[str], args: list[str], words: str
) -> None:
    """In-process through bedside.cli.main (the same path as the console script)."""
    corrupt = tmp_path / "corrupt.yaml"
    corrupt.write_text("format: bedside-setup-log\ntimeline: [\n", encoding="utf-8")
    argv = [a.format(tmp=tmp_path, log=log_path, corrupt=corrupt) for a in args]
    try:
        code = main(argv)
    except SystemExit as exc:  # argparse usage errors exit from inside parse_args
        code = int(exc.code or 0)
    err = capsys.readouterr().err
    assert code == 2
    assert "error:" in err and words in err, err
    assert "Traceback" not in err


@settings(max_examples=60)
@given(
    fmt=st.one_of(st.none(), st.text(max_size=8)),
    line=st.one_of(st.none(), st.text(max_size=6), st.sampled_from(["50", "60", "nan", "-1"])),
    task=st.text(max_size=10),
    session=st.one_of(st.none(), st.text(max_size=6)),
)
def test_fuzzed_options_give_a_result_or_a_clear_error(
    tmp_path_factory: pytest.TempPathFactory, fmt: str | None, line: str | None, task: str, session: str | None
) -> None:
    """Property (hypothesis): any option values → exit 0 or 2, never an exception."""
    base = tmp_path_factory.mktemp("fuzz")
    log = base / "l.yaml"
    SessionRecorder.open(log, subject_id="W3-017").close()
    argv = ["report", str(log), "--bids-dir", str(base / "b"), "--overwrite", "--task", task]
    for flag, value in (("--format", fmt), ("--line-freq", line), ("--session", session)):
        if value is not None:
            argv += [flag + "=" + value]
    try:
        code = main(argv)
    except SystemExit as exc:  # argparse's own usage errors
        code = int(exc.code or 0)
    assert code in (0, 2)
