"""The session recorder: autosave, file mode, resume, corrupt files, disk faults, threads.

Disk faults are injected at the OS boundary (os.replace / tempfile.mkstemp raising the
errno a full or read-only disk gives), because these tests run as root, for whom a
chmod-ed folder is still writable. errno values: POSIX (ENOSPC, EROFS, ENOENT).
"""

from __future__ import annotations

import errno
import logging
import os
import stat
import threading
import time
from pathlib import Path

import pytest
from record_factories import FakeClock, make_channels, make_frame, make_identity, make_plan

from bedside.checks.types import Level
from bedside.errors import InputError, LogSaveError, RecordError
from bedside.record import atomic
from bedside.record.log import load_log
from bedside.record.session import SessionRecorder, default_log_name, name_for_subject


def _wait_for(predicate, timeout_s: float = 5.0) -> bool:  # type: ignore[no-untyped-def]
    deadline = time.monotonic() + timeout_s
    while time.monotonic() < deadline:
        if predicate():
            return True
        time.sleep(0.02)
    return False


def test_file_is_owner_only_and_saved_at_once(tmp_path: Path, clock: FakeClock) -> None:
    path = tmp_path / "W3-017.yaml"
    with SessionRecorder.open(path, subject_id="W3-017", clock=clock) as rec:
        assert path.exists(), "the log is on disk as soon as the session opens"
        assert stat.S_IMODE(path.stat().st_mode) == 0o600
        lock = tmp_path / ".W3-017.yaml.lock"
        assert stat.S_IMODE(lock.stat().st_mode) == 0o600
        assert rec.status.error is None and rec.status.last_saved is not None
    assert stat.S_IMODE(path.stat().st_mode) == 0o600
    assert not list(tmp_path.glob(".*.tmp")), "no temp files left behind"


def test_autosave_writes_changes_within_the_interval(tmp_path: Path) -> None:
    path = tmp_path / "auto.yaml"
    rec = SessionRecorder.open(path, subject_id="W3-017", autosave_s=0.2)
    try:
        rec.on_frame(make_frame(time.time(), {"Cz": Level.BAD}))
        assert _wait_for(lambda: len(load_log(path).timeline) == 1, 2.0)
        # The status catches up just after the rename.
        assert _wait_for(lambda: rec.status.unsaved_changes is False, 1.0)
    finally:
        rec.close()


def test_autosave_interval_is_bounded() -> None:
    for bad in (0, 5.0, -1, float("nan"), True):
        with pytest.raises(InputError, match="autosave interval"):
            SessionRecorder.open("/nonexistent/x.yaml", autosave_s=bad)


def test_level_changes_only_and_final_state(tmp_path: Path, clock: FakeClock) -> None:
    with SessionRecorder.open(tmp_path / "l.yaml", subject_id="W3-017", clock=clock) as rec:
        t = clock.now
        for i in range(5):  # the same levels five times: one entry per electrode
            rec.on_frame(make_frame(t + i, {"Cz": Level.BAD, "O1": Level.GOOD}))
        rec.on_frame(make_frame(t + 6, {"Cz": None, "O1": None}, state="lost"))
        rec.on_frame(make_frame(t + 9, {"Cz": Level.GOOD, "O1": Level.GOOD}, reconnects=1))
        snap = rec.snapshot()
    assert [(c.electrode, c.to_level) for c in snap.timeline] == [
        ("Cz", "bad"), ("O1", "good"), ("Cz", "no_data"), ("O1", "no_data"), ("Cz", "good"), ("O1", "good"),
    ]  # fmt: skip
    # No-data frames do not overwrite the last live verdict.
    assert snap.final["Cz"].level == "good" and snap.final["Cz"].at == snap.timeline[-2].at
    kinds = [(e.kind, e.detail) for e in snap.events if e.kind.startswith("stream_")]
    assert kinds[:3] == [
        ("stream_state", "start → live"),
        ("stream_state", "live → lost"),
        ("stream_state", "lost → live"),
    ]
    assert ("stream_reconnect", "reconnect #1") in kinds


