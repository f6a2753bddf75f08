"""The setup log's one worker thread, for callers that must not wait for the disk (the app).

:class:`LogWorker` runs calls into a recorder on a single-worker
:class:`~concurrent.futures.ThreadPoolExecutor` (thread ``bedside-log``), so they run
one at a time in the order they were submitted, off the caller's thread. Each call is
a function of the recorder (``worker.submit(lambda r: r.add_note(text))``), not a method
name. Errors reach the caller: :meth:`LogWorker.submit` returns the call's
:class:`~concurrent.futures.Future` (``result()`` raises what the call raised) and, when
given ``done``, calls ``done(ok, error_text, status)`` on the worker thread afterwards —
``status`` is the recorder's status after the call; a :class:`~bedside.errors.BedsideError`
gives its message, any other error its type and message (and a traceback in the
``bedside`` logger). :meth:`LogWorker.call` waits for the result in the caller's thread.

The recorder itself is thread-safe (:class:`~bedside.record.session.SessionRecorder`), so
the monitor thread gives it frames directly; the worker only orders the slow calls.
"""

from __future__ import annotations

import logging
from collections.abc import Callable
from concurrent.futures import Future, ThreadPoolExecutor
from concurrent.futures import TimeoutError as FutureTimeout
from typing import Any, Generic, Protocol, TypeVar

from bedside.errors import BedsideError

log = logging.getLogger("bedside")

T = TypeVar("T")


class HasStatus(Protocol):
    @property
    def status(self) -> Any: ...


R = TypeVar("R", bound=HasStatus)

#: done(ok, error_text, status): called on the worker thread after a submitted call.
Done = Callable[[bool, str, Any], None]


class LogWorker(Generic[R]):
    """Calls into ``recorder``, one at a time and in order, on one thread (see the module docstring)."""

    def __init__(self, recorder: R) -> None:
        self.recorder = recorder
        self._pool = ThreadPoolExecutor(max_workers=1, thread_name_prefix="bedside-log")

    def submit(self, call: Callable[[R], T], done: Done | None = None) -> Future[T]:
        """Queue ``call(recorder)``; returns its future (the error, if any, is in it)."""
        return self._pool.submit(self._run, call, done)

    def call(self, call: Callable[[R], T], timeout_s: float | None = None) -> T:
        """Run ``call(recorder)`` after everything queued before it and return its result,
        raising what it raised (TimeoutError when it took longer than ``timeout_s``)."""
        return self.submit(call).result(timeout_s)

    def status(self) -> Any:
        """The recorder's status now (read directly: the recorder is thread-safe)."""
        return self.recorder.status

    def drain(self, timeout_s: float) -> bool:
        """Wait until the calls queued so far are done (at most ``timeout_s``)."""
        try:
            self.submit(lambda r: None).result(timeout_s)
        except FutureTimeout:
            return False
        return True

    def stop(self, timeout_s: float = 2.0) -> None:
        """Run what is queued, then end the thread; waits at most ``timeout_s`` (a call
        stuck on a dead disk is left to finish on its daemon-like worker). Idempotent."""
        try:
            last = self.submit(lambda r: None)
        except RuntimeError:  # already shut down
            return
        self._pool.shutdown(wait=False)
        try:
            last.result(timeout_s)
        except FutureTimeout:
            log.warning("setup log: a call still running after %g s at close", timeout_s)

    def _run(self, call: Callable[[R], T], done: Done | None) -> T:
        try:
            result = call(self.recorder)
        except BedsideError as exc:
            if done is not None:
                done(False, str(exc), None)
            raise
        except Exception as exc:  # a bug in the log must not pass unseen: logged, and in the future
            log.exception("setup log call failed")
            if done is not None:
                done(False, f"{type(exc).__name__}: {exc}", None)
            raise
        if done is not None:
            done(True, "", self.status())
        return result
