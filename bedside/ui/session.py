"""The setup log, reached from the app's threads through one gate (:class:`RecorderGate`).

The live connection itself is :mod:`bedside.ui.live`'s.
"""

from __future__ import annotations

import logging
import queue
import threading
from collections.abc import Callable
from typing import Any

from bedside.errors import BedsideError

log = logging.getLogger("bedside")


class RecorderGate:
    """The setup log, reached from several threads through one lock.

    ``call`` runs now (under the lock) in the caller's thread; ``submit`` queues a
    call for the gate's own worker thread, so the UI's calls keep their order and
    never block the screen. ``done(ok, error_text, status)`` is called afterwards in
    that worker thread.
    """

    def __init__(self, recorder: Any) -> None:
        self.recorder = recorder
        self.lock = threading.Lock()
        self._queue: queue.Queue[tuple[str, tuple[Any, ...], Callable[..., None]] | None] = (
            queue.Queue()
        )
        self._thread = threading.Thread(target=self._run, name="bedside-log", daemon=True)
        self._thread.start()

    def call(self, method: str, *args: Any) -> Any:
        if method == "status":
            return self.status()
        with self.lock:
            return getattr(self.recorder, method)(*args)

    def status(self) -> Any:
        """The recorder's status (a property on the real recorder, a method on some fakes)."""
        with self.lock:
            value = self.recorder.status
            return value() if callable(value) else value

    def submit(self, method: str, args: tuple[Any, ...], done: Callable[..., None]) -> None:
        self._queue.put((method, args, done))

    def drain(self, timeout_s: float) -> bool:
        """Wait until the queued calls are done (at most ``timeout_s``)."""
        finished = threading.Event()
        self._queue.put(("status", (), lambda *a: finished.set()))
        return finished.wait(timeout_s)

    def stop(self) -> None:
        self._queue.put(None)
        self._thread.join(timeout=2.0)

    def _run(self) -> None:
        while True:
            item = self._queue.get()
            if item is None:
                return
            method, args, done = item
            try:
                self.call(method, *args)
                status = self.status()
            except BedsideError as exc:
                done(False, str(exc), None)
                continue
            except Exception as exc:  # a bug in the log must not kill the UI's log thread
                log.exception("setup log call %s failed", method)
                done(False, f"{type(exc).__name__}: {exc}", None)
                continue
            done(True, "", status)