def test_resume_continues_the_same_log(tmp_path: Path, clock: FakeClock) -> None:
    path = tmp_path / "r.yaml"
    with SessionRecorder.open(path, technologist="AB", subject_id="W3-017", clock=clock) as rec:
        rec.set_plan(make_plan())
        rec.on_frame(make_frame(clock.now, {"Cz": Level.BAD}))
    first = load_log(path)
    clock.advance(60)
    with SessionRecorder.open(path, technologist="CD", clock=clock) as rec:
        rec.on_frame(make_frame(clock.now, {"Cz": Level.BAD}))  # unchanged: no new entry
        rec.on_frame(make_frame(clock.now + 1, {"Cz": Level.GOOD}))
    second = load_log(path)
    assert second.started_at == first.started_at
    assert [c.to_level for c in second.timeline] == ["bad", "good"]
    assert second.technologist == "CD" and second.subject_id == "W3-017"
    resumed = [e for e in second.events if e.kind == "resumed"]
    assert len(resumed) == 1 and "AB → CD" in resumed[0].detail
    assert second.ended_at is not None and second.ended_at > first.ended_at  # type: ignore[operator]


def test_resume_refuses_another_subjects_log(tmp_path: Path, clock: FakeClock) -> None:
    path = tmp_path / "r.yaml"
    SessionRecorder.open(path, subject_id="W3-017", clock=clock).close()
    with pytest.raises(RecordError, match="log of subject W3-017, not W3-099"):
        SessionRecorder.open(path, subject_id="W3-099", clock=clock)
    assert load_log(path).subject_id == "W3-017"


def test_corrupt_log_on_resume_is_kept_aside_and_reported(
    tmp_path: Path, clock: FakeClock, caplog: pytest.LogCaptureFixture
) -> None:
    path = tmp_path / "c.yaml"
    garbage = b"format: bedside-setup-log\nformat_version: 1\ntimeline: [ {at: \n"
    path.write_bytes(garbage)
    with caplog.at_level(logging.WARNING, logger="bedside"):
        rec = SessionRecorder.open(path, subject_id="W3-017", clock=clock)
    try:
        notice = rec.status.notice
        assert notice is not None and "could not be read" in notice and "kept as" in notice
        aside = list(tmp_path.glob("c.yaml.corrupt-*"))
        assert len(aside) == 1 and aside[0].read_bytes() == garbage, "original bytes kept"
        assert str(aside[0]) in notice
        assert any("kept as" in r.getMessage() for r in caplog.records)
    finally:
        rec.close()
    fresh = load_log(path)
    assert fresh.subject_id == "W3-017"
    assert [e.kind for e in fresh.events][:3] == ["opened", "corrupt_log", "corrupt_log_kept_aside"]


def test_corrupt_log_that_cannot_be_moved_is_never_overwritten(
    tmp_path: Path, clock: FakeClock, monkeypatch: pytest.MonkeyPatch
) -> None:
    path = tmp_path / "c.yaml"
    damaged = b"format: bedside-setup-log\nformat_version: 1\ntimeline: [{\x00\x01"
    path.write_bytes(damaged)
    real_rename = os.rename

    def refuse(src: object, dst: object) -> None:
        raise OSError(errno.EROFS, "Read-only file system")

    monkeypatch.setattr(os, "rename", refuse)
    rec = SessionRecorder.open(path, subject_id="W3-017", clock=clock, autosave_s=0.1)
    try:
        assert rec.status.error is not None and "not overwritten" in rec.status.error
        time.sleep(0.3)  # several autosave ticks
        assert path.read_bytes() == damaged
        monkeypatch.setattr(os, "rename", real_rename)
        assert _wait_for(lambda: rec.status.error is None)
    finally:
        rec.close()
    assert list(tmp_path.glob("c.yaml.corrupt-*"))[0].read_bytes() == damaged
    assert load_log(path).subject_id == "W3-017"


