"""The setup log as a base file and an append-only journal (issue 14, item 2).

What is checked: an autosave appends only what changed (the base is not rewritten, and a
save costs the same bytes after 6,000 entries as after 30); the log read back (base +
journal) equals the log in memory; a torn last record (a power cut during an append) is
left out with a note and nothing before it is lost; a journal left beside a newer base is
never applied twice; a long session resumes from base + journal; after SIGKILL at most
the last autosave interval (2 s) is lost. Outside references: ``yaml.safe_load`` reads
the base file as plain YAML and ``json.loads`` every journal line (the formats' own
readers); the kill is a real SIGKILL to a real process.
"""

from __future__ import annotations

import json
import os
import shutil
import signal
import subprocess
import sys
import textwrap
import time
from pathlib import Path

import yaml
from record_factories import FakeClock, make_frame

from bedside.checks.types import Level
from bedside.record.log import journal_path, load_log
from bedside.record.session import SessionRecorder

ROOT = Path(__file__).resolve().parents[2]
NAMES = ("Fp1", "Cz", "O2")


def _flap(rec: SessionRecorder, clock: FakeClock, n: int) -> None:
    """n frames, each changing every electrode's level (the worst case for a log)."""
    for i in range(n):
        lv = Level.BAD if i % 2 else Level.GOOD
        rec.on_frame(make_frame(clock.advance(0.25), dict.fromkeys(NAMES, lv)))


def test_an_autosave_appends_what_changed_and_the_base_stays(tmp_path: Path) -> None:
    clock = FakeClock()
    path = tmp_path / "W3-017.yaml"
    rec = SessionRecorder.open(path, subject_id="W3-017", clock=clock)
    try:
        base = path.read_bytes()
        _flap(rec, clock, 10)
        rec.save_now()
        j = journal_path(path)
        early = j.stat().st_size
        _flap(rec, clock, 1)
        rec.save_now()
        step_early = j.stat().st_size - early
        _flap(rec, clock, 2_000)
        rec.save_now()
        late = j.stat().st_size
        _flap(rec, clock, 1)
        rec.save_now()
        step_late = j.stat().st_size - late
        assert path.read_bytes() == base, "the base file is not rewritten by autosaves"
        # One frame's changes cost the same to save after 6,000 entries as after 30.
        assert step_late == step_early and 0 < step_late < 4000, (step_early, step_late)
        lines = j.read_bytes().decode("utf-8").splitlines()
        assert all(isinstance(json.loads(ln), dict) for ln in lines)  # json's own reader
        on_disk = load_log(path)
        assert on_disk.timeline == rec.snapshot().timeline
        assert on_disk.final == rec.snapshot().final
        n_entries = len(on_disk.timeline)
    finally:
        rec.close()
    assert not journal_path(path).exists(), "closing folds the journal into the one file"
    # Plain YAML again (PyYAML's own safe loader, its C build where there is one).
    closed = yaml.load(path.read_text(encoding="utf-8"), Loader=getattr(yaml, "CSafeLoader", yaml.SafeLoader))  # noqa: S506
    assert len(closed["timeline"]) == n_entries > 3 * 2_000


def test_a_torn_last_record_is_left_out_with_a_note_and_nothing_before_is_lost(tmp_path: Path) -> None:
    clock = FakeClock()
    path = tmp_path / "t.yaml"
    rec = SessionRecorder.open(path, subject_id="W3-017", clock=clock)
    _flap(rec, clock, 4)
    rec.add_note("cap on")
    rec.save_now()
    kept = len(rec.snapshot().timeline)
    # A power cut in the middle of the next append: half a record, no newline.
    j = journal_path(path)
    j.write_bytes(j.read_bytes() + b'{"add": "notes", "v": {"at": "2026-12-0')
    shutil.copy(path, tmp_path / "copy.yaml")
    shutil.copy(j, journal_path(tmp_path / "copy.yaml"))
    rec._autosave.stop()  # leave the first session as a crash would (no close)
    copy = tmp_path / "copy.yaml"
    got = load_log(copy)
    assert len(got.timeline) == kept and [n.text for n in got.notes] == ["cap on"]
    assert got.events[-1].kind == "journal" and "cut short" in got.events[-1].detail
    # Resuming that log keeps everything and says what was left out.
    again = SessionRecorder.open(copy, subject_id="W3-017", clock=clock)
    try:
        snap = again.snapshot()
        assert len(snap.timeline) == kept
        assert any(e.kind == "journal" for e in snap.events)
        assert snap.events[-1].kind == "resumed"
    finally:
        again.close()
    assert any(e.kind == "journal" for e in load_log(copy).events)


