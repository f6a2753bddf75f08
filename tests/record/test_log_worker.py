"""The setup log's worker (bedside.record.worker.LogWorker): calls run one at a time,
in the order they were submitted, on one thread that is not the caller's, and their
errors reach the caller — through the future and through ``done``."""

from __future__ import annotations

import threading
import time
from pathlib import Path

import pytest
from record_factories import FakeClock, make_channels, make_identity

from bedside.errors import InputError, RecordError
from bedside.record.log import load_log
from bedside.record.session import SessionRecorder
from bedside.record.worker import LogWorker


class _Slow:
    """A recorder stand-in whose calls take turns: each sleeps a little and notes who ran."""

    def __init__(self) -> None:
        self.order: list[int] = []
        self.threads: set[str] = set()
        self.running = 0
        self.overlapped = False

    @property
    def status(self) -> str:
        return f"{len(self.order)} done"

    def work(self, k: int, sleep_s: float) -> int:
        self.running += 1
        self.overlapped |= self.running > 1
        self.threads.add(threading.current_thread().name)
        time.sleep(sleep_s)
        self.order.append(k)
        self.running -= 1
        return k * 10


def test_calls_keep_their_order_and_run_on_one_other_thread() -> None:
    rec = _Slow()
    worker = LogWorker(rec)
    try:
        # The earlier calls sleep longer: without one worker in order, later ones would finish first.
        futures = [worker.submit(lambda r, k=k: r.work(k, 0.02 * (5 - k))) for k in range(5)]
        assert [f.result(5.0) for f in futures] == [0, 10, 20, 30, 40]
        assert rec.order == [0, 1, 2, 3, 4] and not rec.overlapped
        assert len(rec.threads) == 1 and threading.current_thread().name not in rec.threads
        assert worker.call(lambda r: r.work(9, 0.0)) == 90  # call waits behind what was queued
    finally:
        worker.stop()


def test_an_error_reaches_the_caller_by_the_future_and_by_done() -> None:
    worker = LogWorker(_Slow())
    seen: list[tuple[bool, str, object]] = []
    got = threading.Event()

    def done(ok: bool, text: str, status: object) -> None:
        seen.append((ok, text, status))
        got.set()

    def refuse(r: _Slow) -> None:
        raise InputError("initials '1' are not acceptable; accepted: letters")

    try:
        future = worker.submit(refuse, done)
        with pytest.raises(InputError, match="accepted: letters"):
            future.result(5.0)
        assert got.wait(5.0) and seen == [(False, "initials '1' are not acceptable; accepted: letters", None)]
        with pytest.raises(InputError, match="accepted: letters"):
            worker.call(refuse)
        # A bug (not a BedsideError) is named by its type, and the worker goes on.
        got.clear()
        worker.submit(lambda r: 1 / 0, done)
        assert got.wait(5.0) and seen[-1][0] is False and seen[-1][1].startswith("ZeroDivisionError")
        got.clear()
        worker.submit(lambda r: r.work(1, 0.0), done)
        assert got.wait(5.0) and seen[-1] == (True, "", "1 done")
    finally:
        worker.stop()


def test_drain_waits_for_the_queue_and_stop_runs_what_is_queued(tmp_path: Path) -> None:
    """On the real recorder: the stream set through the worker is in the log once the
    queue is drained, and a note queued just before stop is still written."""
    path = tmp_path / "W3-017.yaml"
    worker = LogWorker(SessionRecorder.open(path, subject_id="W3-017", clock=FakeClock()))
    worker.submit(lambda r: r.set_stream(make_identity(), make_channels()))
    assert worker.drain(5.0)
    assert worker.recorder.snapshot().stream is not None
    worker.submit(lambda r: r.add_note("cap on"))
    worker.call(lambda r: r.close())
    worker.stop()
    assert [n.text for n in load_log(path).notes] == ["cap on"]
    again = LogWorker(worker.recorder)
    try:
        with pytest.raises(RecordError, match="is closed"):  # the worker still says what went wrong
            again.call(lambda r: r.add_note("late"))
    finally:
        again.stop()