@pytest.mark.parametrize(
    ("code", "words"),
    [(errno.ENOSPC, "is full"), (errno.EROFS, "read-only file system"), (errno.EDQUOT, "quota")],
)
def test_disk_full_or_read_only_is_reported_kept_and_retried(
    tmp_path: Path, caplog: pytest.LogCaptureFixture, monkeypatch: pytest.MonkeyPatch, code: int, words: str
) -> None:
    path = tmp_path / "d.yaml"
    rec = SessionRecorder.open(path, subject_id="W3-017", autosave_s=0.1)
    real_replace = os.replace
    failing = threading.Event()
    failing.set()

    def replace(src: str, dst: str) -> None:
        if failing.is_set():
            raise OSError(code, os.strerror(code))
        real_replace(src, dst)

    real_fsync = os.fsync

    def fsync(fd: int) -> None:  # the journal's appends meet the same disk
        if failing.is_set():
            raise OSError(code, os.strerror(code))
        real_fsync(fd)

    monkeypatch.setattr(atomic.os, "replace", replace)
    monkeypatch.setattr(atomic.os, "fsync", fsync)
    t = time.time()
    try:
        with caplog.at_level(logging.WARNING, logger="bedside"):
            for i in range(6):
                rec.on_frame(make_frame(t + i, {"Cz": Level.BAD if i % 2 else Level.GOOD}))
            rec.add_note("written while the disk was refusing")
            assert _wait_for(lambda: rec.status.error is not None)
            status = rec.status
            assert words in status.error and status.unsaved_changes  # type: ignore[operator]
            with pytest.raises(LogSaveError, match=words):
                rec.save_now()
            time.sleep(0.35)
            assert rec.status.failed_saves >= 3, "retried on every tick"
            warned = [r for r in caplog.records if "NOT saved" in r.getMessage()]
            assert len(warned) == 1, "one warning per new problem, not one per retry"
            assert len(load_log(path).timeline) == 0, "the disk copy is the old one, intact"
            failing.clear()  # the disk has room again
            assert _wait_for(lambda: rec.status.error is None and not rec.status.unsaved_changes)
    finally:
        failing.clear()
        rec.close()
    saved = load_log(path)
    assert len(saved.timeline) == 6, "nothing recorded during the outage was lost"
    assert saved.notes[0].text == "written while the disk was refusing"
    kinds = [e.kind for e in saved.events]
    assert "save_failed" in kinds and "save_recovered" in kinds
    assert not list(tmp_path.glob(".*.tmp")), "failed attempts leave no temp files"


def test_missing_folder_is_reported_then_saved_when_it_appears(tmp_path: Path) -> None:
    folder = tmp_path / "usb-stick"
    path = folder / "W3-017.yaml"
    rec = SessionRecorder.open(path, subject_id="W3-017", autosave_s=0.1)
    try:
        assert rec.status.error is not None and "does not exist" in rec.status.error
        rec.add_note("Cz moved 1 cm forward: skin lesion at the usual site.")
        folder.mkdir()
        assert _wait_for(lambda: path.exists() and rec.status.error is None)
    finally:
        rec.close()
    assert load_log(path).notes[0].text.startswith("Cz moved")


def test_close_that_cannot_save_writes_a_rescue_copy(
    tmp_path: Path, clock: FakeClock, monkeypatch: pytest.MonkeyPatch
) -> None:
    monkeypatch.setenv("XDG_STATE_HOME", str(tmp_path / "state"))
    path = tmp_path / "gone" / "W3-017.yaml"
    rec = SessionRecorder.open(path, subject_id="W3-017", clock=clock)
    rec.add_note("the only copy")
    with pytest.raises(LogSaveError, match="a copy was written to") as info:
        rec.close()
    rescued = list((tmp_path / "state" / "bedside" / "unsaved").glob("W3-017-*.yaml"))
    assert len(rescued) == 1 and str(rescued[0]) in str(info.value)
    assert load_log(rescued[0]).notes[0].text == "the only copy"
    assert stat.S_IMODE(rescued[0].stat().st_mode) == 0o600


def test_second_writer_on_the_same_file_is_refused(tmp_path: Path, clock: FakeClock) -> None:
    path = tmp_path / "one.yaml"
    with (
        SessionRecorder.open(path, subject_id="W3-017", clock=clock),
        pytest.raises(RecordError, match="another bedside session"),
    ):
        SessionRecorder.open(path, subject_id="W3-017", clock=clock)
    SessionRecorder.open(path, subject_id="W3-017", clock=clock).close()  # free again