def test_a_journal_beside_a_newer_base_is_not_applied_twice(tmp_path: Path) -> None:
    clock = FakeClock()
    path = tmp_path / "n.yaml"
    rec = SessionRecorder.open(path, subject_id="W3-017", clock=clock)
    _flap(rec, clock, 6)
    rec.save_now()
    old_journal = journal_path(path).read_bytes()
    rec.close()  # the base now holds everything; the journal is gone
    # A crash between writing the new base and removing the old journal leaves both.
    journal_path(path).write_bytes(old_journal)
    got = load_log(path)
    assert len(got.timeline) == 3 * 6 and not any(e.kind == "journal" for e in got.events)


def test_a_long_session_resumes_from_base_and_journal(tmp_path: Path) -> None:
    clock = FakeClock()
    path = tmp_path / "long.yaml"
    rec = SessionRecorder.open(path, subject_id="W3-017", clock=clock)
    _flap(rec, clock, 2000)
    rec.add_note("re-gelled O2 at hour 20")
    rec.save_now()
    copy = tmp_path / "after-restart.yaml"
    shutil.copy(path, copy)
    shutil.copy(journal_path(path), journal_path(copy))
    rec.close()
    again = SessionRecorder.open(copy, subject_id="W3-017", clock=clock)
    try:
        snap = again.snapshot()
        assert len(snap.timeline) == 3 * 2000
        assert snap.notes[-1].text == "re-gelled O2 at hour 20"
        assert snap.events[-1].kind == "resumed"
    finally:
        again.close()


CHILD = textwrap.dedent(
    """
    import sys, time
    sys.path.insert(0, {tests!r})
    from record_factories import make_frame
    from bedside.checks.types import Level
    from bedside.record.session import SessionRecorder
    rec = SessionRecorder.open({path!r}, subject_id="W3-017", autosave_s=2.0)
    i = 0
    while True:
        now = time.time()
        rec.on_frame(make_frame(now, {{"Cz": Level.BAD if i % 2 else Level.GOOD}}))
        print(f"{{now:.3f}}", flush=True)
        i += 1
        time.sleep(0.1)
    """
)


def test_sigkill_loses_at_most_the_autosave_interval(tmp_path: Path) -> None:
    path = tmp_path / "k.yaml"
    code = CHILD.format(tests=str(ROOT / "tests" / "record"), path=str(path))
    proc = subprocess.Popen([sys.executable, "-c", code], stdout=subprocess.PIPE, text=True, cwd=ROOT)
    stamps: list[float] = []
    try:
        assert proc.stdout is not None
        end = time.monotonic() + 7.0
        while time.monotonic() < end:
            line = proc.stdout.readline()
            if line:
                stamps.append(float(line))
        os.kill(proc.pid, signal.SIGKILL)
        proc.wait(10)
    finally:
        if proc.poll() is None:
            proc.kill()
            proc.wait(10)
        if proc.stdout is not None:
            proc.stdout.close()
    got = load_log(path)
    last = got.timeline[-1].at.timestamp()
    assert stamps and last >= stamps[-1] - 2.5, (stamps[-1] - last)
    assert len(got.timeline) >= len(stamps) - 26  # 2 s at 10 changes a second, and a margin