def test_concurrent_frames_and_notes_lose_nothing(tmp_path: Path) -> None:
    path = tmp_path / "t.yaml"
    rec = SessionRecorder.open(path, subject_id="W3-017", autosave_s=0.05)
    rec.set_stream(make_identity(), make_channels())
    t0 = time.time()

    def frames(name: str) -> None:
        for i in range(200):
            rec.on_frame(make_frame(t0 + i * 0.25, {name: Level.GOOD if i % 2 else Level.BAD}))

    def notes(k: int) -> None:
        for i in range(50):
            rec.add_note(f"writer {k} note {i}")

    threads = [threading.Thread(target=frames, args=(n,)) for n in ("Fp1", "Fp2")]
    threads += [threading.Thread(target=notes, args=(k,)) for k in range(2)]
    for th in threads:
        th.start()
    for th in threads:
        th.join()
    rec.close()
    saved = load_log(path)
    assert len(saved.notes) == 100
    assert sum(1 for c in saved.timeline if c.electrode == "Fp1") == 200
    assert sum(1 for c in saved.timeline if c.electrode == "Fp2") == 200


def test_closed_session_refuses_more_and_bad_input_is_clear(tmp_path: Path, clock: FakeClock) -> None:
    rec = SessionRecorder.open(tmp_path / "x.yaml", subject_id="W3-017", clock=clock)
    with pytest.raises(InputError, match="impedance for Fp1"):
        rec.set_impedance("Fp1", -3)
    with pytest.raises(InputError, match="no digit"):
        rec.set_subject("Smith")
    with pytest.raises(InputError, match="sign-off needs"):
        rec.sign_off("")
    rec.close()
    rec.close()  # idempotent
    with pytest.raises(RecordError, match="is closed"):
        rec.add_note("late")
    with pytest.raises(RecordError, match="is a folder"):
        SessionRecorder.open(tmp_path)
    with pytest.raises(InputError, match="path separator"):
        SessionRecorder.open(tmp_path / "y.yaml", subject_id="../../W3-017")


def test_mains_frequency_found_by_the_engine_is_kept(tmp_path: Path, clock: FakeClock) -> None:
    import dataclasses

    import numpy as np

    with SessionRecorder.open(tmp_path / "m.yaml", subject_id="W3-017", clock=clock) as rec:
        frame = make_frame(clock.now, {"Cz": Level.GOOD})
        rec.on_frame(dataclasses.replace(frame, mains_hz=None))
        assert rec.snapshot().power_line_hz is None
        rec.on_frame(dataclasses.replace(frame, mains_hz=np.float64(60.0)))
        rec.on_frame(dataclasses.replace(frame, mains_hz=57.0))  # not a mains value
    assert load_log(tmp_path / "m.yaml").power_line_hz == 60.0


def test_temp_files_left_by_a_killed_save_are_cleaned_up(tmp_path: Path, clock: FakeClock) -> None:
    path = tmp_path / "k.yaml"
    stale = tmp_path / ".k.yaml.abc123.tmp"
    stale.write_text("half a log")
    other = tmp_path / ".other.yaml.abc123.tmp"  # another log's: not ours to remove
    other.write_text("x")
    SessionRecorder.open(path, subject_id="W3-017", clock=clock).close()
    assert not stale.exists() and other.exists()


def test_optional_recorder_for_commands(tmp_path: Path) -> None:
    from bedside.record.session import optional_recorder

    with optional_recorder(None) as none:
        assert none is None
    path = tmp_path / "o.yaml"
    with optional_recorder(path, technologist="ab", subject_id="W3-017") as rec:
        assert rec is not None
        rec.add_note("headless check")
    assert load_log(path).technologist == "AB" and load_log(path).ended_at is not None
    with pytest.raises(InputError, match="no digit"):
        optional_recorder(tmp_path / "p.yaml", subject_id="Smith")


def test_a_file_that_is_not_a_log_is_never_moved_or_overwritten(tmp_path: Path, clock: FakeClock) -> None:
    """E.g. --log pointed at a config file by mistake, or a log from a newer bedside."""
    config = tmp_path / "quality.yaml"
    config.write_text("quality:\n  window_s: 4.0\n", encoding="utf-8")
    with pytest.raises(RecordError, match="is not a bedside setup log; it is left untouched"):
        SessionRecorder.open(config, subject_id="W3-017", clock=clock)
    newer = tmp_path / "newer.yaml"
    newer.write_text("format: bedside-setup-log\nformat_version: 7\n", encoding="utf-8")
    with pytest.raises(RecordError, match="newer bedside"):
        SessionRecorder.open(newer, subject_id="W3-017", clock=clock)
    assert config.read_text(encoding="utf-8").startswith("quality:")
    assert sorted(p.name for p in tmp_path.iterdir() if not p.name.startswith("xdg")) == ["newer.yaml", "quality.yaml"]


def test_an_all_zero_file_counts_as_a_damaged_log(tmp_path: Path, clock: FakeClock) -> None:
    """What a failing disk or an interrupted copy can leave: kept aside, new log started."""
    path = tmp_path / "z.yaml"
    path.write_bytes(b"\x00" * 4096)
    with SessionRecorder.open(path, subject_id="W3-017", clock=clock) as rec:
        assert rec.status.notice is not None and "kept as" in rec.status.notice
    assert list(tmp_path.glob("z.yaml.corrupt-*"))[0].read_bytes() == b"\x00" * 4096


def test_resume_carries_open_findings_over(tmp_path: Path, clock: FakeClock) -> None:
    from bedside.checks.types import Finding

    path = tmp_path / "f.yaml"
    bridge = Finding("bridge", ("O1", "Oz"), Level.BAD, "bridged")
    with SessionRecorder.open(path, subject_id="W3-017", clock=clock) as rec:
        rec.on_frame(make_frame(clock.now, {"O1": Level.BAD}, findings=[bridge]))
    with SessionRecorder.open(path, subject_id="W3-017", clock=clock) as rec:
        rec.on_frame(make_frame(clock.now + 5, {"O1": Level.BAD}, findings=[bridge]))  # still there
        rec.on_frame(make_frame(clock.now + 9, {"O1": Level.GOOD}))
    assert [f.change for f in load_log(path).findings] == ["appeared", "cleared"]


def test_switching_streams_starts_a_new_section(tmp_path: Path, clock: FakeClock) -> None:
    """Bed 4 then bed 5: the final table, time to good and findings are bed 5's alone;
    bed 4's verdicts are kept in their own section (nothing lost, nothing mixed)."""
    import dataclasses

    from bedside.checks.types import Finding
    from bedside.stream.types import ChannelInfo

    path = tmp_path / "switch.yaml"
    bed5 = dataclasses.replace(make_identity(2), name="WardB-Bed5-EEG", source_id="wardb-bed5-amp-0002")
    chans5 = (ChannelInfo("Cz", "Cz", "EEG", "microvolts", 1.0, True),
              ChannelInfo("O1", "O1", "EEG", "microvolts", 1.0, True))
    with SessionRecorder.open(path, subject_id="W3-017", clock=clock) as rec:
        t = clock.now
        rec.set_stream(make_identity(), make_channels())
        bridge = Finding("bridge", ("O1", "O2"), Level.BAD, "O1 and O2 bridged")
        rec.on_frame(make_frame(t, {"O2": Level.BAD, "O1": Level.BAD}, findings=(bridge,)))
        rec.set_stream(bed5, chans5)
        rec.on_frame(make_frame(t + 2, {"Cz": Level.GOOD, "O1": Level.GOOD}))
        snap = rec.snapshot()
    for log_ in (snap, load_log(path)):
        assert set(log_.final) == {"Cz", "O1"}
        assert "O2" not in log_.time_to_good_s()
        assert log_.time_to_all_good_s() == 0.0
        assert log_.findings == []  # the bed-4 bridge is neither current nor "cleared"
        (earlier,) = log_.earlier_streams
        assert earlier.stream.identity.source_id == "wardb-bed4-amp-0001"
        assert earlier.final["O2"].level == "bad"
        assert [f.kind for f in earlier.findings] == ["bridge"]
    from bedside.commands.report import text_summary
    from bedside.record.html import render_report

    assert "earlier stream WardB-Bed4-EEG" in text_summary(snap)
    assert "Earlier stream" in render_report(snap) and "wardb-bed4-amp-0001" in render_report(snap)


def test_restarting_checks_on_the_same_stream_logs_no_false_clearing(tmp_path: Path, clock: FakeClock) -> None:
    """Re-picking the same stream (or looking again) restarts the checks: their first
    frames judge nothing, which must not read as the finding clearing and reappearing."""
    from bedside.checks.types import Finding

    with SessionRecorder.open(tmp_path / "same.yaml", subject_id="W3-017", clock=clock) as rec:
        t = clock.now
        rec.set_stream(make_identity(), make_channels())
        bridge = Finding("bridge", ("O1", "O2"), Level.BAD, "O1 and O2 bridged")
        rec.on_frame(make_frame(t, {"O1": Level.BAD, "O2": Level.BAD}, findings=(bridge,)))
        rec.set_stream(make_identity(), make_channels())
        rec.on_frame(make_frame(t + 1, {"O1": None, "O2": None}))
        rec.on_frame(make_frame(t + 2, {"O1": Level.BAD, "O2": Level.BAD}, findings=(bridge,)))
        snap = rec.snapshot()
    assert [f.change for f in snap.findings] == ["appeared"]
    assert snap.earlier_streams == []


# -- the log's name follows the subject (issue 17, item 13) ---------------------------


def test_name_for_subject_replaces_the_old_subject_or_setup() -> None:
    """bedside names a log <subject>-<time>.yaml (``setup-…`` before an ID); common practice
    for file names here, our own rule."""
    assert name_for_subject("DEMO-001-20261204-090000.yaml", "DEMO-001", "W3-017") == "W3-017-20261204-090000.yaml"
    assert name_for_subject("setup-20261204-090000.yaml", "", "W3-017") == "W3-017-20261204-090000.yaml"
    assert name_for_subject("other.yaml", "DEMO-001", "W3-017") == "W3-017-other.yaml"
    assert default_log_name("W3-017", 0.0).startswith("W3-017-") and default_log_name("", 0.0).startswith("setup-")


def test_new_subject_renames_the_log_atomically_and_keeps_everything(tmp_path: Path, clock: FakeClock) -> None:
    start = tmp_path / "DEMO-001-20261204-090000.yaml"
    rec = SessionRecorder.open(start, subject_id="DEMO-001", clock=clock)
    try:
        rec.add_note("cap on")
        rec.save_now()
        rec.set_subject("W3-017", rename_file=True)
        moved = tmp_path / "W3-017-20261204-090000.yaml"
        assert rec.path == moved and rec.status.path == moved
        assert moved.exists() and not start.exists()
        assert not (tmp_path / f".{start.name}.lock").exists(), "the old name's lock went with it"
        assert (tmp_path / f".{moved.name}.lock").exists(), "the new name is locked against a second writer"
        with pytest.raises(RecordError, match="another bedside session"):
            SessionRecorder.open(moved, subject_id="W3-017", clock=clock)
        assert stat.S_IMODE(moved.stat().st_mode) == 0o600
        rec.add_note("Fp1 re-gelled")
    finally:
        rec.close()
    saved = load_log(moved)
    assert saved.subject_id == "W3-017"
    assert [n.text for n in saved.notes] == ["cap on", "Fp1 re-gelled"]
    assert any(e.kind == "log_renamed" and e.detail == f"{start.name} → {moved.name}" for e in saved.events)
    assert sorted(p.name for p in tmp_path.iterdir()) == [moved.name], "no lock or temp file is left"


def test_rename_never_replaces_an_existing_file(tmp_path: Path, clock: FakeClock) -> None:
    start = tmp_path / "setup-20261204-090000.yaml"
    taken = tmp_path / "W3-017-20261204-090000.yaml"
    taken.write_text("a file that is not ours\n", encoding="utf-8")
    (tmp_path / "W3-017-20261204-090000-2.yaml").write_text("nor this\n", encoding="utf-8")
    with SessionRecorder.open(start, clock=clock) as rec:
        rec.set_subject("W3-017", rename_file=True)
        assert rec.path == tmp_path / "W3-017-20261204-090000-3.yaml"
    assert taken.read_text(encoding="utf-8") == "a file that is not ours\n"
    assert (tmp_path / "W3-017-20261204-090000-2.yaml").read_text(encoding="utf-8") == "nor this\n"
    assert load_log(tmp_path / "W3-017-20261204-090000-3.yaml").subject_id == "W3-017"


def test_rename_without_hard_links_reserves_the_name_first(
    tmp_path: Path, clock: FakeClock, monkeypatch: pytest.MonkeyPatch
) -> None:
    """A file system without hard links (EPERM from link(2), as on FAT or some network
    shares; errno per POSIX link(2)): the new name is created exclusively, then the log is
    renamed onto it. A name taken meanwhile (EEXIST from the exclusive create) is skipped."""
    start = tmp_path / "DEMO-001-20261204-090000.yaml"

    def no_links(src: object, dst: object) -> None:
        raise OSError(errno.EPERM, "Operation not permitted")

    monkeypatch.setattr(os, "link", no_links)
    with SessionRecorder.open(start, subject_id="DEMO-001", clock=clock) as rec:
        rec.add_note("cap on")
        rec.save_now()
        rec.set_subject("W3-017", rename_file=True)
        assert rec.path.name == "W3-017-20261204-090000.yaml"
    assert not start.exists()
    assert [n.text for n in load_log(tmp_path / "W3-017-20261204-090000.yaml").notes] == ["cap on"]


def test_a_rename_that_fails_keeps_the_old_name_and_says_so(
    tmp_path: Path, clock: FakeClock, monkeypatch: pytest.MonkeyPatch
) -> None:
    start = tmp_path / "DEMO-001-20261204-090000.yaml"

    def refuse(src: object, dst: object) -> None:
        raise OSError(errno.EACCES, "Permission denied")

    with SessionRecorder.open(start, subject_id="DEMO-001", clock=clock) as rec:
        monkeypatch.setattr(os, "link", refuse)
        rec.set_subject("W3-017", rename_file=True)
        assert rec.path == start
        assert rec.status.notice is not None and "keeps its name" in rec.status.notice
        assert "no permission" in rec.status.notice
        rec.add_note("still recorded")
    saved = load_log(start)
    assert saved.subject_id == "W3-017" and [n.text for n in saved.notes] == ["still recorded"]
    assert any(e.kind == "log_rename_failed" for e in saved.events)
    assert sorted(p.name for p in tmp_path.iterdir()) == [start.name]


def test_without_rename_the_name_is_kept(tmp_path: Path, clock: FakeClock) -> None:
    chosen = tmp_path / "bed3.yaml"
    with SessionRecorder.open(chosen, subject_id="DEMO-001", clock=clock) as rec:
        rec.set_subject("W3-017")
        assert rec.path == chosen
    assert load_log(chosen).subject_id == "W3-017"


def test_rename_while_frames_arrive_loses_nothing(tmp_path: Path) -> None:
    """The autosave thread and a writer thread keep going while the log is renamed."""
    start = tmp_path / "DEMO-001-20261204-090000.yaml"
    rec = SessionRecorder.open(start, subject_id="DEMO-001", autosave_s=0.05)
    stop = threading.Event()
    written: list[str] = []

    def writer() -> None:
        i = 0
        while not stop.is_set():
            text = f"note {i}"
            rec.add_note(text)
            written.append(text)
            i += 1
            time.sleep(0.002)

    thread = threading.Thread(target=writer)
    thread.start()
    try:
        time.sleep(0.1)
        rec.set_subject("W3-017", rename_file=True)
        time.sleep(0.1)
    finally:
        stop.set()
        thread.join()
        rec.close()
    moved = tmp_path / "W3-017-20261204-090000.yaml"
    assert [n.text for n in load_log(moved).notes] == written and len(written) > 10
    assert sorted(p.name for p in tmp_path.iterdir()) == [moved.name]
